// Sharding a batch (batch --shard K/N) and merging the partial results (merge): the shares, the
// refusals, and three shards run through GNU parallel whose merge equals a single run.
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, test } from 'vitest';
import { combinePartials, parseShardSpec, PARTIAL_FORMAT, readPartial, shardShare, type NamedPartial, type PartialResult } from '../../src/batch/shard';
import { defaultRecipe } from '../../src/batch/recipe';
import { encodeTiff } from '../../testing/encode-tiff';
import { rng } from '../../testing/random';

describe('shard specifications and shares', () => {
  test('K/N is read; 0/3, 4/3, a/b and 1/0 are refused with what is wrong', () => {
    expect(parseShardSpec('2/3')).toEqual({ k: 2, n: 3 });
    expect(parseShardSpec('1/1')).toEqual({ k: 1, n: 1 });
    expect(() => parseShardSpec('0/3')).toThrow(/--shard 0\/3: shards are numbered from 1 to N, so K must be at least 1/);
    expect(() => parseShardSpec('4/3')).toThrow(/--shard 4\/3: shard 4 is past the last shard 3/);
    expect(() => parseShardSpec('a/b')).toThrow(/--shard must be K\/N.*got 'a\/b'/);
    expect(() => parseShardSpec('1/0')).toThrow(/number of shards N must be at least 1/);
    expect(() => parseShardSpec('2')).toThrow(/got '2'/);
  });

  test('the shares of N shards cover the sorted folder exactly once, dealt out in turn', () => {
    const files = Array.from({ length: 11 }, (_, i) => `img-${String(i).padStart(2, '0')}.tif`);
    for (const n of [1, 2, 3, 5, 11, 13]) {
      const shares = Array.from({ length: n }, (_, i) => shardShare(files, { k: i + 1, n }));
      expect(shares.flat().sort()).toEqual(files);
      expect(Math.max(...shares.map((s) => s.length)) - Math.min(...shares.map((s) => s.length))).toBeLessThanOrEqual(1);
    }
    expect(shardShare(files, { k: 2, n: 3 })).toEqual(['img-01.tif', 'img-04.tif', 'img-07.tif', 'img-10.tif']);
  });
});

describe('combining partial results', () => {
  const folderFiles = ['a.tif', 'b.tif', 'c.tif'];
  const recipe = defaultRecipe();
  const result = (file: string) => ({ file, status: 'failed' as const, reason: 'x', image: null, calibration: null, measurements: [], summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] }, notes: [] });
  const partial = (k: number, n: number, over: Partial<PartialResult> = {}): NamedPartial => {
    const p: PartialResult = {
      format: PARTIAL_FORMAT, schemaVersion: 1, programVersion: '0.1.0', recipe, recipeHash: 'a'.repeat(64), shard: { k, n }, folderFiles,
      figuresDir: null, results: shardShare(folderFiles, { k, n }).map(result), createdIso: '2026-01-01T00:00:00Z', ...over,
    };
    return { source: `part-${k}.json`, partial: readPartial(JSON.parse(JSON.stringify(p)), `part-${k}.json`) };
  };

  test('every shard once: the results in folder order', () => {
    const c = combinePartials([partial(2, 2), partial(1, 2)]);
    expect(c.results.map((r) => r.file)).toEqual(folderFiles);
  });

  test('a missing shard is named, never skipped', () => {
    expect(() => combinePartials([partial(1, 3), partial(3, 3)])).toThrow(/shard 2 of 3 is missing \(given: 1, 3\)/);
  });

  test('a shard given twice is named with both files', () => {
    expect(() => combinePartials([partial(1, 2), { ...partial(1, 2), source: 'copy.json' }, partial(2, 2)])).toThrow(/shard 1 of 2 is given twice: part-1.json and copy.json/);
  });

  test('different recipes, program versions and folder contents are refused, naming the mismatch', () => {
    const other = { ...recipe, name: 'other recipe', version: 3 };
    expect(() => combinePartials([partial(1, 2), partial(2, 2, { recipe: other, recipeHash: 'b'.repeat(64) })])).toThrow(/part-2.json was made with recipe 'other recipe' version 3 \(recipe hash bbbbbbbbbbbb\), part-1.json with recipe 'default' version 1/);
    expect(() => combinePartials([partial(1, 2), partial(2, 2, { programVersion: '0.2.0' })])).toThrow(/part-2.json was made by program version 0.2.0, part-1.json by 0.1.0/);
    expect(() => combinePartials([partial(1, 2), partial(2, 2, { folderFiles: ['a.tif', 'b.tif'], results: [result('b.tif')] })])).toThrow(/part-2.json saw 2 images in the batch folder, part-1.json saw 3 \("c.tif" is in one list only\)/);
    expect(() => combinePartials([partial(1, 2), partial(2, 3)])).toThrow(/every shard of one batch has the same N/);
  });

  test('a shard without the results of all its files is refused', () => {
    expect(() => combinePartials([partial(1, 2, { results: [result('a.tif')] }), partial(2, 2)])).toThrow(/part-1.json \(shard 1 of 2\) has no result for 1 of its files \(first: "c.tif"\)/);
  });

  test('a file that is not a partial result is named', () => {
    expect(() => readPartial({ schemaVersion: 1 }, 'state.json')).toThrow(/state.json is not a partial batch result/);
  });
});

// End to end, as a facility would run it: the built command line, three shards started by GNU
// parallel writing into one shared output folder, then merge; compared file by file with a
// single run of the same batch. CI installs GNU parallel (.ci/run) and sets
// STRATAMETER_REQUIRE_PARALLEL=1, so there the test cannot be skipped.
const hasParallel = spawnSync('parallel', ['--version'], { encoding: 'utf8' }).status === 0;
if (!hasParallel && process.env.STRATAMETER_REQUIRE_PARALLEL === '1') throw new Error('GNU parallel is required here (apt-get install parallel)');

