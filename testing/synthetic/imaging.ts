/**
 * Image formation for synthetic micrographs with known truth (test-only code).
 *
 * The way a microscope makes contrast, step by step: a specimen intensity (transmitted fraction,
 * mean about 1) is blurred by a Gaussian stand-in for the transfer, scaled by the dose into
 * expected electron counts, counted with Poisson shot noise, optionally spread by the detector's
 * point-spread (which correlates the noise), read out with read noise, gain and offset as integer
 * ADU, and finally clipped at the detector maximum and/or exported as 8-bit grey levels.
 *
 * Everything is seeded through the project's one generator (src/synthetic/random.ts).
 */
import { type GreyImage, makeGreyImage } from '../../src/image/grey-image';
import { gaussian, rng } from '../random';

/** A seeded source of uniform [0, 1) and standard normal deviates. */
export interface Random {
  /** Uniform on [0, 1). */
  uniform: () => number;
  /** Standard normal (mean 0, SD 1). */
  normal: () => number;
}

/**
 * A seeded Random from the project's generator.
 * @param seed any integer
 * @returns uniform and normal deviates sharing one stream
 */
export function makeRandom(seed: number): Random {
  const uniform = rng(seed);
  return { uniform, normal: gaussian(uniform) };
}

/**
 * A number drawn uniformly between lo and hi.
 * @param r the generator; @param lo lower end; @param hi upper end
 * @returns lo + (hi − lo)·U
 */
export function uniformIn(r: Random, lo: number, hi: number): number {
  return lo + (hi - lo) * r.uniform();
}

/**
 * A number drawn log-uniformly between lo > 0 and hi (equal odds per octave).
 * @param r the generator; @param lo lower end (> 0); @param hi upper end
 * @returns lo · (hi/lo)^U
 */
export function logUniform(r: Random, lo: number, hi: number): number {
  if (!(lo > 0 && hi >= lo)) throw new RangeError(`logUniform needs 0 < lo ≤ hi, got ${lo}, ${hi}`);
  return lo * Math.exp(r.uniform() * Math.log(hi / lo));
}

/**
 * An integer drawn uniformly from lo..hi inclusive.
 * @param r the generator; @param lo smallest; @param hi largest
 * @returns the integer
 */
export function intIn(r: Random, lo: number, hi: number): number {
  return lo + Math.min(hi - lo, Math.floor(r.uniform() * (hi - lo + 1)));
}

/**
 * One item drawn from a list, optionally with weights.
 * @param r the generator; @param items the choices; @param weights relative odds (default equal)
 * @returns the chosen item
 */
export function pick<T>(r: Random, items: readonly T[], weights?: readonly number[]): T {
  if (items.length === 0) throw new RangeError('pick needs at least one item');
  const w = weights ?? items.map(() => 1);
  const total = w.reduce((a, b) => a + b, 0);
  let u = r.uniform() * total;
  for (let i = 0; i < items.length; i++) {
    u -= w[i];
    if (u < 0) return items[i];
  }
  return items[items.length - 1];
}

/** Smooth step 0 → 1 for t from 0 to 1 (3t² − 2t³), clamped outside. */
export function smoothstep(t: number): number {
  if (t <= 0) return 0;
  if (t >= 1) return 1;
  return t * t * (3 - 2 * t);
}

/**
 * Sampled, normalised Gaussian kernel.
 * @param sigmaPx standard deviation in px (0: the identity kernel [1])
 * @returns taps −R..R (R = ⌈4σ⌉) summing to 1
 */
export function gaussianKernel(sigmaPx: number): Float64Array {
  if (!(sigmaPx >= 0)) throw new RangeError(`sigmaPx must be ≥ 0, got ${sigmaPx}`);
  if (sigmaPx === 0) return Float64Array.of(1);
  const radius = Math.ceil(4 * sigmaPx);
  const k = new Float64Array(2 * radius + 1);
  let s = 0;
  for (let i = -radius; i <= radius; i++) s += k[i + radius] = Math.exp((-i * i) / (2 * sigmaPx * sigmaPx));
  for (let i = 0; i < k.length; i++) k[i] /= s;
  return k;
}

