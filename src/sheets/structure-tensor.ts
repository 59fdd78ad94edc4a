/**
 * The structure tensor of an image: local orientation of the layers and how well defined it is.
 */
import type { GreyImage, PixelArray } from '../image/grey-image';

/** Options for `structureTensor`. */
export interface StructureTensorOptions {
  /** Standard deviation of the Gaussian derivative filters, px (default 1). */
  gradientSigmaPx?: number;
  /** Standard deviation of the Gaussian window the tensor is averaged over, px (default 6). */
  integrationSigmaPx?: number;
}

/** The orientation field. All maps are row-major, width × height. */
export interface OrientationField {
  width: number;
  height: number;
  /** Direction of the layer normal (the dominant gradient direction), degrees in [0, 180), CCW from +x on screen (y up). */
  angleDeg: Float32Array;
  /** Coherence (λ1 − λ2)/(λ1 + λ2) in [0, 1]: 1 for perfectly parallel layers, near 0 for isotropic texture. */
  coherence: Float32Array;
  /** Local gradient energy λ1 + λ2 (grey units² per px²). */
  energy: Float32Array;
  /** The averaged tensor components (image axes, y down). */
  jxx: Float32Array;
  jxy: Float32Array;
  jyy: Float32Array;
}

/** Normalised 1D Gaussian (and, with derivative, its first derivative) sampled out to 3σ. */
function gaussianKernel(sigma: number, derivative: boolean): Float64Array {
  const r = Math.max(1, Math.ceil(3 * sigma));
  const k = new Float64Array(2 * r + 1);
  let sum = 0;
  for (let i = -r; i <= r; i++) {
    const g = Math.exp(-0.5 * (i / sigma) ** 2);
    k[i + r] = g;
    sum += g;
  }
  for (let i = 0; i < k.length; i++) k[i] /= sum;
  if (derivative) for (let i = -r; i <= r; i++) k[i + r] *= -i / (sigma * sigma);
  return k;
}

/** Separable convolution with clamped borders: kx along rows, then ky along columns. */
export function separableFilter(
  src: PixelArray,
  width: number,
  height: number,
  kx: Float64Array,
  ky: Float64Array,
): Float32Array {
  const tmp = new Float32Array(src.length);
  const out = new Float32Array(src.length);
  const rx = (kx.length - 1) >> 1;
  const ry = (ky.length - 1) >> 1;
  const padded = new Float32Array(width + 2 * rx);
  for (let y = 0; y < height; y++) {
    const row = y * width;
    // the row with clamped ends, so the inner loop has no branches
    for (let i = 0; i < padded.length; i++) {
      let xx = i - rx;
      if (xx < 0) xx = 0;
      else if (xx >= width) xx = width - 1;
      padded[i] = src[row + xx];
    }
    for (let x = 0; x < width; x++) {
      let s = 0;
      for (let k = 0; k < kx.length; k++) s += kx[k] * padded[x + k];
      tmp[row + x] = s;
    }
  }
  // columns: accumulate whole rows (contiguous memory) for each tap
  const acc = new Float64Array(width);
  for (let y = 0; y < height; y++) {
    acc.fill(0);
    for (let k = -ry; k <= ry; k++) {
      let yy = y + k;
      if (yy < 0) yy = 0;
      else if (yy >= height) yy = height - 1;
      const wk = ky[k + ry];
      const base = yy * width;
      for (let x = 0; x < width; x++) acc[x] += wk * tmp[base + x];
    }
    const row = y * width;
    for (let x = 0; x < width; x++) out[row + x] = acc[x];
  }
  return out;
}

/** Recursive-Gaussian coefficients of Young & van Vliet (1995) for the parameter q. */
function coefficientsForQ(q: number): { B: number; b1: number; b2: number; b3: number } {
  const b0 = 1.57825 + 2.44413 * q + 1.4281 * q * q + 0.422205 * q * q * q;
  const b1 = (2.44413 * q + 2.85619 * q * q + 1.26661 * q * q * q) / b0;
  const b2 = -(1.4281 * q * q + 1.26661 * q * q * q) / b0;
  const b3 = (0.422205 * q * q * q) / b0;
  return { B: 1 - (b1 + b2 + b3), b1, b2, b3 };
}