describe.skipIf(!hasParallel)('three shards through GNU parallel, merged, equal a single run', () => {
  let dir = '';
  const bin = join(process.cwd(), 'bin', 'stratameter.mjs');
  const run = (args: string[]) => spawnSync(process.execPath, [bin, ...args], { encoding: 'utf8' });

  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'stratameter-shards-'));
    await writeFile(join(dir, 'recipe.json'), JSON.stringify({ schemaVersion: 1, name: 'tactoid fringes', area: { kind: 'whole', infoStripPx: 0 }, measurements: [{ tool: 'spectrum', topK: 2 }], outputs: { csv: true, json: true, figures: true, zip: false } }));
    const folder = join(dir, 'images');
    await mkdir(folder);
    // seven fringe images (periods 12–20 px, 0.05 nm/px) and one without a pixel size, which fails in its shard as in the single run
    const r = rng(20);
    for (let i = 0; i < 8; i++) {
      const size = 192;
      const periodPx = 12 + 8 * r();
      const a = Math.PI * r();
      const data = new Uint16Array(size * size);
      for (let y = 0; y < size; y++) for (let x = 0; x < size; x++) data[y * size + x] = Math.round(30000 + 6000 * Math.cos((2 * Math.PI * (Math.cos(a) * x - Math.sin(a) * y)) / periodPx) + 4000 * (r() - 0.5));
      const resolution = i === 5 ? undefined : { x: 1e7 / 0.05, unit: 'cm' as const };
      await writeFile(join(folder, `tactoid ${i + 1}.tif`), encodeTiff({ width: size, height: size, data, resolution }));
    }
  }, 60_000);
  afterAll(async () => {
    if (dir) await rm(dir, { recursive: true, force: true });
  });

  test('batch --shard through parallel, then merge: the same CSV, summary, JSON (but its times) and figures', async () => {
    const recipe = join(dir, 'recipe.json');
    const images = join(dir, 'images');
    const single = run(['batch', images, '--recipe', recipe, '--out', join(dir, 'single', 'results.csv'), '--jobs', '1']);
    expect(single.status, single.stderr).toBe(1); // the image without a pixel size
    // GNU parallel's exit status is the number of failed jobs: shard 3 holds the image without a pixel size
    const par = spawnSync('parallel', ['--will-cite', process.execPath, bin, 'batch', images, '--recipe', recipe, '--out', join(dir, 'shards', 'results.csv'), '--jobs', '1', '--shard', '{}/3', ':::', '1', '2', '3'], { encoding: 'utf8' });
    expect(par.status, par.stderr).toBe(1);
    for (const k of [1, 2, 3]) expect(par.stdout).toContain(`results.shard-${k}-of-3.json`);
    const merged = run(['merge', join(dir, 'shards'), '--out', join(dir, 'merged', 'results.csv')]);
    expect(merged.status, merged.stderr).toBe(1);
    expect(merged.stdout).toMatch(/merged 3 partial results of 3 shards: 8 images; 7 ok, 1 failed/);
    expect(merged.stderr).toMatch(/failed: tactoid 6.tif: no pixel size/);

    for (const f of ['results.csv', 'results-summary.csv']) {
      expect(await readFile(join(dir, 'merged', f), 'utf8'), f).toBe(await readFile(join(dir, 'single', f), 'utf8'));
    }
    // only the times differ: the export's and each measurement's createdIso
    const noTimes = (text: string) => JSON.parse(text, (k, v) => (k === 'createdIso' ? 'T' : v));
    const a = noTimes(await readFile(join(dir, 'single', 'results.json'), 'utf8'));
    const b = noTimes(await readFile(join(dir, 'merged', 'results.json'), 'utf8'));
    expect(b).toEqual(a);
    expect(a.results).toHaveLength(8);
    expect(a.results.filter((x: { status: string }) => x.status === 'ok')).toHaveLength(7);
    const figures = (await readdir(join(dir, 'single', 'figures'))).sort();
    expect(figures.filter((f) => f.endsWith('.tif.png') || f.includes('.tif~'))).toHaveLength(7);
    expect((await readdir(join(dir, 'merged', 'figures'))).sort()).toEqual(figures);
    for (const f of figures) expect(Buffer.compare(await readFile(join(dir, 'merged', 'figures', f)), await readFile(join(dir, 'single', 'figures', f))), f).toBe(0);

    // resume applies per shard: a second run of shard 2 finds its files finished
    const again = run(['batch', images, '--recipe', recipe, '--out', join(dir, 'shards', 'results.csv'), '--jobs', '1', '--shard', '2/3']);
    expect(again.status, again.stderr).toBe(0);
    expect(again.stdout).toMatch(/shard 2 of 3: 3 images: 0 processed, 3 skipped/);

    // a missing shard is named, and bad shard specifications get a clear message
    const two = run(['merge', join(dir, 'shards', 'results.shard-1-of-3.json'), join(dir, 'shards', 'results.shard-3-of-3.json'), '--out', join(dir, 'm2', 'results.csv')]);
    expect(two.status).toBe(2);
    expect(two.stderr).toMatch(/shard 2 of 3 is missing \(given: 1, 3\)/);
    expect(existsSync(join(dir, 'm2', 'results.csv'))).toBe(false);
    for (const [spec, message] of [
      ['0/3', /K must be at least 1/],
      ['4/3', /shard 4 is past the last shard 3/],
      ['a/b', /--shard must be K\/N/],
    ] as const) {
      const bad = run(['batch', images, '--shard', spec]);
      expect(bad.status).toBe(2);
      expect(bad.stderr).toMatch(message);
    }
  }, 240_000);
}, 300_000);
