/**
 * Number formatting for the measuring panel: a value with its standard uncertainty rounded to
 * two significant digits of the uncertainty, and the crop of an image around a drawn shape.
 */
import { type Calibration, type GreyImage, makeGreyImage } from '../src/image/grey-image';

/** "1.2503 ± 0.0041": the value rounded to the uncertainty's second (or `significant`-th) significant digit. */
export function formatWithUncertainty(value: number, uncertainty: number, significant = 2): string {
  if (!Number.isFinite(value)) return '–';
  if (!(uncertainty > 0) || !Number.isFinite(uncertainty)) return `${value.toPrecision(4)} ± ?`;
  const digits = Math.max(0, Math.min(6, significant - 1 - Math.floor(Math.log10(uncertainty))));
  return `${value.toFixed(digits)} ± ${uncertainty.toFixed(digits)}`;
}

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
