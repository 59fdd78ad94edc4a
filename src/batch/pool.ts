/**
 * The one worker pool of a batch, for the command line (Node worker threads) and the app (module
 * Web Workers) alike: a loop per worker that takes the next file, has it processed, commits the
 * answer, and takes the next. What differs between the two is behind `PoolWorker`, a thin adapter
 * per environment (src/cli/batch.ts, components/batch-pool.ts).
 *
 * Rules: a worker starts on its first file and must be ready before it gets one (a worker that
 * cannot start stops the whole pool: every other would fail alike); a file still in work after
 * the per-file time limit has its worker ended; a worker that crashes or is ended fails only its
 * file, and a fresh worker takes the next one; each answer is committed before that worker takes
 * another file, so nothing is lost when the run is interrupted.
 */

/** One worker, as the pool sees it. */
export interface PoolWorker<Job, Reply> {
  /** Settles when the worker can take files; rejects when it cannot start (the pool then stops with that error). */
  readonly ready: Promise<void>;
  /** Processes one job; rejects when the worker crashes or is ended while on it. */
  run(job: Job): Promise<Reply>;
  /** Ends the worker now; a job in work rejects with a `LimitError` carrying `reason`. */
  end(reason: string): void;
  /** Stops the worker for good (after its last job). */
  stop(): Promise<unknown> | void;
}

/** A worker ended by a per-file limit (time or memory); the message says which and is meant for the user. */
export class LimitError extends Error {
  override name = 'LimitError';
}

/** Options of `runPool`. */
export interface PoolOptions<Item, Job, Reply> {
  /** Number of worker loops (≥ 1). */
  workers: number;
  /** The next item to process, or null when there is none (or the pool is to take no more). */
  next(): Promise<Item | null> | Item | null;
  /** The job a worker gets for an item (e.g. the file's bytes read). */
  job(item: Item): Promise<Job> | Job;
  /** Makes a worker for loop `index` (again after one was ended). */
  spawn(index: number): PoolWorker<Job, Reply>;
  /** Per-file time limit, ms. */
  timeLimitMs: number;
  /** Take the loop's next item while the current one is in work (default false). */
  prefetch?: boolean;
  /** Called when a worker starts an item. */
  onStart?(item: Item): void;
  /** Commits an answer; the worker takes its next item only after this settles. A rejection stops the pool (after the items in work). */
  onReply(item: Item, reply: Reply): Promise<void> | void;
  /** Commits a failure: the worker crashed, was ended by a limit (error is a LimitError), or the job could not be made. */
  onFailure(item: Item, error: Error): Promise<void> | void;
  /** Called with each worker once it is done (stopped or ended), e.g. for its statistics. */
  onWorkerDone?(worker: PoolWorker<Job, Reply>, index: number): void;
  /** True when the pool is to stop now (cancelled): the loops return without committing the items in work. */
  cancelled?(): boolean;
}

/**
 * Runs the pool until `next` has no more items, a commit fails or a worker cannot start.
 * @throws the first fatal error: a worker that could not start, or a commit that failed
 */
export async function runPool<Item, Job, Reply>(options: PoolOptions<Item, Job, Reply>): Promise<void> {
  if (!(Number.isInteger(options.workers) && options.workers >= 1)) throw new RangeError(`workers must be a positive integer, got ${options.workers}`);
  if (!(options.timeLimitMs > 0)) throw new RangeError(`timeLimitMs must be positive, got ${options.timeLimitMs}`);
  let fatal: { error: unknown } | null = null;
  const cancelled = () => !!options.cancelled?.();
  const loop = async (index: number) => {
    let worker: PoolWorker<Job, Reply> | null = null;
    const retire = async (w: PoolWorker<Job, Reply>) => {
      await Promise.resolve(w.stop()).catch(() => undefined);
      options.onWorkerDone?.(w, index);
    };
    try {
      let item = fatal || cancelled() ? null : await options.next();
      while (item !== null && !fatal && !cancelled()) {
        if (!worker) {
          worker = options.spawn(index);
          try {
            await worker.ready;
          } catch (e) {
            fatal ??= { error: e };
            await retire(worker);
            worker = null;
            return;
          }
        }
        const w: PoolWorker<Job, Reply> = worker;
        options.onStart?.(item);
        const prefetched = options.prefetch ? Promise.resolve(options.next()) : null;
        let reply: Reply | undefined;
        let failure: Error | null = null;
        let workerFailed = false;
        try {
          const job = await options.job(item);
          workerFailed = true; // from here on a rejection is the worker's
          const timer = setTimeout(() => w.end(`it was still in work after the per-file time limit of ${options.timeLimitMs / 1000} s; the worker was ended and replaced`), options.timeLimitMs);
          try {
            reply = await w.run(job);
            workerFailed = false;
          } finally {
            clearTimeout(timer);
          }
        } catch (e) {
          failure = e instanceof Error ? e : new Error(String(e));
        }
        if (cancelled()) return;
        try {
          if (failure) {
            // a crashed or ended worker fails its file only; a fresh worker takes the next one
            if (workerFailed) {
              await retire(w);
              worker = null;
            }
            await options.onFailure(item, failure);
          } else await options.onReply(item, reply as Reply);
        } catch (e) {
          fatal ??= { error: e };
          return;
        }
        item = prefetched ? await prefetched : fatal || cancelled() ? null : await options.next();
      }
    } finally {
      if (worker) await retire(worker);
    }
  };
  await Promise.all(Array.from({ length: options.workers }, (_, i) => loop(i)));
  if (fatal) throw (fatal as { error: unknown }).error;
}
