/**
 * Speed of the 2D spectrum against numpy's real FFT, timed side by side in one run.
 *
 *   npm run bench:spectrum              1024² and 2048², 15 rounds each
 *   npm run bench:spectrum -- --rounds 31
 *
 * Each round times, one after the other on the same float32 image: numpy.fft.rfft2 (in a python3
 * process kept open for the run, timed there with perf_counter around the call alone), our
 * transform (realDft2d, power output), our whole powerSpectrum (mean removal, Hann window,
 * transform, power) and opencv.js's dft (the transform used before, with the power taken from
 * its output). The table gives medians over the rounds and the ratios to numpy of the same run;
 * a shared machine slows all of them alike. Target: powerSpectrum ≤ 1.5 × numpy's rfft2.
 * When python3 or numpy is missing, the reference columns say so and our times are still printed.
 * A second table times spot finding and the whole measureRegion (CPU ms, one thread).
 */
import { spawn, spawnSync, type ChildProcessWithoutNullStreams } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { createInterface, type Interface } from 'node:readline';
import { makeGreyImage } from '../src/image/grey-image';
import { wrapCv } from '../src/image/cv';
import { loadFft, realDft2d } from '../src/image/fft';
import { measureRegion } from '../src/measure/measure-region';
import { findSpots, powerSpectrum } from '../src/measure/spectrum';
import { rng } from '../testing/random';
import { integerOption } from '../testing/bench-options';

const rounds = integerOption('rounds', 15);

/** Two crossed lattices with noise, float32. */
function image(n: number): Float32Array {
  const r = rng(42);
  const data = new Float32Array(n * n);
  for (let y = 0; y < n; y++) {
    for (let x = 0; x < n; x++) {
      const t1 = (2 * Math.PI * (0.9 * x - 0.3 * y)) / 9.37;
      const t2 = (2 * Math.PI * (0.2 * x + 0.95 * y)) / 6.1;
      data[y * n + x] = 100 + 5 * Math.cos(t1) + 3 * Math.cos(t2) + 10 * (r() - 0.5);
    }
  }
  return data;
}

const median = (v: number[]) => [...v].sort((a, b) => a - b)[v.length >> 1];
const cpuMs = () => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
};

/** A python3 process that loads an n × n float32 file and times one numpy.fft.rfft2 per line read. */
class NumpyTimer {
  private constructor(private readonly child: ChildProcessWithoutNullStreams, private readonly lines: Interface, readonly version: string) {}

  /** Starts the reference, or gives the reason it cannot run. */
  static start(file: string, n: number): NumpyTimer | string {
    // OPENBLAS_* only tune BLAS kernels (not the FFT); unset so an old override cannot slow numpy
    const env = { ...process.env };
    delete env.OPENBLAS_CORETYPE;
    delete env.OPENBLAS_L2_SIZE;
    const probe = spawnSync('python3', ['-c', 'import numpy; print(numpy.__version__)'], { encoding: 'utf8', env });
    if (probe.error) return `python3 not found (${probe.error.message})`;
    if (probe.status !== 0) return 'numpy is missing (python3 -c "import numpy" failed)';
    const code = [
      'import sys, time, numpy as np',
      `a = np.fromfile(${JSON.stringify(file)}, dtype=np.float32).reshape(${n}, ${n})`,
      'np.fft.rfft2(a)',
      'for line in sys.stdin:',
      '    t = time.perf_counter(); r = np.fft.rfft2(a); t = time.perf_counter() - t',
      '    print(f"{t * 1000:.4f} {r.dtype}", flush=True)',
    ].join('\n');
    const child = spawn('python3', ['-c', code], { env });
    return new NumpyTimer(child, createInterface({ input: child.stdout }), probe.stdout.trim());
  }

  /** One timed rfft2, ms, and the output's dtype. */
  time(): Promise<{ ms: number; dtype: string }> {
    return new Promise((resolve, reject) => {
      const stopped = (code: number | null) => reject(new Error(`python3 stopped (exit ${code})`));
      this.child.once('exit', stopped);
      this.lines.once('line', (l) => {
        this.child.off('exit', stopped);
        const [ms, dtype] = l.split(' ');
        resolve({ ms: Number(ms), dtype });
      });
      this.child.stdin.write('go\n');
    });
  }

  stop(): void {
    this.child.stdin.end();
  }
}

