/**
 * Peak memory of opening an 8192 × 8192 16-bit image and showing its spectrum (Node).
 *
 *   npm run bench:large-image               8192²
 *   npm run bench:large-image -- --size 4096
 *
 * A seeded 16-bit TIFF (lattice fringes and noise) is written to a temporary folder; each case then
 * runs in a fresh process, so its peak resident memory (maxRSS) is its own: open the file, either
 * read whole and decoded (as the app's compute worker does when handed bytes) or decoded strip by strip from
 * a file handle (decodeImageSource: the file is never held whole), build the viewer's pyramid and
 * histogram (as the worker's prepareView), and analyse a region the way the worker does for the
 * Periods panel: analyseRegion (spectrum, spots, each spot's budget), then spectrumView (display picture).
 * Cases: the analysis of the centred 2048² and 4096² regions and of the whole image (averaged over
 * tiles beyond 4096 px a side, as the app does). Target:
 * peak ≤ 4 × raw (raw = width · height · 2 bytes), Node's own ~80 MiB (with tsx) included.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { integerOption } from '../testing/bench-options';

const MiB = 2 ** 20;


/**
 * Peak resident memory of this process, MiB: VmHWM from /proc (Linux; the peak of this process's
 * own memory since it started), else maxRSS (which on Linux would also count the parent's memory
 * at the moment it started this process).
 */
function peakMiB(): number {
  try {
    const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync('/proc/self/status', 'utf8'));
    if (m) return Number(m[1]) / 1024;
  } catch {
    // not Linux
  }
  return process.resourceUsage().maxRSS / 1024;
}

/** The stages of one case, measured in this (child) process. */
async function child(file: string, regionSide: number, opening: 'whole' | 'strips'): Promise<void> {
  const stages: { stage: string; peakMiB: number; heapMiB: number; seconds: number }[] = [];
  const gc = (globalThis as { gc?: () => void }).gc ?? (() => {});
  let t0 = performance.now();
  const mark = (stage: string) => {
    const m = process.memoryUsage();
    stages.push({ stage, peakMiB: peakMiB(), heapMiB: (m.heapUsed + m.external) / MiB, seconds: (performance.now() - t0) / 1000 });
    t0 = performance.now();
  };
  const { decodeImage, decodeImageSource } = await import('../src/image/decode');
  const { closeSync, fstatSync, openSync, readSync } = await import('node:fs');
  const { buildPyramid } = await import('../src/image/pyramid');
  const { greyHistogram } = await import('../src/image/display');
  const { analyseRegion } = await import('../src/measure/measure-region');
  const { spectrumView } = await import('../src/measure/session');
  const { loadFft } = await import('../src/image/fft');
  await loadFft();
  mark('start (Node, modules, transform engine)');
  let image;
  if (opening === 'whole') {
    let bytes: Uint8Array | null = new Uint8Array(readFileSync(file).buffer);
    mark('file read whole');
    image = decodeImage(bytes, 'large.tif');
    mark('decoded (pixels in the file\'s own type)');
    bytes = null;
  } else {
    // positional reads from a file handle: the directories a page at a time, then each strip
    const fd = openSync(file, 'r');
    try {
      const length = fstatSync(fd).size;
      const read = (offset: number, n: number): Uint8Array => {
        const b = new Uint8Array(n);
        for (let at = 0; at < n;) {
          const k = readSync(fd, b, at, n - at, offset + at);
          if (k === 0) throw new Error(`the file ended at byte ${offset + at} of ${length}`);
          at += k;
        }
        return b;
      };
      image = decodeImageSource({ length, read }, 'large.tif');
    } finally {
      closeSync(fd);
    }
    mark('decoded strip by strip (pixels in the file\'s own type)');
  }
  gc();
  const residentMiB = () => process.memoryUsage.rss() / MiB;
  const afterOpen = residentMiB();
  const levels = buildPyramid(image);
  const forHistogram = [image, ...levels].find((l) => l.width * l.height <= 1 << 20) ?? levels[levels.length - 1];
  greyHistogram(forHistogram);
  mark(`pyramid (${levels.length} levels) and histogram`);
  const side = Math.min(regionSide, image.width, image.height);
  const region = { x: (image.width - side) >> 1, y: (image.height - side) >> 1, width: side, height: side };
  // as the compute worker's spectrum call: the region's analysis (spectrum, spots, each spot's
  // budget), then the display picture
  const analysis = await analyseRegion(image, region, { alpha: 0.001 });
  const tiles = (analysis.spectrum as { tiles?: { count: number; widthPx: number } }).tiles;
  mark(`analysis of ${side}² (${tiles ? `averaged over ${tiles.count} tiles of ${tiles.widthPx}²` : 'whole'}; ${analysis.measurement.periodicities.length} periods)`);
  const view = spectrumView(analysis, 1024, 0.001);
  mark('display picture and rings');
  void view;
  process.stdout.write(`${JSON.stringify({ stages, width: image.width, height: image.height, afterOpen, atEnd: residentMiB() })}\n`);
}

