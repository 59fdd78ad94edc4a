import { afterEach, expect, test } from 'vitest';
import { BatchPool, type PoolAnswer } from '../../components/batch-pool';
import type { BatchJob } from '../../components/batch-protocol';

// The page's pool of Web Workers with a stand-in Worker class: a job whose name is "hang.tif"
// is never answered, every other is answered at once. The per-file limit must end the hanging
// worker, answer its file as failed, and let a fresh worker take the next files.
const started: string[] = [];
let terminated = 0;
class FakeWorker {
  onmessage: ((e: { data: unknown }) => void) | null = null;
  onerror: ((e: { message: string; preventDefault(): void }) => void) | null = null;
  constructor(_url: string | URL, _options: unknown) {}
  postMessage(job: BatchJob) {
    started.push(job.fileName);
    if (job.fileName === 'hang.tif') return; // a decoder caught in a loop never answers
    const result = { file: job.fileName, status: 'ok', image: null, calibration: null, measurements: [], summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] }, notes: [] };
    queueMicrotask(() => this.onmessage?.({ data: { id: job.id, ok: true, result, figurePng: null } }));
  }
  terminate() {
    terminated++;
  }
}
const original = (globalThis as { Worker?: unknown }).Worker;
afterEach(() => {
  (globalThis as { Worker?: unknown }).Worker = original;
});

test('a file still in work after the per-file time limit is answered as failed; its worker is replaced and the batch goes on', async () => {
  (globalThis as { Worker?: unknown }).Worker = FakeWorker;
  const pool = new BatchPool(1, 'batch-worker.js');
  const names = ['a.tif', 'hang.tif', 'b.tif', 'c.tif'];
  const answers: PoolAnswer[] = [];
  const left = await pool.run(
    names.map((name) => ({ id: name, name, bytes: async () => new Uint8Array(4) })),
    { recipeJson: '{}', figures: false, fileTimeLimitMs: 200, onAnswer: async (a) => void answers.push(a) },
  );
  expect(left).toEqual([]);
  expect(answers.map((a) => [a.file.name, a.result.status])).toEqual([['a.tif', 'ok'], ['hang.tif', 'failed'], ['b.tif', 'ok'], ['c.tif', 'ok']]);
  expect(answers[1].result.reason).toBe('stopped: it was still in work after the per-file time limit of 0.2 s; the worker was ended and replaced');
  expect(terminated).toBe(1);
  expect(started).toEqual(names);
  pool.dispose();
});