/** Standard deviation of the forward–backward impulse response for parameter q (numerically). */
function responseSigma(q: number, reach: number): number {
  const { B, b1, b2, b3 } = coefficientsForQ(q);
  const n = 2 * reach + 1;
  const f = new Float64Array(n);
  let p1 = 0, p2 = 0, p3 = 0;
  for (let i = 0; i < n; i++) {
    const v = B * (i === reach ? 1 : 0) + b1 * p1 + b2 * p2 + b3 * p3;
    f[i] = v; p3 = p2; p2 = p1; p1 = v;
  }
  p1 = 0; p2 = 0; p3 = 0;
  let sum = 0;
  let m2 = 0;
  for (let i = n - 1; i >= 0; i--) {
    const v = B * f[i] + b1 * p1 + b2 * p2 + b3 * p3;
    p3 = p2; p2 = p1; p1 = v;
    sum += v;
    m2 += v * (i - reach) ** 2;
  }
  return Math.sqrt(m2 / sum);
}

/** Coefficients whose impulse response has standard deviation σ (q by bisection). */
function recursiveGaussianCoefficients(sigma: number): { B: number; b1: number; b2: number; b3: number } {
  const reach = Math.ceil(12 * sigma) + 8;
  let lo = 0.05;
  let hi = Math.max(1, 2 * sigma);
  for (let i = 0; i < 50; i++) {
    const mid = 0.5 * (lo + hi);
    if (responseSigma(mid, reach) < sigma) lo = mid;
    else hi = mid;
  }
  return coefficientsForQ(0.5 * (lo + hi));
}

/**
 * Gaussian smoothing of an image by a recursive (IIR) filter, cost independent of σ.
 *
 * Young & van Vliet, "Recursive implementation of the Gaussian filter", Signal Process. 44, 139 (1995).
 *
 * @param src row-major values
 * @param width columns
 * @param height rows
 * @param sigma standard deviation in px (≥ 0.5)
 * @returns the smoothed image (a new array)
 * Notes: a causal and an anti-causal third-order pass along rows, then along columns; the
 * borders start from the edge value (as if the edge continued). The paper's closed-form q gives
 * a response about 10 % wider than σ (second moment, measured), so q is found by bisection to make
 * the response's standard deviation exactly σ. The shape is close to, not exactly, a Gaussian,
 * which is ample for averaging the structure tensor.
 */
export function recursiveGaussian(src: PixelArray, width: number, height: number, sigma: number): Float32Array {
  if (!(sigma >= 0.5 && Number.isFinite(sigma))) throw new RangeError(`sigma must be ≥ 0.5, got ${sigma}`);
  if (src.length !== width * height) throw new RangeError(`src length ${src.length} ≠ ${width} × ${height}`);
  const { B, b1, b2, b3 } = recursiveGaussianCoefficients(sigma);
  const out = Float32Array.from(src);
  const line = new Float64Array(Math.max(width, height));
  // rows
  for (let y = 0; y < height; y++) {
    const row = y * width;
    let p1 = out[row];
    let p2 = p1;
    let p3 = p1;
    for (let x = 0; x < width; x++) {
      const v = B * out[row + x] + b1 * p1 + b2 * p2 + b3 * p3;
      line[x] = v;
      p3 = p2; p2 = p1; p1 = v;
    }
    p1 = line[width - 1]; p2 = p1; p3 = p1;
    for (let x = width - 1; x >= 0; x--) {
      const v = B * line[x] + b1 * p1 + b2 * p2 + b3 * p3;
      out[row + x] = v;
      p3 = p2; p2 = p1; p1 = v;
    }
  }
  // columns, all at once row by row (contiguous memory)
  const c1 = new Float64Array(width);
  const c2 = new Float64Array(width);
  const c3 = new Float64Array(width);
  const fwd = new Float32Array(width * height);
  for (let x = 0; x < width; x++) { c1[x] = out[x]; c2[x] = out[x]; c3[x] = out[x]; }
  for (let y = 0; y < height; y++) {
    const row = y * width;
    for (let x = 0; x < width; x++) {
      const v = B * out[row + x] + b1 * c1[x] + b2 * c2[x] + b3 * c3[x];
      fwd[row + x] = v;
      c3[x] = c2[x]; c2[x] = c1[x]; c1[x] = v;
    }
  }
  const last = (height - 1) * width;
  for (let x = 0; x < width; x++) { c1[x] = fwd[last + x]; c2[x] = c1[x]; c3[x] = c1[x]; }
  for (let y = height - 1; y >= 0; y--) {
    const row = y * width;
    for (let x = 0; x < width; x++) {
      const v = B * fwd[row + x] + b1 * c1[x] + b2 * c2[x] + b3 * c3[x];
      out[row + x] = v;
      c3[x] = c2[x]; c2[x] = c1[x]; c1[x] = v;
    }
  }
  return out;
}

