/**
 * Speed of the power spectrum and spot finding (one thread), median of repeated runs.
 * `npm run bench:spectrum`. Target: 1024² power spectrum + spot finding well under 100 ms.
 */
import { makeGreyImage } from '../src/image/grey-image';
import { loadCv } from '../src/image/cv';
import { measureRegion } from '../src/measure/measure-region';
import { findSpots, powerSpectrum } from '../src/measure/spectrum';

function rng(seed: number): () => number {
  let s = seed;
  return () => (s = (s * 16807) % 2147483647) / 2147483647;
}

function image(n: number) {
  const r = rng(42);
  const data = new Float32Array(n * n);
  for (let y = 0; y < n; y++) {
    for (let x = 0; x < n; x++) {
      const t1 = (2 * Math.PI * (0.9 * x - 0.3 * y)) / 9.37;
      const t2 = (2 * Math.PI * (0.2 * x + 0.95 * y)) / 6.1;
      data[y * n + x] = 100 + 5 * Math.cos(t1) + 3 * Math.cos(t2) + 10 * (r() - 0.5);
    }
  }
  return makeGreyImage(n, n, data);
}

function cpuMs(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  return s[s.length >> 1];
}

async function main(): Promise<void> {
  await loadCv(); // loading opencv.js (≈ 0.2 s) is not part of the timing
  // CPU time of this process (process.cpuUsage) is what one core spends; wall time also counts
  // waiting for a core when the machine is shared.
  console.log('| region | power spectrum, CPU ms | spot finding, CPU ms | spectrum + spots, CPU ms | same, wall ms | measureRegion incl. refinement, CPU ms | spots |');
  console.log('|---:|---:|---:|---:|---:|---:|---:|');
  for (const [n, reps] of [
    [1024, 11],
    [2048, 5],
  ]) {
    const img = image(n);
    const tp: number[] = [];
    const tf: number[] = [];
    const tm: number[] = [];
    const wall: number[] = [];
    let spots = 0;
    for (let i = 0; i < reps + 1; i++) {
      const w0 = performance.now();
      const t0 = cpuMs();
      const s = await powerSpectrum(img);
      const t1 = cpuMs();
      const found = findSpots(s);
      const t2 = cpuMs();
      const w1 = performance.now();
      const m = await measureRegion(img, null);
      const t3 = cpuMs();
      spots = found.spots.length;
      void m;
      if (i === 0) continue; // warm-up
      tp.push(t1 - t0);
      tf.push(t2 - t1);
      tm.push(t3 - t2);
      wall.push(w1 - w0);
    }
    const sum = tp.map((t, i) => t + tf[i]);
    console.log(
      `| ${n}² | ${median(tp).toFixed(1)} | ${median(tf).toFixed(1)} | ${median(sum).toFixed(1)} | ${median(wall).toFixed(1)} | ${median(tm).toFixed(1)} | ${spots} |`,
    );
  }
}

main().catch((e) => {
  console.error(e);
  process.exit(1);
});
