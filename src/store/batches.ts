/**
 * Batch runs in the local library: the batch record (recipe, progress, state) in `batches` and
 * one record per queued file in `batchFiles` (the original bytes as a Blob, then its result).
 *
 * The original bytes are stored with the batch, so a batch interrupted by a reload or a crash
 * resumes without asking the user for the folder again. Files are identified by name, size and
 * SHA-256. A file's result, its measurements and the batch's progress are written in ONE
 * transaction, and a file already finished is never written again: after a resume every file
 * has exactly one result.
 */
import type { Recipe } from '../batch/recipe';
import { canonicalRecipeJson } from '../batch/recipe';
import type { FileResult } from '../batch/run';
import { sha256Hex } from './bytes';
import { LibraryError, saveInOneTransaction } from './library';
import type { LibraryDb } from './schema';
import type { BatchFileRecord, BatchFileStatus } from './records';

export type { BatchFileRecord, BatchFileStatus };

/** Where a batch stands. */
export type BatchRunState = 'running' | 'paused' | 'cancelled' | 'finished';

/** The batch record (store `batches`). */
export type BatchRun = {
  /** Unique id. */
  id: string;
  /** ISO 8601 time the batch was made. */
  createdIso: string;
  /** Name shown to the user. */
  name: string;
  /** The recipe as canonical JSON (`canonicalRecipeJson`). */
  recipeJson: string;
  /** SHA-256 of recipeJson, lower-case hex. */
  recipeHash: string;
  /** Whether annotated figures are drawn for each file. */
  figures: boolean;
  /** Files in the batch. */
  total: number;
  /** Files finished with status ok. */
  ok: number;
  /** Files finished with status failed. */
  failed: number;
  state: BatchRunState;
  /** ISO 8601 time of the last change. */
  updatedIso: string;
};

/** A file to put in a batch. */
export interface BatchInputFile {
  /** Its name (relative to the chosen folder). */
  name: string;
  /**
   * Its bytes, or the file itself as a Blob (a File of the page): a Blob is read once for its
   * SHA-256 and stored as it is, so a large folder is never held in memory whole.
   */
  bytes: Uint8Array | Blob;
}

/** Options for `createBatch`. */
export interface CreateBatchOptions {
  /** The validated recipe every file is processed with. */
  recipe: Recipe;
  /** The files, in queue order. */
  files: BatchInputFile[];
  /** Name shown to the user (default: the recipe's name and the file count). */
  name?: string;
  /** Draw an annotated figure per file (default: the recipe's outputs.figures). */
  figures?: boolean;
  /** Creation time (default now). */
  createdIso?: string;
}

/** What `createBatch` hands back. */
export interface CreatedBatch {
  batch: BatchRun;
  /** Files left out because the same name, size and SHA-256 was already queued. */
  duplicates: string[];
}

function fileKey(batchId: string, index: number): string {
  return `${batchId}/${String(index).padStart(6, '0')}`;
}

/**
 * Stores a new batch and all its files (status queued) in one transaction.
 *
 * @param db the open library
 * @param options recipe, files, name, figures
 * @returns the batch record and the names of files left out as duplicates
 * @throws RangeError for an empty file list or a file without a name;
 *   StorageFullError when the browser's quota is used up (nothing is kept then)
 */
export async function createBatch(db: LibraryDb, options: CreateBatchOptions): Promise<CreatedBatch> {
  const { recipe, files } = options;
  if (!recipe || typeof recipe !== 'object') throw new TypeError(`recipe must be a parsed recipe, got ${String(recipe)}`);
  if (!Array.isArray(files) || files.length === 0) throw new RangeError(`files must be a non-empty list, got ${Array.isArray(files) ? 'an empty list' : String(files)}`);
  for (const f of files) {
    if (!f || typeof f.name !== 'string' || !f.name) throw new RangeError(`every file needs a name, got ${JSON.stringify(f?.name)}`);
    if (!(f.bytes instanceof Uint8Array) && !(f.bytes instanceof Blob)) throw new TypeError(`file ${f.name}: bytes must be a Uint8Array or a Blob`);
  }
  const recipeJson = canonicalRecipeJson(recipe);
  const recipeHash = await sha256Hex(new TextEncoder().encode(recipeJson));
  const seen = new Set<string>();
  const duplicates: string[] = [];
  const id = globalThis.crypto.randomUUID();
  const records: BatchFileRecord[] = [];
  for (const f of files) {
    const bytes = f.bytes instanceof Blob ? new Uint8Array(await f.bytes.arrayBuffer()) : f.bytes;
    const sha = await sha256Hex(bytes);
    const key = `${f.name}\n${bytes.length}\n${sha}`;
    if (seen.has(key)) {
      duplicates.push(f.name);
      continue;
    }
    seen.add(key);
    const index = records.length;
    records.push({
      id: fileKey(id, index), batchId: id, index, name: f.name, byteSize: bytes.length, sha256Hex: sha,
      file: f.bytes instanceof Blob ? f.bytes : new Blob([bytes as Uint8Array<ArrayBuffer>]), status: 'queued', result: null, figurePng: null, finishedIso: null,
    });
  }
  const createdIso = options.createdIso ?? new Date().toISOString();
  const batch: BatchRun = {
    id, createdIso, updatedIso: createdIso,
    name: options.name ?? `${recipe.name}, ${records.length} file${records.length === 1 ? '' : 's'}`,
    recipeJson, recipeHash, figures: options.figures ?? recipe.outputs.figures,
    total: records.length, ok: 0, failed: 0, state: 'running',
  };
  await saveInOneTransaction(db, ['batches', 'batchFiles'], `the batch of ${records.length} files`, async (tx) => {
    await tx.objectStore('batches').put(batch);
    const store = tx.objectStore('batchFiles');
    for (const r of records) await store.put(r);
  });
  return { batch, duplicates };
}

