import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, expect, test } from 'vitest';
import { parseRecipe } from '../../src/batch/recipe';
import { runBatch } from '../../src/cli/batch';
import { fakeFile } from './fakes';
import { expressPeriod } from '../../src/measure/measurement';

// The runner in worker threads with the fake decoder and tools (tests/batch/fakes.ts).
const depsModule = new URL('./fakes.ts', import.meta.url).href;
let dir = '';
const io = { out: () => {}, err: () => {} };

beforeEach(async () => {
  dir = await mkdtemp(join(tmpdir(), 'batch-fake-'));
  await writeFile(join(dir, 'a.tif'), fakeFile(256, 256, 0.05, 20));
  await writeFile(join(dir, 'b.tif'), fakeFile(256, 256, 0.05, 24));
  await writeFile(join(dir, 'c,"odd".tif'), fakeFile(256, 256, 0.05, 28));
  await writeFile(join(dir, 'broken.tif'), new Uint8Array([1, 2, 3]));
  await writeFile(join(dir, 'notes.txt'), 'not an image');
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

test('two workers process every file; a re-run skips all; a changed file is redone', async () => {
  const recipe = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 }, outputs: { zip: true } });
  const opts = { folder: dir, recipe, outCsv: join(dir, 'out', 'results.csv'), jobs: 2, depsModule };
  const first = await runBatch(opts, io);
  expect([first.total, first.processed, first.skipped]).toEqual([4, 4, 0]);
  expect(first.results.map((r) => [r.file, r.status])).toEqual([
    ['a.tif', 'ok'],
    ['b.tif', 'ok'],
    ['broken.tif', 'failed'],
    ['c,"odd".tif', 'ok'],
  ]);
  expect(first.workerPeakBytes).toHaveLength(2);
  // SHA-256 of the bytes in every record (FIPS 180-4, via node:crypto)
  const { createHash } = await import('node:crypto');
  expect(first.results[0].sha256).toBe(createHash('sha256').update(fakeFile(256, 256, 0.05, 20)).digest('hex'));
  const csv = await readFile(join(dir, 'out', 'results.csv'), 'utf8');
  // header + 3 ok files × 2 periods + 1 failed row
  expect(csv.trimEnd().split('\r\n')).toHaveLength(1 + 6 + 1);
  expect(csv).toContain('"c,""odd"".tif"');
  const records = await readdir(join(dir, 'out', 'records'));
  expect(records).toHaveLength(4);

  const second = await runBatch(opts, io);
  expect([second.processed, second.skipped]).toEqual([0, 4]);
  expect(second.results).toEqual(first.results);
  expect(await readFile(join(dir, 'out', 'results.csv'), 'utf8')).toBe(csv);

  await writeFile(join(dir, 'b.tif'), fakeFile(256, 256, 0.05, 30));
  const third = await runBatch(opts, io);
  expect([third.processed, third.skipped]).toEqual([1, 3]);
  expect(expressPeriod(third.results[1].summary.topPeriods[0], third.results[1].calibration).value).toBeCloseTo(1.5, 12); // 30 px × 0.05 nm/px
  expect(await readdir(join(dir, 'out', 'records'))).toHaveLength(5); // the old record stays, the state points at the new one
  const state = JSON.parse(await readFile(join(dir, 'out', 'batch-state.json'), 'utf8'));
  expect(Object.keys(state.entries).sort()).toEqual(['a.tif', 'b.tif', 'broken.tif', 'c,"odd".tif']);
  expect(await readdir(join(dir, 'out'))).toEqual(expect.arrayContaining(['results.zip', 'results.json', 'results-summary.csv']));
}, 120_000);

test('a changed recipe processes every file again', async () => {
  const outCsv = join(dir, 'out', 'r.csv');
  const a = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 } });
  const b = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 }, acceptance: { minStrength: 5 } });
  await runBatch({ folder: dir, recipe: a, outCsv, jobs: 1, depsModule }, io);
  const again = await runBatch({ folder: dir, recipe: b, outCsv, jobs: 1, depsModule }, io);
  expect([again.processed, again.skipped]).toEqual([4, 0]);
  // the weaker harmonic (strength 2, fake tool) is now rejected
  expect(again.results[0].summary.topPeriods).toHaveLength(1);
}, 120_000);

test('a file that stops its worker fails alone; a fresh worker takes the remaining files', async () => {
  await writeFile(join(dir, 'b0-crash.tif'), 'CRASH');
  const recipe = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 } });
  const out = await runBatch({ folder: dir, recipe, outCsv: join(dir, 'out', 'results.csv'), jobs: 1, depsModule }, io);
  expect(out.results.map((r) => [r.file, r.status])).toEqual([
    ['a.tif', 'ok'],
    ['b.tif', 'ok'],
    ['b0-crash.tif', 'failed'],
    ['broken.tif', 'failed'],
    ['c,"odd".tif', 'ok'],
  ]);
  expect(out.results[2].reason).toMatch(/processing stopped: worker stopped with exit code 7/);
  // not marked finished: the next run tries it again, and only it
  const again = await runBatch({ folder: dir, recipe, outCsv: join(dir, 'out', 'results.csv'), jobs: 1, depsModule }, io);
  expect([again.processed, again.skipped]).toEqual([1, 4]);
}, 120_000);

