// The batch's one worker pool (src/batch/pool.ts) with stand-in workers: how it takes, commits,
// replaces and stops. The Node and Web Worker adapters are exercised by cli.test.ts and pool.test.ts.
import { expect, test } from 'vitest';
import { LimitError, runPool, type PoolWorker } from '../../src/batch/pool';

/** A worker answering each job with its double after `ms`, crashing on 'crash', hanging on 'hang'. */
function fake(log: string[], id: number, ready: Promise<void> = Promise.resolve()): PoolWorker<string, string> & { stopped: boolean } {
  let pending: ((e: Error) => void) | null = null;
  return {
    ready,
    stopped: false,
    run(job) {
      log.push(`w${id}:${job}`);
      return new Promise((resolve, reject) => {
        pending = reject;
        if (job === 'crash') setTimeout(() => reject(new Error('worker stopped with exit code 1')), 1);
        else if (job !== 'hang') setTimeout(() => resolve(job + job), 1);
      });
    },
    end(reason) {
      pending?.(new LimitError(reason));
    },
    stop() {
      this.stopped = true;
    },
  };
}

function queue(items: string[]) {
  const q = [...items];
  return () => q.shift() ?? null;
}

test('every item is answered once; a crash or a time limit fails only its item and a fresh worker takes the next', async () => {
  const log: string[] = [];
  const answers: string[] = [];
  let spawned = 0;
  await runPool<string, string, string>({
    workers: 2,
    next: queue(['a', 'crash', 'b', 'hang', 'c', 'd']),
    job: (x) => x,
    spawn: () => fake(log, ++spawned),
    timeLimitMs: 50,
    onReply: (item, reply) => void answers.push(`${item}=${reply}`),
    onFailure: (item, e) => void answers.push(`${item}:${e instanceof LimitError ? 'limit' : 'crash'}`),
  });
  expect([...answers].sort()).toEqual(['a=aa', 'b=bb', 'c=cc', 'crash:crash', 'd=dd', 'hang:limit']);
  // the workers that crashed and hung took nothing after; a fresh worker went on in that loop
  for (const bad of ['crash', 'hang']) {
    const at = log.findIndex((l) => l.endsWith(`:${bad}`));
    const id = log[at].split(':')[0];
    expect(log.slice(at + 1).filter((l) => l.startsWith(`${id}:`))).toEqual([]);
  }
  expect(spawned).toBeGreaterThanOrEqual(3);
});

test('a worker that cannot start stops the pool with its error; a failed commit stops it too', async () => {
  await expect(runPool<string, string, string>({
    workers: 2, next: queue(['a', 'b']), job: (x) => x, timeLimitMs: 1000,
    spawn: () => fake([], 1, Promise.reject(new Error('cannot load the measurement tools'))),
    onReply: () => {}, onFailure: () => {},
  })).rejects.toThrow('cannot load the measurement tools');
  const taken: string[] = [];
  await expect(runPool<string, string, string>({
    workers: 1, next: queue(['a', 'b', 'c']), job: (x) => (taken.push(x), x), timeLimitMs: 1000,
    spawn: () => fake([], 1),
    onReply: (item) => {
      if (item === 'b') throw new Error('storage full');
    },
    onFailure: () => {},
  })).rejects.toThrow('storage full');
  expect(taken).toEqual(['a', 'b']);
});

test('a job that cannot be made fails its item and keeps the worker', async () => {
  let spawned = 0;
  const answers: string[] = [];
  await runPool<string, string, string>({
    workers: 1, next: queue(['a', 'unreadable', 'b']), timeLimitMs: 1000,
    job: (x) => {
      if (x === 'unreadable') throw new Error('cannot read the file');
      return x;
    },
    spawn: () => fake([], ++spawned),
    onReply: (item) => void answers.push(item),
    onFailure: (item, e) => void answers.push(`${item}: ${e.message}`),
  });
  expect(answers).toEqual(['a', 'unreadable: cannot read the file', 'b']);
  expect(spawned).toBe(1);
});
