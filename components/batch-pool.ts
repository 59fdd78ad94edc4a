/**
 * A pool of module Web Workers for a batch: about one per core (`navigator.hardwareConcurrency`,
 * at most 4). Each worker takes the next queued file as soon as it is free; the caller commits
 * each answer before that worker takes another. Pause lets the files in work finish and takes no
 * new one; cancel stops the workers at once (files in work stay queued). A file still in work
 * after the per-file time limit has its worker ended (a fresh one takes the next file) and is
 * answered as failed with the reason.
 */
import type { FileResult } from '../src/batch/run';
import type { BatchJob, BatchJobReply } from './batch-protocol';

/** A file waiting in the queue. */
export interface PoolFile {
  /** The batch file record's id. */
  id: string;
  name: string;
  /** Reads the original bytes (from the library's Blob). */
  bytes(): Promise<Uint8Array>;
}

/** What the pool reports for one file. */
export interface PoolAnswer {
  file: PoolFile;
  result: FileResult;
  figurePng: Uint8Array | null;
}

/** Options for a run of the pool. */
export interface PoolRunOptions {
  /** The recipe as JSON. */
  recipeJson: string;
  /** Draw figures. */
  figures: boolean;
  /** Called when a worker starts a file. */
  onStart?(file: PoolFile): void;
  /** Called with each answer; the worker waits for it (the commit) before its next file. */
  onAnswer(answer: PoolAnswer): Promise<void>;
  /**
   * Per-file time limit in ms (default 120 000): a worker still on one file after it is ended
   * and a fresh one takes the next file; the file is answered as failed with the reason.
   */
  fileTimeLimitMs?: number;
}

/** Default per-file time limit of the page's batch pool, ms (as the command line's). */
export const DEFAULT_FILE_TIME_LIMIT_MS = 120_000;

/** The number of workers for this machine: one per core, at least 1, at most 4. */
export function poolSize(cores: number | undefined = globalThis.navigator?.hardwareConcurrency): number {
  return Math.max(1, Math.min(4, Math.floor(cores || 1)));
}

/** A failed result for a file that the worker could not answer for. */
function workerFailure(name: string, reason: string): FileResult {
  return {
    file: name, status: 'failed', reason, image: null, calibration: null, measurements: [],
    summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] }, notes: [],
  };
}

class PoolWorker {
  private worker: Worker | null = null;
  private pending: { id: string; resolve: (r: BatchJobReply) => void } | null = null;

  constructor(private readonly url: string | URL, private readonly name: string) {}

  private ensure(): Worker {
    if (this.worker) return this.worker;
    const w = new Worker(this.url, { type: 'module', name: this.name });
    w.onmessage = (e: MessageEvent<BatchJobReply>) => {
      const p = this.pending;
      if (p && p.id === e.data.id) {
        this.pending = null;
        p.resolve(e.data);
      }
    };
    w.onerror = (e) => {
      e.preventDefault();
      this.stop(`the worker stopped: ${e.message || 'out of memory or failed to start'}`);
    };
    this.worker = w;
    return w;
  }

  /** Processes one file; past `timeLimitMs` the worker is ended and the file answered as failed. */
  process(job: BatchJob, timeLimitMs: number): Promise<BatchJobReply> {
    const w = this.ensure();
    return new Promise((resolve) => {
      const timer = setTimeout(() => this.stop(`stopped: it was still in work after the per-file time limit of ${timeLimitMs / 1000} s; the worker was ended and replaced`), timeLimitMs);
      this.pending = { id: job.id, resolve: (r) => (clearTimeout(timer), resolve(r)) };
      w.postMessage(job, [job.bytes.buffer]);
    });
  }

  /** Terminates the worker; a file in work is answered with `reason` as its error. */
  stop(reason = 'the batch was cancelled'): void {
    const p = this.pending;
    this.pending = null;
    this.worker?.terminate();
    this.worker = null;
    p?.resolve({ id: p.id, ok: false, error: reason });
  }
}

export class BatchPool {
  private readonly workers: PoolWorker[];
  private queue: PoolFile[] = [];
  private stopping = false;
  private generation = 0;

  /**
   * @param size number of workers (`poolSize()` by default)
   * @param url the worker module (batch-worker.js beside the page)
   */
  constructor(size = poolSize(), url: string | URL = 'batch-worker.js') {
    if (!(Number.isInteger(size) && size >= 1 && size <= 4)) throw new RangeError(`size must be an integer from 1 to 4, got ${size}`);
    this.workers = Array.from({ length: size }, (_, i) => new PoolWorker(url, `batch-${i + 1}`));
  }

  /** Number of workers. */
  get size(): number {
    return this.workers.length;
  }

  /**
   * Processes the files in order until the queue is empty, `pause()` or `cancel()`.
   * @returns the files not started (queued), in order
   * @throws the first error of `onAnswer` (e.g. a full storage), after the files in work finish
   */
  async run(files: PoolFile[], options: PoolRunOptions): Promise<PoolFile[]> {
    this.queue = [...files];
    this.stopping = false;
    const gen = ++this.generation;
    let failure: { error: unknown } | null = null;
    const loop = async (w: PoolWorker) => {
      while (!this.stopping && gen === this.generation) {
        const file = this.queue.shift();
        if (!file) return;
        options.onStart?.(file);
        let reply: BatchJobReply;
        try {
          const bytes = await file.bytes();
          reply = await w.process({ id: file.id, bytes, fileName: file.name, recipeJson: options.recipeJson, figure: options.figures }, options.fileTimeLimitMs ?? DEFAULT_FILE_TIME_LIMIT_MS);
        } catch (e) {
          reply = { id: file.id, ok: false, error: (e as Error).message };
        }
        if (gen !== this.generation) return; // cancelled while in work: the file stays queued
        const answer: PoolAnswer = reply.ok
          ? { file, result: reply.result, figurePng: reply.figurePng }
          : { file, result: workerFailure(file.name, reply.error), figurePng: null };
        try {
          await options.onAnswer(answer);
        } catch (error) {
          // the commit failed (e.g. storage full): the file stays queued and no worker takes another
          failure ??= { error };
          this.stopping = true;
          this.queue.unshift(file);
          return;
        }
      }
    };
    await Promise.all(this.workers.map(loop));
    if (failure) throw (failure as { error: unknown }).error;
    return this.queue;
  }

  /** Takes no new file; the files in work finish and are reported. */
  pause(): void {
    this.stopping = true;
  }

  /** Stops every worker now; the files in work are not reported. */
  cancel(): void {
    this.stopping = true;
    this.generation++;
    for (const w of this.workers) w.stop();
  }

  /** Stops the workers for good. */
  dispose(): void {
    this.cancel();
  }
}
