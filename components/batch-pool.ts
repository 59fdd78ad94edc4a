/**
 * A pool of module Web Workers for a batch: about one per core (`navigator.hardwareConcurrency`,
 * at most 4), run by the batch's one pool (`runPool`, src/batch/pool.ts, which the command line's
 * worker threads share). Each worker takes the next queued file as soon as it is free; the caller
 * commits each answer before that worker takes another. Pause lets the files in work finish and takes no
 * new one; cancel stops the workers at once (files in work stay queued). A file still in work
 * after the per-file time limit has its worker ended (a fresh one takes the next file) and is
 * answered as failed with the reason.
 */
import type { FileResult } from '../src/batch/run';
import { LimitError, runPool, type PoolWorker } from '../src/batch/pool';
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

/**
 * One module Web Worker: the page's adapter of the batch pool (src/batch/pool.ts). The worker is
 * started on its first file and kept between runs (its opencv.js and OCR engine stay loaded);
 * a worker that crashed or was ended is started afresh on the next file.
 */
class WebPoolWorker implements PoolWorker<BatchJob, BatchJobReply> {
  private worker: Worker | null = null;
  private pending: { id: string; resolve: (r: BatchJobReply) => void; reject: (e: Error) => void } | null = null;
  /** Errors surface per file (a module worker has no separate start-up step). */
  readonly ready = Promise.resolve();

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
      this.terminate(new Error(`the worker stopped: ${e.message || 'out of memory or failed to start'}`));
    };
    this.worker = w;
    return w;
  }

  run(job: BatchJob): Promise<BatchJobReply> {
    const w = this.ensure();
    return new Promise((resolve, reject) => {
      this.pending = { id: job.id, resolve, reject };
      w.postMessage(job, [job.bytes.buffer]);
    });
  }

  end(reason: string): void {
    this.terminate(new LimitError(reason));
  }

  /** Kept for the next file or run: the page's workers end only by a limit, a crash, cancel or dispose. */
  stop(): void {}

  /** Terminates the worker; a file in work is rejected with `error`. */
  terminate(error: Error = new Error('the batch was cancelled')): void {
    const p = this.pending;
    this.pending = null;
    this.worker?.terminate();
    this.worker = null;
    p?.reject(error);
  }
}

export class BatchPool {
  private readonly workers: WebPoolWorker[];
  private queue: PoolFile[] = [];
  private stopping = false;
  private generation = 0;

  /**
   * @param size number of workers (`poolSize()` by default)
   * @param url the worker module (batch-worker.js beside the page)
   */
  constructor(size = poolSize(), url: string | URL = 'batch-worker.js') {
    if (!(Number.isInteger(size) && size >= 1 && size <= 4)) throw new RangeError(`size must be an integer from 1 to 4, got ${size}`);
    this.workers = Array.from({ length: size }, (_, i) => new WebPoolWorker(url, `batch-${i + 1}`));
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
    const answer = async (a: PoolAnswer) => {
      try {
        await options.onAnswer(a);
      } catch (error) {
        // the commit failed (e.g. storage full): the file stays queued and no worker takes another
        this.stopping = true;
        this.queue.unshift(a.file);
        throw error;
      }
    };
    await runPool<PoolFile, BatchJob, BatchJobReply>({
      workers: this.workers.length,
      next: () => (this.stopping || gen !== this.generation ? null : this.queue.shift() ?? null),
      job: async (file) => ({ id: file.id, bytes: await file.bytes(), fileName: file.name, recipeJson: options.recipeJson, figure: options.figures }),
      spawn: (i) => this.workers[i],
      timeLimitMs: options.fileTimeLimitMs ?? DEFAULT_FILE_TIME_LIMIT_MS,
      onStart: (file) => options.onStart?.(file),
      onReply: (file, reply) => answer(reply.ok ? { file, result: reply.result, figurePng: reply.figurePng } : { file, result: workerFailure(file.name, reply.error), figurePng: null }),
      onFailure: (file, e) => answer({ file, result: workerFailure(file.name, e instanceof LimitError ? `stopped: ${e.message}` : e.message), figurePng: null }),
      // cancelled while in work: the file is not reported (it stays queued in the batch's records)
      cancelled: () => gen !== this.generation,
    });
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
    for (const w of this.workers) w.terminate();
  }

  /** Stops the workers for good. */
  dispose(): void {
    this.cancel();
  }
}