/**
 * Structure tensor orientation and coherence of every pixel.
 *
 * Bigün & Granlund, "Optimal orientation detection of linear symmetry", Proc. ICCV 1987, 433; coherence as in Jähne, Digital Image Processing (2005) §13.3.
 *
 * @param image the image
 * @param options derivative and integration scales
 * @returns angle of the layer normal, coherence and energy maps, and the tensor components
 * Notes: gradients by Gaussian derivatives; J = G_σi * (∇I ∇Iᵀ), the window applied by
 * `recursiveGaussian` for σi ≥ 2 px (sampled kernels below). The dominant eigenvector's
 * angle in image axes is ½·atan2(2Jxy, Jxx − Jyy); the screen angle is its negative (rows run
 * downwards), reduced to [0, 180). The integration scale should span at least two layer periods.
 */
export function structureTensor(image: GreyImage, options: StructureTensorOptions = {}): OrientationField {
  const gs = options.gradientSigmaPx ?? 1;
  const is = options.integrationSigmaPx ?? 6;
  if (!(gs > 0 && Number.isFinite(gs))) throw new RangeError(`gradientSigmaPx must be > 0, got ${gs}`);
  if (!(is > 0 && Number.isFinite(is))) throw new RangeError(`integrationSigmaPx must be > 0, got ${is}`);
  const { width, height, data } = image;
  if (data.length !== width * height) throw new RangeError(`image data length ${data.length} ≠ ${width} × ${height}`);
  const g = gaussianKernel(gs, false);
  const dg = gaussianKernel(gs, true);
  const gx = separableFilter(data, width, height, dg, g);
  const gy = separableFilter(data, width, height, g, dg);
  const n = width * height;
  const xx = new Float32Array(n);
  const xy = new Float32Array(n);
  const yy = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    xx[i] = gx[i] * gx[i];
    xy[i] = gx[i] * gy[i];
    yy[i] = gy[i] * gy[i];
  }
  let jxx: Float32Array;
  let jxy: Float32Array;
  let jyy: Float32Array;
  if (is >= 2) {
    jxx = recursiveGaussian(xx, width, height, is);
    jxy = recursiveGaussian(xy, width, height, is);
    jyy = recursiveGaussian(yy, width, height, is);
  } else {
    const w = gaussianKernel(is, false);
    jxx = separableFilter(xx, width, height, w, w);
    jxy = separableFilter(xy, width, height, w, w);
    jyy = separableFilter(yy, width, height, w, w);
  }
  const angleDeg = new Float32Array(n);
  const coherence = new Float32Array(n);
  const energy = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    const a = jxx[i];
    const b = jxy[i];
    const c = jyy[i];
    const tr = a + c;
    const diff = Math.hypot(a - c, 2 * b);
    energy[i] = tr;
    coherence[i] = tr > 0 ? diff / tr : 0;
    const phiImage = 0.5 * Math.atan2(2 * b, a - c); // radians, image axes (y down)
    let deg = (-phiImage * 180) / Math.PI;
    deg = ((deg % 180) + 180) % 180;
    angleDeg[i] = deg;
  }
  return { width, height, angleDeg, coherence, energy, jxx, jxy, jyy };
}

/** Smallest difference between two axial angles in degrees (period 180), in [0, 90]. */
export function axialDifferenceDeg(a: number, b: number): number {
  const d = Math.abs((((a - b) % 180) + 180) % 180);
  return Math.min(d, 180 - d);
}
