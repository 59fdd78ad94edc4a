/**
 * Resume state of a batch: which files are finished, identified by the SHA-256 of their bytes and
 * the hash of the recipe they were processed with, and where each file's result record lies.
 *
 * Pure data and functions; reading, hashing and the atomic writes (temp file, then rename) are the
 * caller's. A file counts as finished only when its entry matches both hashes, so a changed file
 * or a changed recipe is processed again, and a file never gets two records.
 */
import { outputStem } from './names';
import type { FileResult } from './run';

/** The state format this code reads and writes. */
export const STATE_SCHEMA_VERSION = 1;

/** The state's file name inside the output folder. */
export const STATE_FILE_NAME = 'batch-state.json';

/** One finished file. */
export interface StateEntry {
  /** SHA-256 of the file's bytes, lower-case hex. */
  sha256: string;
  /** Hash of the canonical recipe JSON it was processed with, lower-case hex. */
  recipeHash: string;
  status: FileResult['status'];
  /** The result record's file name, relative to the output folder. */
  recordFile: string;
  /** ISO 8601 time it finished. */
  finishedIso: string;
}

export interface BatchState {
  schemaVersion: typeof STATE_SCHEMA_VERSION;
  /** Finished files by their name relative to the batch folder. */
  entries: Record<string, StateEntry>;
}

/** A state with no finished file. */
export function emptyState(): BatchState {
  return { schemaVersion: STATE_SCHEMA_VERSION, entries: {} };
}

const HEX64 = /^[0-9a-f]{64}$/;

/**
 * Reads a state file's text.
 * @param text the JSON text
 * @returns the state
 * @throws Error naming what is wrong (not JSON, other schema version, a malformed entry)
 * Notes: an unreadable state is an error, not an empty state, so that results are never
 * silently processed twice.
 */
export function parseState(text: string): BatchState {
  let v: unknown;
  try {
    v = JSON.parse(text);
  } catch {
    throw new Error('batch state is not valid JSON (cut short or damaged)');
  }
  const o = v as Partial<BatchState> | null;
  if (!o || typeof o !== 'object' || Array.isArray(o) || o.schemaVersion !== STATE_SCHEMA_VERSION) {
    const sv: unknown = o && typeof o === 'object' ? o.schemaVersion : undefined;
    // only a number or a short text is shown: a nested value would overflow the stack when written out
    const shown = typeof sv === 'number' || (typeof sv === 'string' && sv.length < 40) ? JSON.stringify(sv) : typeof sv === 'object' && sv !== null ? 'a list or an object' : String(sv);
    throw new Error(`batch state has schemaVersion ${shown}, expected ${STATE_SCHEMA_VERSION}`);
  }
  if (!o.entries || typeof o.entries !== 'object' || Array.isArray(o.entries)) throw new Error('batch state has no entries object');
  const isText = (x: unknown): x is string => typeof x === 'string';
  for (const [file, e] of Object.entries(o.entries)) {
    if (!e || typeof e !== 'object' || !isText(e.sha256) || !HEX64.test(e.sha256) || !isText(e.recipeHash) || !HEX64.test(e.recipeHash) || (e.status !== 'ok' && e.status !== 'failed') || !isText(e.recordFile)) {
      throw new Error(`batch state entry ${JSON.stringify(file.slice(0, 80))} is malformed`);
    }
  }
  return { schemaVersion: STATE_SCHEMA_VERSION, entries: o.entries };
}

/** True when `file` with these bytes was already processed with this recipe. */
export function isFinished(state: BatchState, file: string, sha256: string, recipeHash: string): boolean {
  const e = state.entries[file];
  return !!e && e.sha256 === sha256 && e.recipeHash === recipeHash;
}

/** A new state with `file`'s entry set (replacing an older entry of the same file). */
export function withEntry(state: BatchState, file: string, entry: StateEntry): BatchState {
  if (!HEX64.test(entry.sha256)) throw new RangeError(`sha256 must be 64 lower-case hex digits, got ${JSON.stringify(entry.sha256)}`);
  if (!HEX64.test(entry.recipeHash)) throw new RangeError(`recipeHash must be 64 lower-case hex digits, got ${JSON.stringify(entry.recipeHash)}`);
  return { schemaVersion: STATE_SCHEMA_VERSION, entries: { ...state.entries, [file]: entry } };
}

/**
 * The record file name for a file's bytes and recipe: unique per (bytes, recipe, name), also for
 * names that differ only in characters a file name cannot keep (see outputStem).
 */
export function recordFileName(file: string, sha256: string, recipeHash: string): string {
  return `records/${outputStem(file)}.${sha256.slice(0, 16)}.${recipeHash.slice(0, 8)}.json`;
}

/** A result record found in the records folder, for rebuilding a lost state. */
export interface FoundRecord {
  /** Its path relative to the output folder (records/...). */
  recordFile: string;
  /** Its parsed content. */
  result: unknown;
  /** When it was written (ISO 8601). */
  writtenIso: string;
}

/**
 * Rebuilds a state from the result records when the state file and its copy are both unusable:
 * every record written for this recipe (its name ends in the recipe hash's first 8 digits) with a
 * file name and a SHA-256 counts as that file's entry; of several, the newest.
 *
 * @param records - the records found.
 * @param recipeHash - the current recipe's hash (64 hex digits).
 * @returns the state; a file whose bytes changed since its record is still processed again,
 *   since `isFinished` compares the SHA-256.
 */
export function stateFromRecords(records: FoundRecord[], recipeHash: string): BatchState {
  if (!HEX64.test(recipeHash)) throw new RangeError(`recipeHash must be 64 lower-case hex digits, got ${JSON.stringify(recipeHash)}`);
  let state = emptyState();
  const sorted = [...records].sort((a, b) => a.writtenIso.localeCompare(b.writtenIso));
  for (const r of sorted) {
    if (!r.recordFile.endsWith(`.${recipeHash.slice(0, 8)}.json`)) continue;
    const res = r.result as Partial<FileResult> | null;
    if (!res || typeof res !== 'object' || typeof res.file !== 'string' || !res.file || typeof res.sha256 !== 'string' || !HEX64.test(res.sha256)) continue;
    if (res.status !== 'ok' && res.status !== 'failed') continue;
    if (r.recordFile !== recordFileName(res.file, res.sha256, recipeHash)) continue;
    state = withEntry(state, res.file, { sha256: res.sha256, recipeHash, status: res.status, recordFile: r.recordFile, finishedIso: r.writtenIso });
  }
  return state;
}
