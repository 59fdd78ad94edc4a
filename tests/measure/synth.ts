/** Synthetic test images with known truth (shared by the measure tests). */
import { type Calibration, type GreyImage, makeGreyImage } from '../../src/image/grey-image';

/** Park–Miller minimal standard generator, seeded (reproducible). */
export function rng(seed: number): () => number {
  let s = seed % 2147483647;
  if (s <= 0) s += 2147483646;
  return () => (s = (s * 16807) % 2147483647) / 2147483647;
}

/** Standard normal deviates by Box–Muller. */
export function gaussian(rand: () => number): () => number {
  return () => Math.sqrt(-2 * Math.log(rand())) * Math.cos(2 * Math.PI * rand());
}

/** A plane wave: period in px, fringe-normal direction angleDeg counter-clockwise from +x as shown (y up). */
export interface Wave {
  periodPx: number;
  angleDeg: number;
  amplitude: number;
  phase?: number;
}

/** Fringes plus white Gaussian noise of the given standard deviation, mean level 100. */
export function fringeImage(
  width: number,
  height: number,
  waves: Wave[],
  noiseSd: number,
  seed = 1,
  calibration: Calibration | null = null,
): GreyImage {
  const g = gaussian(rng(seed));
  const data = new Float32Array(width * height);
  const ks = waves.map((w) => {
    const a = (w.angleDeg * Math.PI) / 180;
    // Row index grows downwards, so the screen's +y is −row.
    return { kx: Math.cos(a) / w.periodPx, ky: -Math.sin(a) / w.periodPx, amp: w.amplitude, ph: w.phase ?? 0.4 };
  });
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let v = 100;
      for (const k of ks) v += k.amp * Math.cos(2 * Math.PI * (k.kx * x + k.ky * y) + k.ph);
      data[y * width + x] = v + (noiseSd > 0 ? noiseSd * g() : 0);
    }
  }
  return makeGreyImage(width, height, data, { calibration });
}

/**
 * Amorphous-like texture: white Gaussian noise plus "value noise" octaves (Gaussian values on
 * grids of 2, 4, 8… px, bilinearly interpolated, amplitude growing with the cell size), so the
 * power falls with spatial frequency roughly like 1/f² over the octaves: no periodicity at all.
 */
export function colouredNoiseImage(width: number, height: number, seed: number, octaves = 5): GreyImage {
  const g = gaussian(rng(seed));
  const out = new Float32Array(width * height);
  for (let i = 0; i < out.length; i++) out[i] = 100 + g();
  for (let o = 1; o <= octaves; o++) {
    const c = 1 << o;
    const gw = Math.ceil(width / c) + 2;
    const gh = Math.ceil(height / c) + 2;
    const grid = new Float64Array(gw * gh).map(() => g() * c * 0.5);
    const ox = rng(seed * 31 + o)() * c;
    const oy = rng(seed * 17 + o)() * c;
    for (let y = 0; y < height; y++) {
      const gy = (y + oy) / c;
      const y0 = Math.floor(gy);
      const fy = gy - y0;
      for (let x = 0; x < width; x++) {
        const gx = (x + ox) / c;
        const x0 = Math.floor(gx);
        const fx = gx - x0;
        const a = grid[y0 * gw + x0];
        const b = grid[y0 * gw + x0 + 1];
        const d = grid[(y0 + 1) * gw + x0];
        const e = grid[(y0 + 1) * gw + x0 + 1];
        out[y * width + x] += (a * (1 - fx) + b * fx) * (1 - fy) + (d * (1 - fx) + e * fx) * fy;
      }
    }
  }
  return makeGreyImage(width, height, out);
}

/** A manual calibration for tests. */
export function manualCalibration(nmPerPx: number, relUncertainty = 0.02): Calibration {
  return { nmPerPx, source: 'manual', relUncertainty, detail: 'test' };
}
