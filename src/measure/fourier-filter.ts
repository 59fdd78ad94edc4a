/**
 * Fourier filtering: keep only chosen spatial frequencies (spots and their Friedel mates) to show
 * where in the image a periodicity lives.
 */
import { type GreyImage, makeGreyImage } from '../image/grey-image';
import { loadCv } from '../image/cv';
import { checkRegion, type RectPx } from './spectrum';

/** Options of {@link fourierFilter}. */
export interface FourierFilterOptions {
  /** Mask shape around each spot: 'gaussian' (default) or 'raised-cosine'. */
  shape?: 'gaussian' | 'raised-cosine';
  /** Mask size in cycles/px: the Gaussian σ, or the raised-cosine radius (default 3 / min(width, height)). */
  widthPerPx?: number;
  /** Add the region's mean back so the result overlays the original grey levels (default true). */
  keepMean?: boolean;
}

/**
 * Band-pass image that keeps the given spots.
 *
 * Parameters: image; region (null: whole image); spots, frequency vectors (fx along x, fy along
 * the row index, cycles/px), each with its Friedel mate added automatically; options.
 * Returns: a GreyImage of the region's size (calibration carried over) holding the filtered image.
 * Notes: the region is mirrored at its edges up to a fast transform size (so edges add no streaks),
 * transformed by opencv.js, multiplied by a soft mask (the largest of the per-spot masks, so
 * overlapping spots do not add up), and transformed back. Soft masks avoid the ringing of a hard
 * aperture.
 * Reference: Fourier filtering of lattice images (common practice); Gaussian apodisation, Harris, Proc. IEEE 66(1), 51 (1978).
 */
export async function fourierFilter(
  image: GreyImage,
  region: RectPx | null,
  spots: { fx: number; fy: number }[],
  options: FourierFilterOptions = {},
): Promise<GreyImage> {
  const r = checkRegion(image, region);
  if (!Array.isArray(spots) || spots.length === 0) throw new RangeError('fourierFilter needs at least one spot');
  spots.forEach((s, i) => {
    if (!Number.isFinite(s.fx) || !Number.isFinite(s.fy) || Math.abs(s.fx) > 0.5 || Math.abs(s.fy) > 0.5) {
      throw new RangeError(`spot ${i} (fx ${s.fx}, fy ${s.fy}) must have finite frequencies within ±0.5 cycles/px`);
    }
  });
  const shape = options.shape ?? 'gaussian';
  if (shape !== 'gaussian' && shape !== 'raised-cosine') throw new RangeError(`shape must be 'gaussian' or 'raised-cosine', got '${String(shape)}'`);
  const width = options.widthPerPx ?? 3 / Math.min(r.width, r.height);
  if (!(width > 0 && width < 0.5)) throw new RangeError(`widthPerPx must be in (0, 0.5), got ${width}`);
  const keepMean = options.keepMean ?? true;
  const { cv } = await loadCv();
  const w = cv.getOptimalDFTSize(r.width);
  const h = cv.getOptimalDFTSize(r.height);
  const roi = new cv.Mat(r.height, r.width, cv.CV_32F);
  const padded = new cv.Mat();
  const spec = new cv.Mat();
  const back = new cv.Mat();
  try {
    const buf = roi.data32F as Float32Array;
    let sum = 0;
    for (let j = 0; j < r.height; j++) {
      const o = (r.y + j) * image.width + r.x;
      for (let i = 0; i < r.width; i++) {
        const v = image.data[o + i];
        buf[j * r.width + i] = v;
        sum += v;
      }
    }
    const mean = sum / (r.width * r.height);
    for (let k = 0; k < buf.length; k++) buf[k] -= mean;
    cv.copyMakeBorder(roi, padded, 0, h - r.height, 0, w - r.width, cv.BORDER_REFLECT_101);
    cv.dft(padded, spec, cv.DFT_COMPLEX_OUTPUT);
    const c = spec.data32F as Float32Array;
    const all = spots.flatMap((s) => [s, { fx: -s.fx, fy: -s.fy }]);
    for (let v = 0; v < h; v++) {
      const fy = (v < h / 2 ? v : v - h) / h;
      for (let u = 0; u < w; u++) {
        const fx = (u < w / 2 ? u : u - w) / w;
        let m = 0;
        for (const s of all) {
          const d = Math.hypot(fx - s.fx, fy - s.fy);
          const g =
            shape === 'gaussian' ? Math.exp((-0.5 * d * d) / (width * width)) : d < width ? 0.5 + 0.5 * Math.cos((Math.PI * d) / width) : 0;
          if (g > m) m = g;
        }
        const k = 2 * (v * w + u);
        c[k] *= m;
        c[k + 1] *= m;
      }
    }
    cv.dft(spec, back, cv.DFT_INVERSE | cv.DFT_SCALE | cv.DFT_REAL_OUTPUT);
    const o = back.data32F as Float32Array;
    const out = new Float32Array(r.width * r.height);
    for (let j = 0; j < r.height; j++) {
      for (let i = 0; i < r.width; i++) out[j * r.width + i] = o[j * w + i] + (keepMean ? mean : 0);
    }
    return makeGreyImage(r.width, r.height, out, { calibration: image.calibration, bitDepth: 32, sampleKind: 'float' });
  } finally {
    roi.delete();
    padded.delete();
    spec.delete();
    back.delete();
  }
}