async function main(): Promise<void> {
  await loadFft();
  const { cv } = await wrapCv(createRequire(import.meta.url)('@techstark/opencv-js'));
  const dir = mkdtempSync(join(tmpdir(), 'stratameter-bench-spectrum-'));
  console.log(`spectrum benchmark: ${rounds} rounds per size, medians; load average ${loadavg().map((l) => l.toFixed(1)).join(' ')} at the start\n`);
  console.log('| size | numpy rfft2 ms | realDft2d (power) ms | powerSpectrum ms | opencv.js dft + power ms | realDft2d / numpy | powerSpectrum / numpy | opencv.js / numpy |');
  console.log('|---:|---:|---:|---:|---:|---:|---:|---:|');
  let reference = '';
  try {
    for (const n of [1024, 2048]) {
      const data = image(n);
      const file = join(dir, `image-${n}.f32`);
      writeFileSync(file, new Uint8Array(data.buffer));
      const numpy = NumpyTimer.start(file, n);
      if (typeof numpy === 'string') reference = numpy;
      else reference = `numpy ${numpy.version}, rfft2 on float32 input`;
      const img = makeGreyImage(n, n, data);
      const power = new Float32Array(n * n);
      const t: Record<'np' | 'ours' | 'ps' | 'cv', number[]> = { np: [], ours: [], ps: [], cv: [] };
      let dtype = '';
      for (let round = 0; round <= rounds; round++) {
        const np = typeof numpy === 'string' ? null : await numpy.time();
        let t0 = performance.now();
        await realDft2d(n, n, (m, j) => {
          m.set(data.subarray(j * n, (j + 1) * n));
        }, { kind: 'power', out: power });
        const ours = performance.now() - t0;
        t0 = performance.now();
        await powerSpectrum(img);
        const ps = performance.now() - t0;
        t0 = performance.now();
        const mat = new cv.Mat(n, n, cv.CV_32F);
        const out = new cv.Mat();
        (mat.data32F as Float32Array).set(data);
        cv.dft(mat, out, cv.DFT_COMPLEX_OUTPUT);
        const c = out.data32F as Float32Array;
        for (let k = 0; k < n * n; k++) power[k] = c[2 * k] * c[2 * k] + c[2 * k + 1] * c[2 * k + 1];
        mat.delete();
        out.delete();
        const cvMs = performance.now() - t0;
        if (round === 0) continue; // warm-up
        if (np) {
          t.np.push(np.ms);
          dtype = np.dtype;
        }
        t.ours.push(ours);
        t.ps.push(ps);
        t.cv.push(cvMs);
      }
      if (typeof numpy !== 'string') numpy.stop();
      const npMs = t.np.length ? median(t.np) : NaN;
      const ratio = (v: number[]) => (Number.isFinite(npMs) ? `${(median(v) / npMs).toFixed(2)}×` : 'no reference');
      console.log(`| ${n}² | ${Number.isFinite(npMs) ? npMs.toFixed(1) : 'n/a'} | ${median(t.ours).toFixed(1)} | ${median(t.ps).toFixed(1)} | ${median(t.cv).toFixed(1)} | ${ratio(t.ours)} | ${ratio(t.ps)} | ${ratio(t.cv)} |`);
      if (dtype) reference += ` (output ${dtype})`;
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  console.log(`\nreference: ${reference}; load average ${loadavg().map((l) => l.toFixed(1)).join(' ')} at the end.`);
  console.log('realDft2d: the transform alone (the full power array in DFT order, as the spectrum tools use it); powerSpectrum: mean removal, window, transform and power. Wall-clock ms, one thread each (numpy\'s FFT is single-threaded).');

  console.log('\n| region | spot finding, CPU ms | measureRegion incl. refinement and budgets, CPU ms | spots |');
  console.log('|---:|---:|---:|---:|');
  for (const [n, reps] of [
    [1024, 7],
    [2048, 3],
  ]) {
    const img = makeGreyImage(n, n, image(n));
    const tf: number[] = [];
    const tm: number[] = [];
    let spots = 0;
    for (let i = 0; i <= reps; i++) {
      const s = await powerSpectrum(img);
      const t0 = cpuMs();
      spots = findSpots(s).spots.length;
      const t1 = cpuMs();
      await measureRegion(img, null);
      const t2 = cpuMs();
      if (i === 0) continue;
      tf.push(t1 - t0);
      tm.push(t2 - t1);
    }
    console.log(`| ${n}² | ${median(tf).toFixed(1)} | ${median(tm).toFixed(1)} | ${spots} |`);
  }
}

main().catch((e) => {
  console.error(e);
  process.exit(1);
});
