/**
 * The geometry of a recorded electron-diffraction pattern: its centre and the elliptical
 * distortion of the projector lenses, and the pattern centre found from the pattern's own
 * symmetry. Pure: typed arrays only.
 */
import type { GreyImage } from '../../image/grey-image';
import { fftRadix2 } from '../../measure/period-profile';

/**
 * Centre and elliptical distortion of a pattern. A ring of true radius R is recorded as an ellipse
 * of semi-axes R·√(1 + ε) along the major axis and R/√(1 + ε) across it (area kept), so its
 * corrected radius |T(p − c)| is R everywhere on it.
 */
export interface PatternGeometry {
  /** Centre, px (x right, y down). */
  cx: number;
  cy: number;
  /**
   * Distortion parameters: T = s·[[1 + e1, e2], [e2, 1 − e1]] with s = 1/√(1 − e1² − e2²)
   * (det T = 1). e = √(e1² + e2²); ellipticity ε = a/b − 1 = 2e/(1 − e).
   */
  e1: number;
  e2: number;
}

/** A geometry with no distortion. */
export function roundGeometry(cx: number, cy: number): PatternGeometry {
  return { cx, cy, e1: 0, e2: 0 };
}

/** The correction matrix T as [t11, t12, t22] (symmetric). */
export function correction(g: Pick<PatternGeometry, 'e1' | 'e2'>): [number, number, number] {
  const det = 1 - g.e1 * g.e1 - g.e2 * g.e2;
  if (!(det > 0)) throw new RangeError(`distortion (${g.e1}, ${g.e2}) is too large`);
  const s = 1 / Math.sqrt(det);
  return [s * (1 + g.e1), s * g.e2, s * (1 - g.e1)];
}

/** The corrected vector T(p − c) of an image point. */
export function correctedVector(g: PatternGeometry, x: number, y: number, t = correction(g)): [number, number] {
  const dx = x - g.cx;
  const dy = y - g.cy;
  return [t[0] * dx + t[1] * dy, t[1] * dx + t[2] * dy];
}

/** The image point of a corrected vector v: p = c + T⁻¹v. */
export function imagePoint(g: PatternGeometry, v: [number, number], t = correction(g)): [number, number] {
  // T symmetric with det 1: T⁻¹ = [[t22, −t12], [−t12, t11]]
  return [g.cx + t[2] * v[0] - t[1] * v[1], g.cy - t[1] * v[0] + t[0] * v[1]];
}

/**
 * Ellipticity and major-axis direction of a geometry.
 * @returns ε = a/b − 1 and the major axis's direction, degrees counter-clockwise from +x as shown (y up), in [0, 180)
 */
export function ellipticity(g: Pick<PatternGeometry, 'e1' | 'e2'>): { ellipticity: number; majorAxisDeg: number } {
  const e = Math.hypot(g.e1, g.e2);
  const alpha = 0.5 * Math.atan2(g.e2, g.e1); // T stretches along alpha (rows down): the recorded ellipse is shortest there
  const majorDown = alpha + Math.PI / 2;
  let deg = (-majorDown * 180) / Math.PI;
  deg = ((deg % 180) + 180) % 180;
  return { ellipticity: (2 * e) / (1 - e), majorAxisDeg: e === 0 ? 0 : deg };
}

/**
 * The distortion parameters of an ellipticity and major-axis direction (the inverse of ellipticity()).
 * @param eps ε = a/b − 1 (≥ 0, below 1)
 * @param majorAxisDeg the major axis, degrees counter-clockwise from +x (y up)
 */
export function distortionOf(eps: number, majorAxisDeg: number): { e1: number; e2: number } {
  if (!(eps >= 0 && eps < 1)) throw new RangeError(`ellipticity must be in [0, 1), got ${eps}`);
  const e = eps / (2 + eps);
  const alpha = (-majorAxisDeg * Math.PI) / 180 - Math.PI / 2;
  return { e1: e * Math.cos(2 * alpha), e2: e * Math.sin(2 * alpha) };
}

/** Options of {@link findPatternCentre}. */
export interface CentreOptions {
  /** Largest side of the reduced pattern the symmetry is searched on, px (default 512). */
  workingSizePx?: number;
  /** Pixels to leave out (1 = excluded): a beam stop, dead or saturated pixels. Found automatically when absent (about each centre found, until it settles). */
  mask?: Uint8Array;
}

/**
 * Pixels that carry no pattern: the beam stop's shadow (far below the pattern's level at its
 * radius, spread over a region) and saturated pixels (the direct beam's clipped core).
 * @param image the pattern
 * @param centre a centre estimate (the image centre when absent)
 * @param options clipped: false keeps clipped pixels (a saturated direct beam is still centrosymmetric)
 * @returns a mask, 1 = leave out
 * Notes: a pixel is left out when it lies below a quarter of the upper quartile of its ring
 * (radius bin of 2 px about the centre; near the centre a stop may cover most of a ring, so not
 * the median, and all of it, so the highest upper quartile within 10 px outside counts too) and its 5 × 5 neighbourhood does too (the shadow of an opaque stop
 * is a region, not a dark pixel), or when it holds the image's maximum and at least 8 pixels do
 * (clipping); the mask is grown by 2 px. Common practice in azimuthal integration.
 */
