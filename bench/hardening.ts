/**
 * The hangs, memory bombs and crashes of issue "Hardening", re-run against the current readers:
 * how each ends, how long it takes and the peak memory of the process (each case runs in a child
 * process of its own, so the peak is its own).
 *
 *   npm run bench:hardening
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { zlibSync } from 'fflate';
import { decodeImage } from '../src/image/decode';
import { parseCif } from '../src/diffraction/cif';
import { reconcile } from '../src/diffraction/reconcile';
import { main as cli } from '../src/cli/main';
import { ihdr, writePng } from '../testing/png';
import { CORRUPT_CLASSES } from '../testing/corrupt';
import { syntheticCif } from '../testing/fuzz-seeds';
import { rng } from '../testing/random';

const classBytes = (id: string, seed = 1) => CORRUPT_CLASSES.find((c) => c.id === id)!.make(rng(seed)).bytes;
/** Time spent in the readers alone (making the hostile input is not counted). */
let readerMs = 0;
const outcome = (f: () => unknown): string => {
  const t0 = performance.now();
  try {
    const r = f() as { width?: number; height?: number } | null;
    return `read (${r && typeof r.width === 'number' ? `${r.width} × ${r.height}` : 'ok'})`;
  } catch (e) {
    return `refused: ${(e as Error).message.slice(0, 110)}`;
  } finally {
    readerMs += performance.now() - t0;
  }
};
/** A PNG of zeros declaring the given size, its image data compressed at level 9. */
function zeroPng(side: number, depth: 8 | 16, colourType: number, channels: number): Uint8Array {
  const row = 1 + side * channels * (depth / 8);
  const raw = new Uint8Array(row * side);
  return writePng([{ type: 'IHDR', data: ihdr(side, side, depth, colourType) }, { type: 'IDAT', data: zlibSync(raw, { level: 9 }) }, { type: 'IEND', data: new Uint8Array(0) }]);
}

