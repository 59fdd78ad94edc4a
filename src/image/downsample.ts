/**
 * Box-mean downsampling by a whole factor, for thumbnails, overviews and the view pyramid (the
 * display stretch itself is in display.ts).
 */
import type { GreyImage } from './grey-image';
import { isPixelArray, makeGreyImage } from './grey-image';

/**
 * Shrinks an image by an integer factor, each output pixel the mean of a factor × factor block.
 *
 * @param image - the image to shrink.
 * @param factor - integer ≥ 1; 1 returns a copy.
 * @returns an image of ceil(width / factor) × ceil(height / factor) pixels. Blocks at the right
 *   and bottom edges that are cut off by the image border average only the pixels they cover.
 *   The calibration (if any) is scaled by the factor, with its uncertainty and source kept and
 *   the detail noting the downsampling; warnings are carried over.
 *
 * Notes: one pass over the pixels, sums in float64. Box (area-mean) filtering before decimation
 * is the plain anti-aliasing choice for display; it is not meant as an input to measurement.
 * Reference: box filter / area averaging (Gonzalez & Woods, Digital Image Processing, spatial averaging; from memory).
 */
export function downsample(image: GreyImage, factor: number): GreyImage {
  if (!image || !isPixelArray(image.data)) throw new TypeError('image must be a GreyImage');
  if (!Number.isInteger(factor) || factor < 1) throw new RangeError(`factor must be an integer ≥ 1, got ${factor}`);
  const { width, height, data } = image;
  const outW = Math.ceil(width / factor);
  const outH = Math.ceil(height / factor);
  const out = new Float32Array(outW * outH);
  if (factor === 1) out.set(data);
  else {
    const sums = new Float64Array(outW);
    const column = new Int32Array(width); // output column of each input column
    for (let x = 0; x < width; x++) column[x] = (x / factor) | 0;
    for (let oy = 0; oy < outH; oy++) {
      sums.fill(0);
      const y0 = oy * factor;
      const y1 = Math.min(height, y0 + factor);
      for (let y = y0; y < y1; y++) {
        const row = y * width;
        for (let x = 0; x < width; x++) sums[column[x]] += data[row + x];
      }
      const rows = y1 - y0;
      const o = oy * outW;
      for (let ox = 0; ox < outW; ox++) {
        const cols = Math.min(width, (ox + 1) * factor) - ox * factor;
        out[o + ox] = sums[ox] / (rows * cols);
      }
    }
  }
  const c = image.calibration;
  const calibration = c
    ? {
        ...c,
        nmPerPx: c.nmPerPx * factor,
        ...(c.nmPerPxY !== undefined ? { nmPerPxY: c.nmPerPxY * factor } : {}),
        detail: factor === 1 ? c.detail : `${c.detail} (downsampled ×${factor})`,
      }
    : null;
  return makeGreyImage(outW, outH, out, {
    bitDepth: image.bitDepth,
    sampleKind: image.sampleKind,
    calibration,
    warnings: [...image.warnings],
  });
}
