// Undo and redo kept with the image: the usual linear history (a new step after an undo drops
// the undone steps; common practice of editors), stored in the library, deleted with the image.
import { expect, test } from 'vitest';
import { canRedo, canUndo, currentState, getHistory, HISTORY_LIMIT, newHistory, pushStep, putHistory, redoStep, undoStep, type WorkState } from '../../src/store/history';
import { deleteImage, putImage, SCHEMA_VERSION, UPGRADE_STEPS } from '../../src/store';
import { fileBytes, freshLibrary, fringeImage } from './helpers';

const cal = (nmPerPx: number) => ({ nmPerPx, source: 'manual' as const, relUncertainty: 0.02, detail: 'typed in' });
const st = (nmPerPx: number | null, spots: number[] = []): WorkState => ({ calibration: nmPerPx ? cal(nmPerPx) : null, panels: { periods: { spots } } });

test('undo and redo move along the steps; a new step after an undo drops what was undone', () => {
  let h = newHistory('img', st(null));
  expect(canUndo(h)).toBe(false);
  h = pushStep(h, 'calibration typed in', st(0.05));
  h = pushStep(h, 'spot #1 added', st(0.05, [1]));
  h = pushStep(h, 'spot #2 added', st(0.05, [1, 2]));
  const u = undoStep(h)!;
  expect(u.undone).toBe('spot #2 added');
  expect(currentState(u.history)).toEqual(st(0.05, [1]));
  const u2 = undoStep(u.history)!;
  expect(currentState(u2.history).calibration?.nmPerPx).toBe(0.05);
  expect(canRedo(u2.history)).toBe(true);
  const r = redoStep(u2.history)!;
  expect(r.redone).toBe('spot #1 added');
  // a new step here drops 'spot #2 added'
  const n = pushStep(r.history, 'spot #3 added', st(0.05, [1, 3]));
  expect(n.steps.map((s) => s.label)).toEqual(['opened', 'calibration typed in', 'spot #1 added', 'spot #3 added']);
  expect(canRedo(n)).toBe(false);
  expect(undoStep(newHistory('x', st(null)))).toBeNull();
  expect(redoStep(n)).toBeNull();
});

test('the oldest steps go first beyond the limit; bad arguments are refused by name', () => {
  let h = newHistory('img', st(null));
  for (let i = 0; i < HISTORY_LIMIT + 10; i++) h = pushStep(h, `step ${i}`, st(null, [i]));
  expect(h.steps.length).toBe(HISTORY_LIMIT);
  expect(h.index).toBe(HISTORY_LIMIT - 1);
  expect(h.steps[HISTORY_LIMIT - 1].label).toBe(`step ${HISTORY_LIMIT + 9}`);
  expect(() => pushStep(h, 'x', st(null), 1)).toThrow(/at least 2 steps/);
  expect(() => newHistory('', st(null))).toThrow(/image's id/);
});

test('the history is kept in the library with its image and deleted with it (schema step 6)', async () => {
  expect(SCHEMA_VERSION).toBe(UPGRADE_STEPS.length);
  const db = await freshLibrary();
  expect([...db.objectStoreNames]).toContain('history');
  const rec = await putImage(db, { bytes: fileBytes(), fileName: 'a.tif', image: fringeImage(), mimeType: 'image/tiff' });
  const h = pushStep(newHistory(rec.id, st(null)), 'calibration typed in', st(0.05));
  await putHistory(db, h);
  expect(await getHistory(db, rec.id)).toEqual(h);
  await deleteImage(db, rec.id);
  expect(await getHistory(db, rec.id)).toBeNull();
  db.close();
});