const CASES: Record<string, { what: string; run(): Promise<string> | string }> = {
  'tile-2^32': { what: 'tiled TIFF, tile declared 2³²−1 px wide', run: () => outcome(() => decodeImage(classBytes('tile-width-2^32-1'), 'tile.tif')) },
  'tile-2^31x1': { what: 'tiled TIFF, tile declared 2³¹ × 1', run: () => outcome(() => decodeImage(classBytes('tile-2^31x1'), 'tile.tif')) },
  'cif-vt': { what: 'structure file with a vertical tab (and form feed, no-break space, U+2028, BOM)', run: () => ['\u000B', '\u000C', '\u00A0', '\u2028', '\uFEFF'].map((c) => outcome(() => parseCif(syntheticCif().replace('_cell_length_a 5', `_cell_length_a${c}5`), { fileName: 'x.cif' }))).join(' / ').slice(0, 150) },
  'cif-100k-symops': { what: 'structure file with 100,000 symmetry operations', run: () => outcome(() => parseCif(syntheticCif().replace(/loop_\n_space_group_symop_operation_xyz\n(('[^']*'\n)+)/, `loop_\n_space_group_symop_operation_xyz\n${"'x,y,z'\n".repeat(100000)}`), { fileName: 'ops.cif' })) },
  'reconcile-10k': {
    what: 'reconcile 10,000 periods against 10,000 lines (period uncertainties 1–11 pm: about 70 pairs each)',
    run: () => {
      const r = rng(5);
      const periods = Array.from({ length: 10000 }, () => ({ periodNm: 0.2 + 5 * r(), uncertaintyNm: 0.001 + 0.01 * r() }));
      const lines = Array.from({ length: 10000 }, (_, i) => ({ dNm: 0.2 + 5 * r(), dUncNm: 0.001 * r(), label: `l${i}` }));
      let rec!: ReturnType<typeof reconcile>;
      outcome(() => (rec = reconcile({ periods }, { lines })));
      return `${rec.pairs.length} pairs, ${rec.unmatchedPeriods.length} periods unmatched`;
    },
  },
  'reconcile-10k-narrow': {
    what: 'reconcile 10,000 periods against 10,000 lines (period uncertainties 0.1–1.1 pm)',
    run: () => {
      const r = rng(6);
      const periods = Array.from({ length: 10000 }, () => ({ periodNm: 0.2 + 5 * r(), uncertaintyNm: 1e-4 + 1e-3 * r() }));
      const lines = Array.from({ length: 10000 }, (_, i) => ({ dNm: 0.2 + 5 * r(), dUncNm: 1e-4 * r(), label: `l${i}` }));
      let rec!: ReturnType<typeof reconcile>;
      outcome(() => (rec = reconcile({ periods }, { lines })));
      return `${rec.pairs.length} pairs, ${rec.unmatchedPeriods.length} periods unmatched`;
    },
  },
  'png-1gib': {
    what: 'PNG of 1 MB whose image data inflates to 1 GiB (16384² RGBA)',
    run: () => {
      const file = zeroPng(16384, 8, 6, 4);
      return `${outcome(() => decodeImage(file, 'bomb.png'))}; file ${(file.length / 2 ** 20).toFixed(1)} MiB`;
    },
  },
  'png-512mib': {
    what: 'PNG of zeros inflating to 512 MiB (16384² 16-bit grey, valid): read',
    run: () => {
      const file = zeroPng(16384, 16, 0, 1);
      return outcome(() => decodeImage(file, 'big.png'));
    },
  },
  'iccp': {
    what: 'PNG with a colour-profile chunk inflating to 1 GiB',
    run: () => {
      const profile = zlibSync(new Uint8Array(2 ** 30), { level: 9 });
      const withProfile = writePng([{ type: 'IHDR', data: ihdr(64, 64, 8, 0) }, { type: 'iCCP', data: concat([new Uint8Array([112, 0, 0]), profile]) }, { type: 'IDAT', data: zlibSync(new Uint8Array(64 * 65)) }, { type: 'IEND', data: new Uint8Array(0) }]);
      return `${outcome(() => decodeImage(withProfile, 'icc.png'))}; file ${(withProfile.length / 2 ** 20).toFixed(1)} MiB`;
    },
  },
  'tiff-predictor-bomb': { what: 'TIFF strips, predictor 2 under Deflate, inflating past their rows', run: () => outcome(() => decodeImage(classBytes('strip-bomb-predictor'), 'strips.tif')) },
  'measure-16384': {
    what: "valid 16384 × 16384 image through 'measure'",
    run: async () => {
      const dir = mkdtempSync(join(tmpdir(), 'hardening-'));
      try {
        const file = join(dir, 'big.png');
        writeFileSync(file, zeroPng(16384, 8, 0, 1));
        let err = '';
        const t0 = performance.now();
        const code = await cli(['measure', file], { out: () => {}, err: (t) => (err += t) });
        readerMs += performance.now() - t0;
        return `exit ${code}: ${err.replace(file, 'big.png').trim().slice(0, 140)}`;
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    },
  },
};

function concat(parts: Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((s, p) => s + p.length, 0));
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

const caseArg = process.argv.indexOf('--case');
if (caseArg >= 0) {
  const c = CASES[process.argv[caseArg + 1]];
  const result = await c.run();
  const ms = readerMs;
  console.log(JSON.stringify({ result, ms, maxRssMiB: process.resourceUsage().maxRSS / 1024 }));
} else {
  console.log('| case | outcome | ms in the reader | peak process memory MiB |');
  console.log('|---|---|---:|---:|');
  for (const [id, c] of Object.entries(CASES)) {
    const p = spawnSync(process.execPath, ['--import', 'tsx', fileURLToPath(import.meta.url), '--case', id], { encoding: 'utf8', timeout: 300_000, maxBuffer: 1 << 24 });
    const line = (p.stdout ?? '').split('\n').find((l) => l.startsWith('{'));
    if (!line) {
      console.log(`| ${c.what} | no result (${p.signal ?? `exit ${p.status}`}: ${(p.stderr ?? '').split('\n').slice(-3).join(' ').slice(0, 120)}) | | |`);
      continue;
    }
    const r = JSON.parse(line) as { result: string; ms: number; maxRssMiB: number };
    console.log(`| ${c.what} | ${r.result.replace(/\|/g, '/')} | ${r.ms.toFixed(0)} | ${r.maxRssMiB.toFixed(0)} |`);
  }
}