/**
 * Transfer (gain) of a symmetric sampled kernel at a frequency: H(f) = Σ g_k cos(2π f k).
 * @param kernel taps −R..R as from {@link gaussianKernel}; @param fPerPx frequency in cycles/px
 * @returns the gain applied to a cosine of that frequency (exact for the discrete convolution)
 */
export function kernelTransfer(kernel: Float64Array, fPerPx: number): number {
  const radius = (kernel.length - 1) / 2;
  let h = 0;
  for (let i = -radius; i <= radius; i++) h += kernel[i + radius] * Math.cos(2 * Math.PI * fPerPx * i);
  return h;
}

/** One separable pass of a symmetric kernel along x or y, edges clamped. */
function convolvePass(src: Float64Array, w: number, h: number, kernel: Float64Array, alongX: boolean): Float64Array {
  const out = new Float64Array(w * h);
  const radius = (kernel.length - 1) / 2;
  if (alongX) {
    for (let y = 0; y < h; y++) {
      const o = y * w;
      for (let x = 0; x < w; x++) {
        let s = 0;
        for (let i = -radius; i <= radius; i++) {
          const xx = x + i < 0 ? 0 : x + i >= w ? w - 1 : x + i;
          s += kernel[i + radius] * src[o + xx];
        }
        out[o + x] = s;
      }
    }
  } else {
    for (let y = 0; y < h; y++) {
      for (let i = -radius; i <= radius; i++) {
        const yy = y + i < 0 ? 0 : y + i >= h ? h - 1 : y + i;
        const k = kernel[i + radius];
        const o = yy * w;
        const oo = y * w;
        for (let x = 0; x < w; x++) out[oo + x] += k * src[o + x];
      }
    }
  }
  return out;
}

/**
 * Gaussian blur with the sampled kernel (exact discrete convolution, edges clamped).
 * @param data row-major values; @param w width; @param h height; @param sigmaPx σ in px (0: a copy)
 * @returns a new blurred array
 * Notes: callers render a margin of ⌈4σ⌉ px around the region so the clamped edges never reach it.
 */
export function gaussianBlur(data: Float64Array, w: number, h: number, sigmaPx: number): Float64Array {
  if (data.length !== w * h) throw new RangeError(`data length ${data.length} does not match ${w} × ${h}`);
  if (sigmaPx === 0) return Float64Array.from(data);
  const k = gaussianKernel(sigmaPx);
  return convolvePass(convolvePass(data, w, h, k, true), w, h, k, false);
}

/** Running-mean box filter of odd width 2r + 1 along x or y, edges clamped. */
function boxPass(src: Float64Array, w: number, h: number, r: number, alongX: boolean): Float64Array {
  const out = new Float64Array(w * h);
  const n = alongX ? w : h;
  const lines = alongX ? h : w;
  const stride = alongX ? 1 : w;
  const inv = 1 / (2 * r + 1);
  for (let l = 0; l < lines; l++) {
    const base = alongX ? l * w : l;
    const at = (i: number) => src[base + (i < 0 ? 0 : i >= n ? n - 1 : i) * stride];
    let s = 0;
    for (let i = -r; i <= r; i++) s += at(i);
    for (let i = 0; i < n; i++) {
      out[base + i * stride] = s * inv;
      s += at(i + r + 1) - at(i - r);
    }
  }
  return out;
}

/**
 * Approximate Gaussian blur for textures: three box filters in a row along each axis.
 * @param data values; @param w width; @param h height; @param sigmaPx target σ (≥ 3 px recommended)
 * @returns a new array; the σ reached is within a few per cent (box widths are odd integers)
 * Reference: cascaded uniform filters, Wells, IEEE Trans. PAMI 8(2), 234 (1986) (from memory).
 */
export function boxGaussianBlur(data: Float64Array, w: number, h: number, sigmaPx: number): Float64Array {
  // three boxes of width b = 2r + 1 have variance 3 (b² − 1)/12 = σ²
  const r = Math.max(1, Math.round((Math.sqrt(4 * sigmaPx * sigmaPx + 1) - 1) / 2));
  let a = data;
  for (let k = 0; k < 3; k++) a = boxPass(a, w, h, r, true);
  for (let k = 0; k < 3; k++) a = boxPass(a, w, h, r, false);
  return a;
}