/** Every batch, newest first. */
export async function listBatches(db: LibraryDb): Promise<BatchRun[]> {
  const all = (await db.getAll('batches')) as unknown as BatchRun[];
  return all.filter((b) => typeof b.recipeJson === 'string').sort((a, b) => b.createdIso.localeCompare(a.createdIso));
}

/** One batch, or undefined. */
export async function getBatch(db: LibraryDb, id: string): Promise<BatchRun | undefined> {
  return (await db.get('batches', id)) as unknown as BatchRun | undefined;
}

/** The batches that stopped before their end without being cancelled (running or paused). */
export async function unfinishedBatches(db: LibraryDb): Promise<BatchRun[]> {
  return (await listBatches(db)).filter((b) => b.state === 'running' || b.state === 'paused');
}

/** Every file of a batch in queue order. */
export async function listBatchFiles(db: LibraryDb, batchId: string): Promise<BatchFileRecord[]> {
  const files = await db.getAllFromIndex('batchFiles', 'byBatch', batchId);
  return files.sort((a, b) => a.index - b.index);
}

/** The files of a batch still to be processed, in queue order. */
export async function queuedBatchFiles(db: LibraryDb, batchId: string): Promise<BatchFileRecord[]> {
  return (await listBatchFiles(db, batchId)).filter((f) => f.status === 'queued');
}

/** What `commitFileResult` hands back. */
export interface CommitOutcome {
  /** The batch record after the commit. */
  batch: BatchRun;
  /** False when the file had already been finished (nothing was written). */
  written: boolean;
}

/**
 * Commits one file's result in ONE transaction: the file's record (status, result with its
 * measurements, figure) and the batch's progress; the batch becomes 'finished' with its last file.
 *
 * @param db the open library
 * @param fileId the file's record id
 * @param result its result (from `processOne`)
 * @param figurePng the annotated figure, or null
 * @returns the batch after the commit, and whether anything was written
 * @throws LibraryError when the file or its batch is not in the library;
 *   StorageFullError when the quota is used up (nothing of the commit is kept)
 * Notes: a file that is already finished is left as it is (written false), so a result that
 * arrives twice (a resumed batch) is never counted twice.
 */
export async function commitFileResult(db: LibraryDb, fileId: string, result: FileResult, figurePng: Uint8Array | null = null): Promise<CommitOutcome> {
  if (!result || (result.status !== 'ok' && result.status !== 'failed')) throw new TypeError(`result must be a file result, got status ${JSON.stringify(result?.status)}`);
  return saveInOneTransaction(db, ['batches', 'batchFiles'], `the result of ${result.file}`, async (tx) => {
    const files = tx.objectStore('batchFiles');
    const rec = await files.get(fileId);
    if (!rec) throw new LibraryError(`no batch file ${fileId} in the library`);
    const batches = tx.objectStore('batches');
    const batch = (await batches.get(rec.batchId)) as unknown as BatchRun | undefined;
    if (!batch) throw new LibraryError(`no batch ${rec.batchId} in the library`);
    if (rec.status !== 'queued') return { batch, written: false };
    const now = new Date().toISOString();
    await files.put({ ...rec, status: result.status, result, figurePng, finishedIso: now });
    const next: BatchRun = {
      ...batch,
      ok: batch.ok + (result.status === 'ok' ? 1 : 0),
      failed: batch.failed + (result.status === 'failed' ? 1 : 0),
      updatedIso: now,
    };
    if (next.ok + next.failed >= next.total) next.state = 'finished';
    await batches.put(next);
    return { batch: next, written: true };
  });
}

/**
 * Sets a batch's state (pause, resume, cancel).
 * @param db the open library
 * @param id the batch
 * @param state the new state ('finished' only when every file is done)
 * @returns the batch record after the change
 * @throws LibraryError for an unknown batch; RangeError for an unknown state or an early 'finished'
 */
export async function setBatchState(db: LibraryDb, id: string, state: BatchRunState): Promise<BatchRun> {
  if (!['running', 'paused', 'cancelled', 'finished'].includes(state)) throw new RangeError(`state must be running, paused, cancelled or finished, got ${JSON.stringify(state)}`);
  return saveInOneTransaction(db, ['batches'], 'the batch state', async (tx) => {
    const batch = (await tx.objectStore('batches').get(id)) as unknown as BatchRun | undefined;
    if (!batch) throw new LibraryError(`no batch ${id} in the library`);
    const done = batch.ok + batch.failed >= batch.total;
    if (state === 'finished' && !done) throw new RangeError(`batch ${id} has ${batch.total - batch.ok - batch.failed} files left: it cannot be finished`);
    const next: BatchRun = { ...batch, state: done ? 'finished' : state, updatedIso: new Date().toISOString() };
    await tx.objectStore('batches').put(next);
    return next;
  });
}

/**
 * Deletes a batch with all its files and results, in one transaction.
 * @returns the number of file records deleted
 */
export async function deleteBatch(db: LibraryDb, id: string): Promise<number> {
  return saveInOneTransaction(db, ['batches', 'batchFiles'], 'the deletion of the batch', async (tx) => {
    const keys = await tx.objectStore('batchFiles').index('byBatch').getAllKeys(id);
    for (const k of keys) await tx.objectStore('batchFiles').delete(k);
    await tx.objectStore('batches').delete(id);
    return keys.length;
  });
}
