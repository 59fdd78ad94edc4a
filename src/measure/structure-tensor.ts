/**
 * The structure tensor of an image: local orientation of the layers and how well defined it is.
 */
import type { GreyImage } from '../image/grey-image';

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
  src: Float32Array,
  width: number,
  height: number,
  kx: Float64Array,
  ky: Float64Array,
): Float32Array {
  const tmp = new Float32Array(src.length);
  const out = new Float32Array(src.length);
  const rx = (kx.length - 1) >> 1;
  const ry = (ky.length - 1) >> 1;
  for (let y = 0; y < height; y++) {
    const row = y * width;
    for (let x = 0; x < width; x++) {
      let s = 0;
      for (let k = -rx; k <= rx; k++) {
        let xx = x + k;
        if (xx < 0) xx = 0;
        else if (xx >= width) xx = width - 1;
        s += kx[k + rx] * src[row + xx];
      }
      tmp[row + x] = s;
    }
  }
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let s = 0;
      for (let k = -ry; k <= ry; k++) {
        let yy = y + k;
        if (yy < 0) yy = 0;
        else if (yy >= height) yy = height - 1;
        s += ky[k + ry] * tmp[yy * width + x];
      }
      out[y * width + x] = s;
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
 * Notes: gradients by Gaussian derivatives; J = G_σi * (∇I ∇Iᵀ). The dominant eigenvector's
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
  const w = gaussianKernel(is, false);
  const jxx = separableFilter(xx, width, height, w, w);
  const jxy = separableFilter(xy, width, height, w, w);
  const jyy = separableFilter(yy, width, height, w, w);
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