/** Removes the mean and scales to unit standard deviation, in place; returns the array. */
function standardise(a: Float64Array): Float64Array {
  let s = 0;
  for (const v of a) s += v;
  const m = s / a.length;
  let s2 = 0;
  for (const v of a) s2 += (v - m) * (v - m);
  const sd = Math.sqrt(s2 / a.length) || 1;
  for (let i = 0; i < a.length; i++) a[i] = (a[i] - m) / sd;
  return a;
}

/**
 * White Gaussian noise field, unit SD.
 * @param w width; @param h height; @param r generator
 * @returns w·h independent standard normal values
 */
export function whiteField(w: number, h: number, r: Random): Float64Array {
  const a = new Float64Array(w * h);
  for (let i = 0; i < a.length; i++) a[i] = r.normal();
  return a;
}

/** Blurred white noise (exact kernel below 3 px, box cascade above), not standardised. */
function smoothedWhite(w: number, h: number, sigmaPx: number, r: Random): Float64Array {
  const white = whiteField(w, h, r);
  return sigmaPx < 3 ? gaussianBlur(white, w, h, sigmaPx) : boxGaussianBlur(white, w, h, sigmaPx);
}

/**
 * Power-law ("1/f²") texture: equal-weight octaves of smoothed white noise, unit SD.
 * @param w width; @param h height; @param r generator; @param maxScalePx largest octave σ (px)
 * @returns the field
 * Notes: a unit-SD octave of scale σ has spectral density ∝ σ² exp(−4π²σ²f²), dominant near
 * f ≈ 1/(2πσ); equal weights per octave then give power ∝ 1/f² between 1/(2π·maxScale) and
 * about 0.16 cycles/px. Smoothing, not interpolation on a grid, so no grid frequency is imprinted.
 * Reference: octave (fractal) noise synthesis (common practice).
 */
export function powerLawField(w: number, h: number, r: Random, maxScalePx: number): Float64Array {
  const out = new Float64Array(w * h);
  for (let s = 1; s <= maxScalePx; s *= 2) {
    const o = standardise(smoothedWhite(w, h, s, r));
    for (let i = 0; i < out.length; i++) out[i] += o[i];
  }
  return standardise(out);
}

/**
 * Band-passed noise with a broad ring in its power spectrum (difference of Gaussians), unit SD.
 * @param w width; @param h height; @param r generator
 * @param ringPerPx frequency of the ring's maximum (cycles/px)
 * @param widthRatio σ₂/σ₁ of the two Gaussians (> 1; larger is a broader ring, 1.3–2.5 typical)
 * @returns the field
 * Notes: the transfer e^(−2π²σ₁²f²) − e^(−2π²σ₂²f²) peaks at f₀ = √(ln k² / (2π²σ₁²(k² − 1))), k = σ₂/σ₁,
 * so σ₁ follows from the requested ring. Stands in for an amorphous film seen through the transfer
 * (the Thon-ring texture) without any crystalline order.
 * Reference: difference-of-Gaussians band-pass (Marr & Hildreth, Proc. R. Soc. B 207, 187 (1980), from memory).
 */
export function bandPassField(w: number, h: number, r: Random, ringPerPx: number, widthRatio: number): Float64Array {
  if (!(ringPerPx > 0 && ringPerPx < 0.5)) throw new RangeError(`ringPerPx must be in (0, 0.5), got ${ringPerPx}`);
  if (!(widthRatio > 1)) throw new RangeError(`widthRatio must exceed 1, got ${widthRatio}`);
  const k2 = widthRatio * widthRatio;
  const s1 = Math.sqrt(Math.log(k2) / (2 * Math.PI * Math.PI * (k2 - 1))) / ringPerPx;
  const s2 = widthRatio * s1;
  const white = whiteField(w, h, r);
  const blur = (s: number) => (s < 3 ? gaussianBlur(white, w, h, s) : boxGaussianBlur(white, w, h, s));
  const a = blur(s1);
  const b = blur(s2);
  for (let i = 0; i < a.length; i++) a[i] -= b[i];
  return standardise(a);
}

