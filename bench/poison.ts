/**
 * One poisoned file among 20: the batch must finish the other 19 and report the poisoned one
 * with its reason, within the per-file limit. Prints a table, one row per kind of poison.
 *
 *   npm run bench:poison                      2 workers, 10 s and 512 MiB per file
 *   npm run bench:poison -- --jobs 1 --limit 5
 *
 * The files (256 × 256 16-bit fringe TIFFs, calibrated) are written to a temporary folder and
 * deleted afterwards. Hang and heap poisons go through bench/poison-deps.ts (the real tools plus
 * a decoder that loops or fills the heap on a marked file); the others are real hostile files
 * read by the real decoder.
 */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { zlibSync } from 'fflate';
import { parseRecipe } from '../src/batch/recipe';
import { runBatch } from '../src/cli/batch';
import { encodeTiff } from '../testing/encode-tiff';
import { ihdr, writePng } from '../testing/png';
import { CORRUPT_CLASSES } from '../testing/corrupt';
import { rng } from '../testing/random';

function option(name: string, fallback: number): number {
  const i = process.argv.indexOf(`--${name}`);
  if (i < 0) return fallback;
  const v = Number(process.argv[i + 1]);
  if (!(v > 0)) throw new Error(`--${name} needs a positive number, got ${process.argv[i + 1]}`);
  return v;
}
const jobs = option('jobs', 2);
const limitS = option('limit', 10);
const memoryMb = option('memory', 512);
const SIZE = 256;
const FILES = 20;
const depsModule = new URL('./poison-deps.ts', import.meta.url).href;

function fringes(seed: number): Uint8Array {
  const r = rng(seed);
  const p = 8 + 8 * r();
  const data = Uint16Array.from({ length: SIZE * SIZE }, (_, i) => 30000 + 8000 * Math.cos((2 * Math.PI * (i % SIZE)) / p) + 2000 * r());
  return encodeTiff({ width: SIZE, height: SIZE, data, resolution: { x: 2e7, unit: 'cm' } });
}

const classBytes = (id: string) => CORRUPT_CLASSES.find((c) => c.id === id)!.make(rng(1)).bytes;
const POISONS: { kind: string; ext: string; bytes: () => Uint8Array }[] = [
  { kind: 'decoder hangs', ext: 'tif', bytes: () => new TextEncoder().encode('POISON-HANG') },
  { kind: 'decoder fills the heap', ext: 'tif', bytes: () => new TextEncoder().encode('POISON-HEAP') },
  { kind: 'tile 2³²−1 px wide', ext: 'tif', bytes: () => classBytes('tile-width-2^32-1') },
  { kind: 'strips inflating past their rows', ext: 'tif', bytes: () => classBytes('strip-bomb-predictor') },
  { kind: 'PNG inflating to over 1 GiB', ext: 'png', bytes: () => writePng([{ type: 'IHDR', data: ihdr(16384, 16384, 8, 6) }, { type: 'IDAT', data: zlibSync(new Uint8Array(2 ** 20), { level: 9 }) }, { type: 'IEND', data: new Uint8Array(0) }]) },
  { kind: 'PNG with a bad CRC', ext: 'png', bytes: () => classBytes('crc') },
];

const rows: string[] = [];
console.log(`poisoned batch: ${FILES} files of ${SIZE} × ${SIZE} px (file 10 poisoned), ${jobs} worker(s), per-file limits ${limitS} s and ${memoryMb} MiB`);
for (const poison of POISONS) {
  const dir = await mkdtemp(join(tmpdir(), 'poison-'));
  try {
    const names: string[] = [];
    for (let i = 0; i < FILES; i++) {
      const name = i === 9 ? `f${String(i).padStart(2, '0')}-poisoned.${poison.ext}` : `f${String(i).padStart(2, '0')}.tif`;
      names.push(name);
      await writeFile(join(dir, name), i === 9 ? poison.bytes() : fringes(i + 1));
    }
    const recipe = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 }, measurements: [{ tool: 'spectrum', topK: 3 }] });
    const t0 = performance.now();
    let reportedAt = NaN;
    const io = {
      out: () => {},
      err: (t: string) => {
        if (t.includes('poisoned') && /failed|ok/.test(t) && Number.isNaN(reportedAt)) reportedAt = (performance.now() - t0) / 1000;
      },
    };
    const out = await runBatch({ folder: dir, recipe, outCsv: join(dir, 'out', 'results.csv'), jobs, depsModule, fileTimeLimitS: limitS, fileMemoryLimitMb: memoryMb }, io);
    const poisoned = out.results.find((r) => r.file.includes('poisoned'))!;
    const others = out.results.filter((r) => r !== poisoned);
    rows.push(
      `| ${poison.kind} | ${out.total} | ${others.filter((r) => r.status === 'ok').length} of ${others.length} | ${poisoned.status} | ${(poisoned.reason ?? '').replace(/\|/g, '/').slice(0, 150)} | ${reportedAt.toFixed(1)} | ${out.seconds.toFixed(1)} |`,
    );
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
console.log('| poison | files | others finished ok | poisoned file | reason given | poisoned reported at s | batch s |');
console.log('|---|---:|---:|---|---|---:|---:|');
for (const r of rows) console.log(r);