async function main(): Promise<void> {
  const childAt = process.argv.indexOf('--child');
  if (childAt >= 0) return child(process.argv[childAt + 1], Number(process.argv[childAt + 2]), process.argv[childAt + 3] === 'whole' ? 'whole' : 'strips');
  const size = integerOption('size', 8192, 256);
  const dir = mkdtempSync(join(tmpdir(), 'stratameter-bench-large-'));
  try {
    const { encodeTiff } = await import('../testing/encode-tiff');
    const { rng } = await import('../testing/random');
    const r = rng(8192);
    const data = new Uint16Array(size * size);
    for (let y = 0; y < size; y++) for (let x = 0; x < size; x++) data[y * size + x] = Math.round(30000 + 4000 * Math.cos((2 * Math.PI * (0.6 * x + 0.8 * y)) / 14.2) + 3000 * (r() - 0.5));
    const file = join(dir, 'large.tif');
    writeFileSync(file, encodeTiff({ width: size, height: size, data, resolution: { x: 1e7 / 0.02, unit: 'cm' } }));
    const rawMiB = (size * size * 2) / MiB;
    console.log(`large-image benchmark: ${size} × ${size} px, 16-bit (raw ${rawMiB.toFixed(0)} MiB, file ${(readFileSync(file).length / MiB).toFixed(0)} MiB); load average ${loadavg()[0].toFixed(1)}\n`);
    console.log('| opening | spectrum region | stage | peak resident MiB (so far) | peak / raw | JS heap + external MiB | stage s |');
    console.log('|---|---|---|---:|---:|---:|---:|');
    const verdicts: string[] = [];
    const cases: { opening: 'whole' | 'strips'; side: number }[] = [
      { opening: 'whole', side: 2048 },
      { opening: 'strips', side: 2048 },
      { opening: 'strips', side: 4096 },
      { opening: 'strips', side: size },
    ];
    for (const { opening, side } of cases) {
      const run = spawnSync(process.execPath, ['--expose-gc', '--import', 'tsx', new URL(import.meta.url).pathname, '--child', file, String(side), opening], { encoding: 'utf8', maxBuffer: 1 << 20 });
      if (run.status !== 0) {
        console.log(`| ${opening} | ${side}² | failed: ${run.stderr.split('\n').find((l) => l.trim()) ?? run.status} | | | | |`);
        continue;
      }
      const out = JSON.parse(run.stdout.trim().split('\n').pop()!) as { stages: { stage: string; peakMiB: number; heapMiB: number; seconds: number }[] };
      for (const s of out.stages) console.log(`| ${opening} | ${side}² | ${s.stage} | ${s.peakMiB.toFixed(0)} | ${(s.peakMiB / rawMiB).toFixed(2)}× | ${s.heapMiB.toFixed(0)} | ${s.seconds.toFixed(2)} |`);
      const peak = Math.max(...out.stages.map((s) => s.peakMiB));
      const o = out as unknown as { afterOpen: number; atEnd: number };
      verdicts.push(`opened ${opening === 'whole' ? 'whole' : 'strip by strip'}, spectrum of ${side}²: peak ${peak.toFixed(0)} MiB = ${(peak / rawMiB).toFixed(2)} × raw (target ≤ 4 ×: ${peak <= 4 * rawMiB ? 'met' : 'not met'}); resident after opening (file bytes, if read whole, released) ${o.afterOpen.toFixed(0)} MiB, at the end ${o.atEnd.toFixed(0)} MiB`);
    }
    console.log(`\n${verdicts.join('\n')}`);
    console.log('Peak resident memory is the process\'s own peak (VmHWM: all memory it touched: Node itself, the file\'s bytes, the pixels in the file\'s own type, the pyramid, the transform engine\'s WebAssembly memory, the spectrum). Each spectrum case runs in a fresh process.');
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

await main();