/** The detector: how counted electrons become stored numbers. */
export interface Detector {
  /** Gain in ADU per electron. */
  gainAduPerE: number;
  /** Offset (dark level) in ADU. */
  offsetAdu: number;
  /** Read noise SD in electrons (Gaussian, per pixel). */
  readNoiseE: number;
  /** Gaussian point-spread σ (px) applied to the counted electrons (scintillator); 0: none, white noise. */
  psfPx: number;
  /** Fraction of pixels clipped at the detector maximum (0: no clipping). */
  saturatedFraction: number;
  /**
   * 8-bit export: 0 keeps integer ADU (16-bit). Otherwise the 8-bit scale spans this many times the
   * data's own range (≥ 1), so the image uses only 255/factor grey levels (a 16-bit file's full
   * range mapped to 8 bits).
   */
  eightBitRangeFactor: number;
}

/** A plain detector: gain 1, no offset or read noise, no point-spread, no clipping, 16-bit. */
export const IDEAL_DETECTOR: Detector = {
  gainAduPerE: 1,
  offsetAdu: 0,
  readNoiseE: 0,
  psfPx: 0,
  saturatedFraction: 0,
  eightBitRangeFactor: 0,
};

/** The region rendered plus a margin on every side, so blurs see no edge. */
export interface Canvas {
  /** Width of the region (the image returned). */
  width: number;
  /** Height of the region. */
  height: number;
  /** Margin in px on each side. */
  marginPx: number;
}

/**
 * The canvas needed for a region and its blurs.
 * @param width region width (px); @param height region height; @param blurPx optical σ; @param psfPx detector σ
 * @returns the canvas with a margin of ⌈4σ⌉ per blur, plus 1
 */
export function canvasFor(width: number, height: number, blurPx: number, psfPx: number): Canvas {
  for (const [k, v] of Object.entries({ width, height })) {
    if (!(Number.isInteger(v) && v >= 16)) throw new RangeError(`${k} must be an integer ≥ 16, got ${v}`);
  }
  return { width, height, marginPx: Math.ceil(4 * blurPx) + Math.ceil(4 * psfPx) + 1 };
}

/**
 * Evaluates a specimen function over a canvas.
 * @param c the canvas; @param fn intensity at region coordinates (x = column, y = row index; the
 *   margin has negative and beyond-size coordinates)
 * @returns row-major values over (width + 2m) × (height + 2m)
 */
export function renderField(c: Canvas, fn: (xPx: number, yPx: number) => number): Float64Array {
  const m = c.marginPx;
  const cw = c.width + 2 * m;
  const ch = c.height + 2 * m;
  const out = new Float64Array(cw * ch);
  for (let j = 0; j < ch; j++) for (let i = 0; i < cw; i++) out[j * cw + i] = fn(i - m, j - m);
  return out;
}

/**
 * One Poisson deviate: exact (Knuth's product of uniforms) below 50 counts, the normal
 * approximation rounded to an integer above.
 * @param lambda the mean (≤ 0 gives 0); @param r the generator
 * @returns a non-negative integer count
 * Reference: Knuth, TAOCP vol. 2, §3.4.1 (from memory); normal approximation of a Poisson law for large means (common practice).
 */
export function poissonDeviate(lambda: number, r: Random): number {
  if (!(lambda > 0)) return 0;
  if (lambda < 50) {
    const limit = Math.exp(-lambda);
    let k = 0;
    let p = r.uniform();
    while (p > limit) {
      k++;
      p *= r.uniform();
    }
    return k;
  }
  return Math.max(0, Math.round(lambda + Math.sqrt(lambda) * r.normal()));
}

/** What the exposure of a specimen produced. */
export interface Exposed {
  /** The stored image (integer ADU, or 8-bit grey levels). */
  image: GreyImage;
  /** Expected electron counts per region pixel (after blur and illumination, before noise). */
  expectedCounts: Float32Array;
  /** Fraction of region pixels actually at the clipping level (0 without clipping). */
  saturatedFraction: number;
}

/** Illumination and dose of an exposure. */
export interface Exposure {
  /** Gaussian σ of the optical blur in px (stand-in for the transfer). */
  blurPx: number;
  /** Mean dose in electrons per pixel where the specimen transmits 1 and the illumination is 1. */
  dosePerPx: number;
  /** Relative illumination at region coordinates (x, row) (mean about 1), or null for even. */
  illumination: ((xPx: number, yPx: number) => number) | null;
  /** The detector. */
  detector: Detector;
}

