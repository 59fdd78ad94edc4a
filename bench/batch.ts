/**
 * Batch throughput and worker memory: seeded synthetic 2048 × 2048 16-bit TIFFs (lamellar
 * fringes of clay tactoids in a polymer film, with shot-like noise) through a typical recipe,
 * with 1 and 2 worker threads.
 *
 *   npm run bench:batch                 50 files
 *   npm run bench:batch -- --files 10   fewer files
 *   npm run bench:batch -- --size 1024  smaller images
 *   npm run bench:batch -- --repeat 5   rounds of one run per worker count (1, 2, 1, 2 …; medians count)
 *
 * The files are written to a temporary folder and deleted afterwards.
 */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseRecipe } from '../src/batch/recipe';
import { runBatch } from '../src/cli/batch';
import { encodeTiff } from '../testing/encode-tiff';
import { rng } from '../testing/random';
import { integerOption } from '../testing/bench-options';


const files = integerOption('files', 50);
const size = integerOption('size', 2048);
const repeats = integerOption('repeat', 3);
const NM_PER_PX = 0.05;


/** One synthetic micrograph: a tactoid of fringes (period 1.0–1.4 nm) in an amorphous matrix. */
function micrograph(seed: number): Uint16Array {
  const r = rng(seed);
  const periodPx = (1.0 + 0.4 * r()) / NM_PER_PX;
  const angle = Math.PI * r();
  const fx = Math.cos(angle) / periodPx;
  const fy = -Math.sin(angle) / periodPx;
  const cx = size * (0.3 + 0.4 * r());
  const cy = size * (0.3 + 0.4 * r());
  const sigma = size * 0.25;
  const out = new Uint16Array(size * size);
  const row = new Float64Array(size);
  for (let y = 0; y < size; y++) {
    const gy = Math.exp(-((y - cy) ** 2) / (2 * sigma * sigma));
    for (let x = 0; x < size; x++) row[x] = Math.exp(-((x - cx) ** 2) / (2 * sigma * sigma)) * gy;
    for (let x = 0; x < size; x++) {
      const fringe = 6000 * row[x] * Math.cos(2 * Math.PI * (fx * x + fy * y));
      const noise = (r() + r() + r() - 1.5) * 5000;
      out[y * size + x] = Math.max(0, Math.min(65535, Math.round(28000 + fringe + noise)));
    }
  }
  return out;
}

const mib = (b: number) => (b / 2 ** 20).toFixed(0);

