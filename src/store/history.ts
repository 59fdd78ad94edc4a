/**
 * Undo and redo of the work on one image, kept with the image in the library (store `history`,
 * one entry per image). A step is a whole work state (the calibration in force and each panel's
 * own state, as plain JSON), not a difference: undo and redo move along the list and restore a
 * state; a new step after an undo drops the steps that were undone.
 */
import type { LibraryDb } from './schema';
import type { HistoryStep, ImageHistory, WorkState } from './records';

export type { HistoryStep, ImageHistory, WorkState };

/** Steps kept per image (older ones are dropped first). */
export const HISTORY_LIMIT = 100;

/**
 * A new history: one step holding the state when the image was opened.
 * @param imageId the stored image's id
 * @param state its state now
 * @returns the history
 * @throws TypeError naming an empty image id
 */
export function newHistory(imageId: string, state: WorkState): ImageHistory {
  if (typeof imageId !== 'string' || !imageId) throw new TypeError(`a history needs the image's id, got ${JSON.stringify(imageId)}`);
  return { imageId, steps: [{ label: 'opened', timeIso: new Date().toISOString(), state }], index: 0 };
}

/**
 * Records a step after the current one; steps undone before it are dropped, and the oldest when
 * there are more than `limit`.
 * @param h the history
 * @param label what the step did
 * @param state the state after it
 * @param limit steps kept (default HISTORY_LIMIT, at least 2)
 * @returns a new history (h is not changed)
 * @throws RangeError naming a limit below 2
 */
export function pushStep(h: ImageHistory, label: string, state: WorkState, limit = HISTORY_LIMIT): ImageHistory {
  if (!(limit >= 2)) throw new RangeError(`a history keeps at least 2 steps, got a limit of ${limit}`);
  const steps = [...h.steps.slice(0, h.index + 1), { label, timeIso: new Date().toISOString(), state }];
  const drop = Math.max(0, steps.length - limit);
  return { imageId: h.imageId, steps: steps.slice(drop), index: steps.length - 1 - drop };
}

/** True when there is a step to undo. */
export function canUndo(h: ImageHistory | null): boolean {
  return !!h && h.index > 0;
}

/** True when there is an undone step to redo. */
export function canRedo(h: ImageHistory | null): boolean {
  return !!h && h.index < h.steps.length - 1;
}

/**
 * One step back.
 * @returns the new history and the label of the step undone; null when there is none
 */
export function undoStep(h: ImageHistory): { history: ImageHistory; undone: string } | null {
  if (!canUndo(h)) return null;
  return { history: { ...h, index: h.index - 1 }, undone: h.steps[h.index].label };
}

/**
 * One step forward again.
 * @returns the new history and the label of the step redone; null when there is none
 */
export function redoStep(h: ImageHistory): { history: ImageHistory; redone: string } | null {
  if (!canRedo(h)) return null;
  return { history: { ...h, index: h.index + 1 }, redone: h.steps[h.index + 1].label };
}

/** The state shown now. */
export function currentState(h: ImageHistory): WorkState {
  return h.steps[h.index].state;
}

/** The stored history of an image, or null. */
export async function getHistory(db: LibraryDb, imageId: string): Promise<ImageHistory | null> {
  return (await db.get('history', imageId)) ?? null;
}

/** Stores (replaces) an image's history. */
export async function putHistory(db: LibraryDb, h: ImageHistory): Promise<void> {
  await db.put('history', h);
}