test('a step the tools lack stops the batch before any file, as a usage error', async () => {
  // the fakes have no domains tool
  const recipe = parseRecipe({ schemaVersion: 1, measurements: [{ tool: 'domains' }] });
  await expect(runBatch({ folder: dir, recipe, outCsv: join(dir, 'out', 'r.csv'), jobs: 1, depsModule }, io)).rejects.toThrow(/cannot run the recipe's step\(s\) domains/);
  await expect(readdir(join(dir, 'out', 'records'))).rejects.toThrow(/ENOENT/);
}, 60_000);

test('progress: plain lines when not a terminal, a bar redrawn in place on one', async () => {
  const { progressLine } = await import('../../src/cli/batch');
  expect(progressLine(3, 10, 'a.tif', 'ok', false)).toBe('batch: 3/10 a.tif ok\n');
  const bar = progressLine(5, 10, 'a.tif', 'ok', true);
  expect(bar.startsWith('\r[###############...............] 5/10 a.tif')).toBe(true);
  expect(bar.endsWith('\n')).toBe(false);
  expect(progressLine(10, 10, 'z.tif', 'ok', true).endsWith('\n')).toBe(true);
});

test('a file that hangs, or fills its heap, is stopped at the per-file limit and listed with the reason; the others finish', async () => {
  await writeFile(join(dir, 'b1-hang.tif'), 'HANG');
  await writeFile(join(dir, 'b2-heap.tif'), 'HEAP');
  const recipe = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 } });
  const out = await runBatch({ folder: dir, recipe, outCsv: join(dir, 'out', 'results.csv'), jobs: 1, depsModule, fileTimeLimitS: 4, fileMemoryLimitMb: 96 }, io);
  expect(out.results.map((r) => [r.file, r.status])).toEqual([
    ['a.tif', 'ok'],
    ['b.tif', 'ok'],
    ['b1-hang.tif', 'failed'],
    ['b2-heap.tif', 'failed'],
    ['broken.tif', 'failed'],
    ['c,"odd".tif', 'ok'],
  ]);
  expect(out.results[2].reason).toBe('stopped: it was still in work after the per-file time limit of 4 s; the worker was ended and replaced');
  expect(out.results[3].reason).toBe('stopped: it needed more memory than the per-file limit of 96 MiB; the worker was ended and replaced');
}, 180_000);

test('a half-written state file is recovered from its last good copy, or rebuilt from the records', async () => {
  const recipe = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 } });
  const opts = { folder: dir, recipe, outCsv: join(dir, 'out', 'results.csv'), jobs: 1, depsModule };
  await runBatch(opts, io);
  const statePath = join(dir, 'out', 'batch-state.json');
  const good = await readFile(statePath, 'utf8');
  await writeFile(statePath, good.slice(0, good.length >> 1)); // cut short, as by a crash mid-write
  const second = await runBatch(opts, io);
  expect([second.processed, second.skipped]).toEqual([0, 4]);
  expect(second.notes.join('\n')).toMatch(/batch-state\.json is damaged \(batch state is not valid JSON[^\n]*; it was moved to batch-state\.json\.damaged-/);
  expect(second.notes.join('\n')).toMatch(/resumed from the last good copy batch-state\.json\.bak \(4 finished files\)/);
  expect(await readFile(statePath, 'utf8')).toBe(good);
  // both damaged: the state is rebuilt from records/
  await writeFile(statePath, '{"schemaVersion":1,"entr');
  await writeFile(`${statePath}.bak`, '');
  const third = await runBatch(opts, io);
  expect([third.processed, third.skipped]).toEqual([0, 4]);
  expect(third.notes.join('\n')).toMatch(/rebuilt it from the 4 result records/);
}, 180_000);

test('files whose names differ only in replaced characters get distinct figures, named in their results', async () => {
  for (const f of await readdir(dir)) await rm(join(dir, f), { force: true });
  for (const [name, p] of [['a b.tif', 20], ['a_b.tif', 24], ['a+b.tif', 28]] as const) await writeFile(join(dir, name), fakeFile(256, 256, 0.05, p));
  const recipe = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 }, outputs: { json: true } });
  const figures = join(dir, 'out', 'fig');
  const out = await runBatch({ folder: dir, recipe, outCsv: join(dir, 'out', 'results.csv'), jobs: 1, depsModule, figuresDir: figures }, io);
  const names = out.results.map((r) => r.figureFile);
  expect(new Set(names).size).toBe(3);
  expect(names[out.results.findIndex((r) => r.file === 'a_b.tif')]).toBe('a_b.tif.png');
  expect((await readdir(figures)).filter((f) => f.startsWith('a_b')).sort()).toEqual([...names].sort());
  const json = JSON.parse(await readFile(join(dir, 'out', 'results.json'), 'utf8'));
  expect(json.results.map((r: { file: string; figureFile: string }) => [r.file, r.figureFile])).toEqual(out.results.map((r) => [r.file, r.figureFile]));
  expect(new Set(await readdir(join(dir, 'out', 'records'))).size).toBe(3);
}, 180_000);