export function patternMask(image: GreyImage, centre?: { cx: number; cy: number }, options: { clipped?: boolean } = {}): Uint8Array {
  const { width, height, data } = image;
  const cx = centre?.cx ?? (width - 1) / 2;
  const cy = centre?.cy ?? (height - 1) / 2;
  const maxR = Math.ceil(Math.hypot(Math.max(cx, width - cx), Math.max(cy, height - cy)));
  const bins = Math.floor(maxR / 2) + 2;
  const samples: number[][] = Array.from({ length: bins }, () => []);
  const stride = Math.max(1, Math.floor(Math.sqrt((width * height) / 400000)));
  for (let y = 0; y < height; y += stride) for (let x = 0; x < width; x += stride) samples[Math.floor(Math.hypot(x - cx, y - cy) / 2)].push(data[y * width + x]);
  // the upper quartile of each ring: near the centre an opaque stop may cover most of a ring
  const med = samples.map((s) => {
    if (!s.length) return NaN;
    s.sort((a, b) => a - b);
    return s[Math.floor(0.75 * (s.length - 1))];
  });
  // a ring the stop covers entirely (near the centre) has no level of its own: take the highest
  // upper quartile within 10 px outside it too
  const ref = med.map((_, b) => {
    let v = NaN;
    for (let j = b; j < Math.min(med.length, b + 6); j++) if (Number.isFinite(med[j]) && !(med[j] <= v)) v = med[j];
    return v;
  });
  const lo = image.min;
  const dark = new Uint8Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const m = ref[Math.floor(Math.hypot(x - cx, y - cy) / 2)];
      if (Number.isFinite(m) && data[y * width + x] - lo < 0.25 * (m - lo)) dark[y * width + x] = 1;
    }
  }
  let atMax = 0;
  for (let i = 0; i < data.length; i++) if (data[i] === image.max) atMax++;
  const mask = new Uint8Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      if (options.clipped !== false && atMax >= 8 && data[i] === image.max) mask[i] = 1;
      if (!dark[i]) continue;
      let n = 0;
      let tot = 0;
      for (let dy = -2; dy <= 2; dy++) for (let dx = -2; dx <= 2; dx++) {
        const nx = x + dx;
        const ny = y + dy;
        if (nx < 0 || ny < 0 || nx >= width || ny >= height) continue;
        tot++;
        n += dark[ny * width + nx];
      }
      if (n >= 0.8 * tot) mask[i] = 1;
    }
  }
  return grow(mask, width, height, 2);
}

function grow(mask: Uint8Array, width: number, height: number, r: number): Uint8Array {
  const out = new Uint8Array(mask);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      if (!mask[y * width + x]) continue;
      for (let dy = -r; dy <= r; dy++) for (let dx = -r; dx <= r; dx++) {
        const nx = x + dx;
        const ny = y + dy;
        if (nx >= 0 && ny >= 0 && nx < width && ny < height) out[ny * width + nx] = 1;
      }
    }
  }
  return out;
}

/** Complex 2D FFT in place (rows then columns), sign −1; inverse by conjugation when inverse is true (unscaled). */
function fft2(re: Float64Array, im: Float64Array, n: number, inverse: boolean): void {
  if (inverse) for (let i = 0; i < im.length; i++) im[i] = -im[i];
  const r = new Float64Array(n);
  const c = new Float64Array(n);
  for (let y = 0; y < n; y++) {
    r.set(re.subarray(y * n, y * n + n));
    c.set(im.subarray(y * n, y * n + n));
    fftRadix2(r, c);
    re.set(r, y * n);
    im.set(c, y * n);
  }
  for (let x = 0; x < n; x++) {
    for (let y = 0; y < n; y++) {
      r[y] = re[y * n + x];
      c[y] = im[y * n + x];
    }
    fftRadix2(r, c);
    for (let y = 0; y < n; y++) {
      re[y * n + x] = r[y];
      im[y * n + x] = c[y];
    }
  }
  if (inverse) for (let i = 0; i < im.length; i++) im[i] = -im[i];
}

/**
 * The centre of a diffraction pattern from its Friedel (point) symmetry.
 * @param image the pattern
 * @param options working size and a mask of pixels to leave out
 * @returns the centre, px, to about a pixel of the reduced image (refine it with the rings or the Friedel pairs)
 * Notes: a pattern is centrosymmetric about its centre c, I(x) = I(2c − x), so its self-convolution
 * Σ I(x)·I(s − x) peaks at s = 2c: the symmetry centre without knowing where the direct beam is
 * (it may be under a beam stop). The pattern is reduced by box averaging, log-compressed (rings
 * and spots weigh as much as the direct beam), high-passed, masked (beam stop, clipping),
 * zero-padded and convolved by FFT; the peak is refined by a parabola in x and y.
 * Reference: Friedel's law; centring by symmetry (common practice in diffraction data reduction).
 */
