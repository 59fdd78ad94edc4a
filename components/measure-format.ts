/**
 * Helpers of the measuring panel: the calibration source in words, the crop of an image around a
 * drawn shape, plain-JSON numbers. (Values with their uncertainty: formatPlusMinus in the core.)
 */
import { type Calibration, type GreyImage, makeGreyImage } from '../src/image/grey-image';

/** Where a pixel size came from, in the user's words. */
export function calibrationSourceText(c: Calibration): string {
  return ({ metadata: 'file metadata', manual: 'typed in', 'scale-bar': 'scale bar', standard: 'lattice standard', profile: 'instrument profile' } as Record<string, string>)[c.source] ?? c.source;
}

/** A copy of the pixels of a rectangle (inside the image) as an image of its own, calibration kept. */
export function cropImage(image: GreyImage, x: number, y: number, width: number, height: number): GreyImage {
  if (!(Number.isInteger(x) && Number.isInteger(y) && Number.isInteger(width) && Number.isInteger(height))) {
    throw new RangeError(`crop x ${x}, y ${y}, ${width} × ${height} must be whole pixels`);
  }
  if (x < 0 || y < 0 || width < 1 || height < 1 || x + width > image.width || y + height > image.height) {
    throw new RangeError(`crop x ${x}, y ${y}, ${width} × ${height} lies outside the ${image.width} × ${image.height} image`);
  }
  const data = new Float32Array(width * height);
  for (let j = 0; j < height; j++) data.set(image.data.subarray((y + j) * image.width + x, (y + j) * image.width + x + width), j * width);
  return makeGreyImage(width, height, data, { calibration: image.calibration, bitDepth: image.bitDepth, sampleKind: image.sampleKind });
}

/** NaN and infinities become null so a measurement's detail stays plain JSON. */
export function jsonNumbers(values: ArrayLike<number>, digits = 6): (number | null)[] {
  return Array.from(values, (v) => (Number.isFinite(v) ? +v.toPrecision(digits) : null));
}