async function main(): Promise<void> {
  const dir = await mkdtemp(join(tmpdir(), 'stratameter-bench-batch-'));
  try {
    const t0 = performance.now();
    for (let i = 0; i < files; i++) {
      const tiff = encodeTiff({ width: size, height: size, data: micrograph(1000 + i), resolution: { x: 1e7 / NM_PER_PX, unit: 'cm' } });
      await writeFile(join(dir, `tactoid-${String(i).padStart(3, '0')}.tif`), tiff);
    }
    const genS = (performance.now() - t0) / 1000;
    const recipe = parseRecipe({
      schemaVersion: 1,
      name: 'bench: tactoid fringes',
      area: { kind: 'whole', infoStripPx: 0 },
      measurements: [{ tool: 'spectrum', topK: 3 }],
      acceptance: { periodRangeNm: [0.5, 3] },
      outputs: { csv: true, json: true, figures: false, zip: false },
    });
    console.log(`batch benchmark: ${files} files of ${size} × ${size} px, 16-bit TIFF (${((size * size * 2) / 2 ** 20).toFixed(0)} MiB each), generated in ${genS.toFixed(1)} s; ${availableParallelism()} cores`);
    console.log('recipe: metadata calibration, whole image, spectrum top 3, period range 0.5–3 nm; no figures\n');
    // Timed runs alternate 1, 2, 1, 2 … workers; medians of the rounds count, and each round's own
    // ratio (two runs minutes apart at most) is shown too, so that other work on a shared machine
    // disturbs the comparison less. Retained memory needs a forced full
    // collection in each worker, which would itself cost time, so it is measured in one extra,
    // untimed run per worker count.
    interface Best { rate: number; cpuPerImage: number; out: Awaited<ReturnType<typeof runBatch>> }
    const best = new Map<number, Best>();
    const load0 = loadavg();
    const allRates = new Map<number, number[]>();
    const cpuAll = new Map<number, number[]>();
    for (let rep = 0; rep < repeats; rep++) {
      for (const jobs of [1, 2]) {
        const cpu0 = process.cpuUsage();
        const out = await runBatch(
          { folder: dir, recipe, outCsv: join(dir, `out-${jobs}-${rep}`, 'results.csv'), jobs },
          { out: () => {}, err: () => {} },
        );
        const cpu = process.cpuUsage(cpu0);
        // CPU time of the whole process (all threads), start-up included, per processed image
        const cpuPerImage = (cpu.user + cpu.system) / 1e6 / out.processed;
        const rate = out.processed / (out.seconds - out.startupSeconds);
        cpuAll.set(jobs, [...(cpuAll.get(jobs) ?? []), cpuPerImage]);
        allRates.set(jobs, [...(allRates.get(jobs) ?? []), rate]);
        if (rate > (best.get(jobs)?.rate ?? 0)) best.set(jobs, { rate, cpuPerImage, out });
        console.error(`  run ${rep + 1}/${repeats}, ${jobs} worker(s): ${rate.toFixed(3)} images/s (load ${loadavg()[0].toFixed(1)})`);
      }
    }
    const memory = new Map<number, Awaited<ReturnType<typeof runBatch>>>();
    for (const jobs of [1, 2]) {
      memory.set(jobs, await runBatch({ folder: dir, recipe, outCsv: join(dir, `out-${jobs}-memory`, 'results.csv'), jobs, measureRetained: true }, { out: () => {}, err: () => {} }));
    }
    const median = (xs: number[]) => {
      const s = [...xs].sort((a, b) => a - b);
      return s.length % 2 ? s[s.length >> 1] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
    };
    const roundRatios = allRates.get(2)!.map((r, i) => r / allRates.get(1)![i]);
    console.log(`| workers | rounds | images/s, median | speed-up of the medians | speed-up in each round (2 workers / 1 worker, same round) | median of the rounds' speed-ups | CPU s per image, median |`);
    console.log('|---:|---:|---:|---:|---:|---:|---:|');
    for (const jobs of [1, 2]) {
      const m = median(allRates.get(jobs)!);
      const m1 = median(allRates.get(1)!);
      console.log(`| ${jobs} | ${repeats} | ${m.toFixed(2)} | ${(m / m1).toFixed(2)}× | ${jobs === 2 ? roundRatios.map((r) => r.toFixed(2)).join(', ') : ''} | ${jobs === 2 ? `${median(roundRatios).toFixed(2)}×` : ''} | ${median(cpuAll.get(jobs)!).toFixed(2)} |`);
    }
    console.log('');
    const base = best.get(1)!.rate;
    const withStartup = (jobs: number) => best.get(jobs)!.out.processed / best.get(jobs)!.out.seconds;
    console.log('| workers | files | ok | with a period | wall s (best run) | start-up s | images/s, each run | images/s, best | speed-up (best) | images/s with start-up (best run) | speed-up with start-up | CPU s per image, each run | peak MiB per worker | retained MiB after 3rd file → after last | files per worker |');
    console.log('|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|');
    for (const jobs of [1, 2]) {
      const { rate, out } = best.get(jobs)!;
      const ok = out.results.filter((r) => r.status === 'ok').length;
      const found = out.results.filter((r) => r.summary.topPeriods.length > 0).length;
      const mem = memory.get(jobs)!;
      const retained = mem.workerRetainedBytes.map((r) => `${mib(r.afterThird)} → ${mib(r.afterLast)}`).join(' / ');
      console.log(
        `| ${jobs} | ${out.processed} | ${ok} | ${found} | ${out.seconds.toFixed(1)} | ${out.startupSeconds.toFixed(1)} | ${allRates.get(jobs)!.map((r) => r.toFixed(2)).join(', ')} | ${rate.toFixed(2)} | ${(rate / base).toFixed(2)}× | ${withStartup(jobs).toFixed(2)} | ${(withStartup(jobs) / withStartup(1)).toFixed(2)}× | ${cpuAll.get(jobs)!.map((c) => c.toFixed(2)).join(', ')} | ${mem.workerPeakBytes.map(mib).join(' / ')} | ${retained} | ${out.workerFiles.join(' / ')} |`,
      );
    }
    console.log(`\nload average (1, 5, 15 min) at the start: ${load0.map((l) => l.toFixed(1)).join(' ')}; at the end: ${loadavg().map((l) => l.toFixed(1)).join(' ')} (other processes on the machine lower the speed-up; re-measure on an idle machine)`);
    console.log('images/s: files over the wall time after the last worker was ready (thread started, its modules and the transform engine loaded); with start-up: over the whole wall time. Each worker reuses its file, pixel and spectrum buffers from file to file, so the garbage collector has little to do.');
    console.log('CPU s per image: user + system time of the whole process (all worker threads, start-up included) per image; equal for 1 and 2 workers means the work parallelises without overhead, so on an otherwise idle 2-core machine the speed-up approaches 2×.');
    console.log('Peak and retained memory come from one further run per worker count. Peak: V8 heap total + external (incl. the WebAssembly memory of the transform engine) of each worker isolate, sampled after every file.');
    console.log('Retained: heap used + external after a forced full garbage collection; equal after the 3rd and the last file means no growth with the number of files.');
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

await main();