export function findPatternCentre(image: GreyImage, options: CentreOptions = {}): { cx: number; cy: number } {
  const { width, height } = image;
  if (width < 16 || height < 16) throw new RangeError(`a pattern of ${width} × ${height} px is too small to find its centre (at least 16 × 16)`);
  const work = options.workingSizePx ?? 512;
  if (!(work >= 32 && work <= 2048)) throw new RangeError(`workingSizePx must be in [32, 2048], got ${work}`);
  if (options.mask) {
    if (options.mask.length !== width * height) throw new RangeError(`the mask has ${options.mask.length} values, not ${width} × ${height}`);
    return symmetryCentre(image, options.mask, work);
  }
  // the automatic mask depends on the centre (a stop's shadow is dark for its radius): found about
  // the image centre first, then again about each new centre until it settles (a stop's unmasked
  // part breaks the symmetry the search relies on)
  // clipped pixels are kept: a saturated direct beam is still centrosymmetric, and often the
  // strongest symmetric feature left
  let c = symmetryCentre(image, patternMask(image, undefined, { clipped: false }), work);
  for (let i = 0; i < 3; i++) {
    const next = symmetryCentre(image, patternMask(image, c, { clipped: false }), work);
    const moved = Math.hypot(next.cx - c.cx, next.cy - c.cy);
    c = next;
    if (moved < 0.5) break;
  }
  return c;
}

function symmetryCentre(image: GreyImage, mask: Uint8Array, work: number): { cx: number; cy: number } {
  const { width, height, data } = image;
  const f = Math.max(1, Math.ceil(Math.max(width, height) / work));
  const w = Math.floor(width / f);
  const h = Math.floor(height / f);
  const small = new Float64Array(w * h);
  const valid = new Uint8Array(w * h);
  const lo = image.min;
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      let s = 0;
      let n = 0;
      for (let j = 0; j < f; j++) for (let i = 0; i < f; i++) {
        const k = (y * f + j) * width + x * f + i;
        if (mask[k]) continue;
        s += data[k] - lo;
        n++;
      }
      if (n > 0.5 * f * f) {
        small[y * w + x] = Math.log1p(Math.max(0, s / n));
        valid[y * w + x] = 1;
      }
    }
  }
  // high-pass: subtract a box mean of radius ~ 4 % of the side (over valid pixels)
  const r = Math.max(2, Math.round(0.04 * Math.max(w, h)));
  const hp = boxHighPass(small, valid, w, h, r);
  let n = 1;
  while (n < 2 * Math.max(w, h)) n <<= 1;
  const re = new Float64Array(n * n);
  const im = new Float64Array(n * n);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) re[y * n + x] = valid[y * w + x] ? hp[y * w + x] : 0;
  fft2(re, im, n, false);
  for (let i = 0; i < re.length; i++) {
    const a = re[i];
    const b = im[i];
    re[i] = a * a - b * b;
    im[i] = 2 * a * b;
  }
  fft2(re, im, n, true);
  let best = 0;
  for (let i = 1; i < re.length; i++) if (re[i] > re[best]) best = i;
  const sx = best % n;
  const sy = (best - sx) / n;
  const at = (x: number, y: number) => re[((y + n) % n) * n + ((x + n) % n)];
  const para = (m: number, z: number, p: number) => {
    const den = m - 2 * z + p;
    return den < 0 ? Math.max(-0.5, Math.min(0.5, (0.5 * (m - p)) / den)) : 0;
  };
  const px = sx + para(at(sx - 1, sy), at(sx, sy), at(sx + 1, sy));
  const py = sy + para(at(sx, sy - 1), at(sx, sy), at(sx, sy + 1));
  // s = 2c in the reduced image; a reduced pixel covers f image pixels starting at 0
  return { cx: (px / 2) * f + (f - 1) / 2, cy: (py / 2) * f + (f - 1) / 2 };
}

function boxHighPass(v: Float64Array, valid: Uint8Array, w: number, h: number, r: number): Float64Array {
  // summed-area tables of values and counts
  const S = new Float64Array((w + 1) * (h + 1));
  const C = new Float64Array((w + 1) * (h + 1));
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const i = (y + 1) * (w + 1) + x + 1;
      S[i] = (valid[y * w + x] ? v[y * w + x] : 0) + S[i - 1] + S[i - (w + 1)] - S[i - (w + 1) - 1];
      C[i] = valid[y * w + x] + C[i - 1] + C[i - (w + 1)] - C[i - (w + 1) - 1];
    }
  }
  const out = new Float64Array(w * h);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      if (!valid[y * w + x]) continue;
      const x0 = Math.max(0, x - r);
      const x1 = Math.min(w, x + r + 1);
      const y0 = Math.max(0, y - r);
      const y1 = Math.min(h, y + r + 1);
      const sum = S[y1 * (w + 1) + x1] - S[y0 * (w + 1) + x1] - S[y1 * (w + 1) + x0] + S[y0 * (w + 1) + x0];
      const cnt = C[y1 * (w + 1) + x1] - C[y0 * (w + 1) + x1] - C[y1 * (w + 1) + x0] + C[y0 * (w + 1) + x0];
      out[y * w + x] = v[y * w + x] - sum / Math.max(1, cnt);
    }
  }
  return out;
}
