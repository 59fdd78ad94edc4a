/**
 * A rectangle of an image as an image of its own.
 */
import { makeGreyImage, newPixels, storageOf, type GreyImage } from './grey-image';

/** A rectangle in whole image pixels. */
export interface PixelRect {
  /** Left column. */
  x: number;
  /** Top row. */
  y: number;
  /** Columns. */
  width: number;
  /** Rows. */
  height: number;
}

/**
 * A copy of the pixels of a rectangle inside the image, with the calibration, sample type and
 * bit depth kept.
 *
 * @param image the image
 * @param rect whole-pixel rectangle lying inside the image
 * @returns a new image (its own pixel buffer, safe to transfer); the whole image as a copy when
 *   the rectangle covers it
 * Reference: array slicing (common practice).
 */
export function cropImage(image: GreyImage, rect: PixelRect): GreyImage {
  const { x, y, width, height } = rect;
  if (!(Number.isInteger(x) && Number.isInteger(y) && Number.isInteger(width) && Number.isInteger(height))) {
    throw new RangeError(`crop x ${x}, y ${y}, ${width} × ${height} must be whole pixels`);
  }
  if (x < 0 || y < 0 || width < 1 || height < 1 || x + width > image.width || y + height > image.height) {
    throw new RangeError(`crop x ${x}, y ${y}, ${width} × ${height} lies outside the ${image.width} × ${image.height} image`);
  }
  const data = newPixels(storageOf(image.data), width * height);
  for (let j = 0; j < height; j++) data.set(image.data.subarray((y + j) * image.width + x, (y + j) * image.width + x + width), j * width);
  return makeGreyImage(width, height, data, { calibration: image.calibration, bitDepth: image.bitDepth, sampleKind: image.sampleKind });
}

/**
 * The smallest and largest pixel value in a box of an image.
 * @param image the image
 * @param box [x, y, width, height] in whole px, inside the image
 * @returns [lo, hi] ([Infinity, −Infinity] for an empty box)
 */
export function boxRange(image: GreyImage, box: readonly [number, number, number, number]): [number, number] {
  const [bx, by, bw, bh] = box;
  if (bx < 0 || by < 0 || bx + bw > image.width || by + bh > image.height) throw new RangeError(`box ${box.join(', ')} lies outside the ${image.width} × ${image.height} image`);
  let lo = Infinity;
  let hi = -Infinity;
  for (let y = by; y < by + bh; y++) {
    for (let x = bx; x < bx + bw; x++) {
      const v = image.data[y * image.width + x];
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
  }
  return [lo, hi];
}
