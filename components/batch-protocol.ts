/** Messages between the batch panel's pool and its workers (structured-cloneable data only). */
import type { FileResult } from '../src/batch/run';

/** One file to process. */
export interface BatchJob {
  /** The job's id (the batch file record's id). */
  id: string;
  /** The file's bytes (transferred). */
  bytes: Uint8Array;
  fileName: string;
  /** The recipe as JSON (validated again in the worker). */
  recipeJson: string;
  /** Draw the annotated figure. */
  figure: boolean;
}

/** The worker's answer to one job. */
export type BatchJobReply =
  | { id: string; ok: true; result: FileResult; figurePng: Uint8Array | null }
  | { id: string; ok: false; error: string };
