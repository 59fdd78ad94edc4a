/**
 * Seeded synthetic stacks of layers with known truth, for the sheet tests and the benchmark.
 * Scenario: clay tactoids (stacks of ≈1 nm silicate layers) dispersed in a polymer film.
 */
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { rng } from '../random';

// The project's seeded uniform generator (Mulberry32), also re-exported for the sheet tests and bench.
export { rng };

/** Standard normal deviate (Box–Muller). */
export function gauss(r: () => number): number {
  const u = Math.max(r(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * r());
}

export interface TrueSheet {
  layers: number;
  periodPx: number;
  /** Position of the first layer centre. */
  firstPx: number;
}

/**
 * A 1D profile: background 1, each layer a dark Gaussian line (σ = lineSigma × period) of depth
 * `depth`, white noise of standard deviation `noise`.
 */
export function syntheticProfile(
  length: number,
  sheets: TrueSheet[],
  opts: { depth?: number; lineSigma?: number; noise?: number; seed?: number } = {},
): Float64Array {
  const depth = opts.depth ?? 0.3;
  const lineSigma = opts.lineSigma ?? 0.25;
  const r = rng(opts.seed ?? 1);
  const out = new Float64Array(length);
  for (let i = 0; i < length; i++) {
    let v = 1;
    for (const s of sheets) {
      const sg = lineSigma * s.periodPx;
      for (let k = 0; k < s.layers; k++) {
        const c = s.firstPx + k * s.periodPx;
        if (Math.abs(i - c) < 5 * sg) v -= depth * Math.exp(-0.5 * ((i - c) / sg) ** 2);
      }
    }
    out[i] = v + (opts.noise ?? 0) * gauss(r);
  }
  return out;
}

export interface ImageSheet {
  layers: number;
  periodPx: number;
  /** Centre of the sheet (px, image coordinates, y down). */
  cx: number;
  cy: number;
  /** Layer-normal direction in degrees, CCW from +x on screen (y up). */
  angleDeg: number;
  /** Length of the sheet along its layers (px). */
  lengthPx: number;
  /** Curvature of the layers (1/px); 0 = flat. */
  curvature?: number;
}

/**
 * An image of sheets on an amorphous background: each layer a dark line of Gaussian profile,
 * ends softened over one period; the background is smoothed noise (amorphous film), plus white noise.
 */
export function syntheticImage(
  width: number,
  height: number,
  sheets: ImageSheet[],
  opts: { depth?: number; lineSigma?: number; noise?: number; amorphous?: number; seed?: number; blurPx?: number } = {},
): GreyImage {
  const depth = opts.depth ?? 0.3;
  const lineSigma = opts.lineSigma ?? 0.25;
  const r = rng(opts.seed ?? 1);
  const data = new Float32Array(width * height);
  data.fill(1);
  for (const s of sheets) {
    const th = (s.angleDeg * Math.PI) / 180;
    // normal in image coordinates (y down): (cos θ, −sin θ); layer direction t = (sin θ, cos θ)
    const nx = Math.cos(th);
    const ny = -Math.sin(th);
    const tx = -ny;
    const ty = nx;
    const kappa = s.curvature ?? 0;
    const half = ((s.layers - 1) * s.periodPx) / 2;
    const sg = lineSigma * s.periodPx;
    const reach = half + 4 * s.periodPx + (kappa * s.lengthPx * s.lengthPx) / 8 + 2;
    const x0 = Math.max(0, Math.floor(s.cx - s.lengthPx / 2 - reach));
    const x1 = Math.min(width - 1, Math.ceil(s.cx + s.lengthPx / 2 + reach));
    const y0 = Math.max(0, Math.floor(s.cy - s.lengthPx / 2 - reach));
    const y1 = Math.min(height - 1, Math.ceil(s.cy + s.lengthPx / 2 + reach));
    for (let y = y0; y <= y1; y++) {
      for (let x = x0; x <= x1; x++) {
        const dx = x - s.cx;
        const dy = y - s.cy;
        const along = dx * tx + dy * ty;
        let across = dx * nx + dy * ny;
        across -= 0.5 * kappa * along * along; // parabolic bend
        const endFade = Math.min(1, Math.max(0, (s.lengthPx / 2 - Math.abs(along)) / s.periodPx));
        if (endFade <= 0) continue;
        let v = 0;
        for (let k = 0; k < s.layers; k++) {
          const c = -half + k * s.periodPx;
          const d = across - c;
          if (Math.abs(d) < 5 * sg) v += Math.exp(-0.5 * (d / sg) ** 2);
        }
        data[y * width + x] -= depth * endFade * v;
      }
    }
  }
  const amorphous = opts.amorphous ?? 0;
  if (amorphous > 0) {
    const a = new Float32Array(width * height);
    for (let i = 0; i < a.length; i++) a[i] = gauss(r);
    const sm = boxBlur(boxBlur(a, width, height, 1), width, height, 1);
    let ss = 0;
    for (let i = 0; i < sm.length; i++) ss += sm[i] * sm[i];
    const scale = amorphous / Math.sqrt(ss / sm.length);
    for (let i = 0; i < data.length; i++) data[i] += scale * sm[i];
  }
  let out: Float32Array = data;
  if (opts.blurPx && opts.blurPx > 0) out = boxBlur(out, width, height, opts.blurPx);
  const noise = opts.noise ?? 0;
  if (noise > 0) for (let i = 0; i < out.length; i++) out[i] += noise * gauss(r);
  return makeGreyImage(width, height, Float32Array.from(out));
}

function boxBlur(src: Float32Array, w: number, h: number, rad: number): Float32Array {
  const tmp = new Float32Array(src.length);
  const out = new Float32Array(src.length);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      let s = 0;
      let c = 0;
      for (let k = -rad; k <= rad; k++) {
        const xx = x + k;
        if (xx >= 0 && xx < w) { s += src[y * w + xx]; c++; }
      }
      tmp[y * w + x] = s / c;
    }
  }
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      let s = 0;
      let c = 0;
      for (let k = -rad; k <= rad; k++) {
        const yy = y + k;
        if (yy >= 0 && yy < h) { s += tmp[yy * w + x]; c++; }
      }
      out[y * w + x] = s / c;
    }
  }
  return out;
}