/**
 * Forms the recorded image of a specimen: blur, dose and illumination, Poisson counts, detector.
 * @param c the canvas the specimen was rendered on; @param specimen transmitted intensity over it (≥ 0)
 * @param e exposure and detector; @param r generator (consumed in a fixed order)
 * @returns the image of the region, its expected counts and the clipped fraction
 * Notes: order as in the instrument: the transfer acts on the specimen intensity, the dose and
 * illumination scale it, electrons are counted (Poisson), the detector's point-spread spreads the
 * counted electrons (correlated noise), read noise is added, gain and offset give integer ADU
 * (0…65535), then the top saturatedFraction of the region's values is clipped at one level and the
 * 8-bit export (if any) maps [min, min + factor·range] to 0…255.
 */
export function exposeSpecimen(c: Canvas, specimen: Float64Array, e: Exposure, r: Random): Exposed {
  const m = c.marginPx;
  const cw = c.width + 2 * m;
  const ch = c.height + 2 * m;
  if (specimen.length !== cw * ch) throw new RangeError(`specimen length ${specimen.length} does not match the canvas ${cw} × ${ch}`);
  if (!(e.dosePerPx > 0)) throw new RangeError(`dosePerPx must be positive, got ${e.dosePerPx}`);
  const d = e.detector;
  if (!(d.gainAduPerE > 0)) throw new RangeError(`gainAduPerE must be positive, got ${d.gainAduPerE}`);
  if (!(d.saturatedFraction >= 0 && d.saturatedFraction < 1)) throw new RangeError(`saturatedFraction must be in [0, 1), got ${d.saturatedFraction}`);
  if (!(d.eightBitRangeFactor === 0 || d.eightBitRangeFactor >= 1)) throw new RangeError(`eightBitRangeFactor must be 0 or ≥ 1, got ${d.eightBitRangeFactor}`);
  const blurred = gaussianBlur(specimen, cw, ch, e.blurPx);
  const lambda = new Float64Array(cw * ch);
  for (let j = 0; j < ch; j++) {
    for (let i = 0; i < cw; i++) {
      const k = j * cw + i;
      const illum = e.illumination ? e.illumination(i - m, j - m) : 1;
      lambda[k] = Math.max(0, blurred[k]) * e.dosePerPx * illum;
    }
  }
  let counts: Float64Array = new Float64Array(cw * ch);
  for (let k = 0; k < counts.length; k++) counts[k] = poissonDeviate(lambda[k], r);
  if (d.psfPx > 0) counts = gaussianBlur(counts, cw, ch, d.psfPx);
  const w = c.width;
  const h = c.height;
  const out = new Float32Array(w * h);
  const expectedCounts = new Float32Array(w * h);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const k = (y + m) * cw + x + m;
      expectedCounts[y * w + x] = lambda[k];
      const adu = Math.round(d.gainAduPerE * (counts[k] + d.readNoiseE * r.normal()) + d.offsetAdu);
      out[y * w + x] = Math.min(65535, Math.max(0, adu));
    }
  }
  let saturatedFraction = 0;
  if (d.saturatedFraction > 0) {
    const sorted = Float32Array.from(out).sort();
    const level = sorted[Math.min(sorted.length - 1, Math.floor((1 - d.saturatedFraction) * sorted.length))];
    let n = 0;
    for (let i = 0; i < out.length; i++) {
      if (out[i] >= level) {
        out[i] = level;
        n++;
      }
    }
    saturatedFraction = n / out.length;
  }
  let bitDepth = 16;
  if (d.eightBitRangeFactor > 0) {
    let lo = Infinity;
    let hi = -Infinity;
    for (const v of out) {
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
    const span = Math.max(1e-9, (hi - lo) * d.eightBitRangeFactor);
    for (let i = 0; i < out.length; i++) out[i] = Math.min(255, Math.round(((out[i] - lo) / span) * 255));
    bitDepth = 8;
  }
  return { image: makeGreyImage(w, h, out, { bitDepth, sampleKind: 'uint' }), expectedCounts, saturatedFraction };
}
