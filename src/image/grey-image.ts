/**
 * The one image representation shared by the core, the app, the CLI and the store.
 *
 * Pixels are held as 32-bit floats in row-major order (index = y * width + x), whatever the
 * file's own sample type, so every algorithm sees one kind of array. The original sample type
 * and the calibration travel with the pixels.
 */

/** Where a pixel size came from. */
export type CalibrationSource = 'metadata' | 'manual' | 'scale-bar' | 'standard' | 'profile';

/** Each calibration source in the user's words ("from file metadata", "from a scale bar"...). */
export const CALIBRATION_SOURCE_WORDS: Readonly<Record<CalibrationSource, string>> = Object.freeze({
  metadata: 'file metadata',
  manual: 'typed in',
  'scale-bar': 'scale bar',
  standard: 'lattice standard',
  profile: 'instrument profile',
});

/** A pixel size with its provenance and its relative standard uncertainty. */
export interface Calibration {
  /** Pixel size along x, in nanometres per pixel. */
  nmPerPx: number;
  /** Pixel size along y in nm per pixel when the pixels are not square; absent when square. */
  nmPerPxY?: number;
  /**
   * Shear of the pixel grid in degrees: how far the pixel axes deviate from a right angle on the
   * specimen (scan distortion); absent when there is none.
   */
  shearDeg?: number;
  /** Which route produced the value. */
  source: CalibrationSource;
  /** Relative standard uncertainty of nmPerPx (k = 1), e.g. 0.05 for 5 %: the root-sum-square of `parts`. */
  relUncertainty: number;
  /** What relUncertainty is made of, each a relative standard uncertainty (k = 1); absent in older records. */
  parts?: CalibrationUncertaintyPart[];
  /** Readable detail: the tag read, the standard used, the profile's name. */
  detail: string;
}

/** One named part of a calibration's relative standard uncertainty. */
export interface CalibrationUncertaintyPart {
  /** What it is, in the user's words (e.g. "bar end location", "label rounding", "standard's spacing"). */
  name: string;
  /** Relative standard uncertainty (k = 1). */
  rel: number;
  /** Type A (statistical, from the image) or type B (other knowledge: a bound, a certificate). */
  type: 'A' | 'B';
}

/** Sample type of the file the image came from. */
export type SampleKind = 'uint' | 'int' | 'float';

/**
 * Grey pixels as stored: in the file's own integer type where every value fits exactly (8- and
 * 16-bit grey files), else float32. A 16-bit image takes half the memory of float32 pixels, and
 * its grey values are the same numbers. Read them as numbers; write only into float32 arrays you made.
 */
export type PixelArray = Float32Array | Uint16Array | Int16Array | Uint8Array;

/** The storage of a {@link PixelArray}, by name. */
export type PixelStorage = 'uint8' | 'uint16' | 'int16' | 'float32';

/**
 * A new pixel array of the given storage, filled with zeros.
 * @param storage - the element type.
 * @param length - number of pixels.
 * @returns the array.
 */
export function newPixels(storage: PixelStorage, length: number): PixelArray {
  switch (storage) {
    case 'uint8': return new Uint8Array(length);
    case 'uint16': return new Uint16Array(length);
    case 'int16': return new Int16Array(length);
    case 'float32': return new Float32Array(length);
    default: throw new RangeError(`pixel storage must be uint8, uint16, int16 or float32, got ${String(storage)}`);
  }
}

/**
 * The storage of a pixel array.
 * @param data - the pixels.
 * @returns its storage's name.
 */
export function storageOf(data: PixelArray): PixelStorage {
  if (data instanceof Uint8Array) return 'uint8';
  if (data instanceof Uint16Array) return 'uint16';
  if (data instanceof Int16Array) return 'int16';
  return 'float32';
}

/** True when value is a pixel array of a storage the core reads. */
export function isPixelArray(value: unknown): value is PixelArray {
  return value instanceof Float32Array || value instanceof Uint16Array || value instanceof Int16Array || value instanceof Uint8Array;
}

export interface GreyImage {
  /** Width in pixels (columns). */
  width: number;
  /** Height in pixels (rows). */
  height: number;
  /** Grey values, row-major, length width * height. */
  data: PixelArray;
  /** Bits per sample in the original file (8, 16 or 32). */
  bitDepth: number;
  /** Sample type in the original file. */
  sampleKind: SampleKind;
  /** Smallest finite value in data. */
  min: number;
  /** Largest finite value in data. */
  max: number;
  /** Pixel size, or null when the file carries no physical calibration. */
  calibration: Calibration | null;
  /** Notes for the user made while reading (e.g. a 72 dpi tag that is not a calibration). */
  warnings: string[];
}

/** Builds a GreyImage from pixels, computing the value range; rejects a length mismatch. */
export function makeGreyImage(
  width: number,
  height: number,
  data: PixelArray,
  fields: Partial<Omit<GreyImage, 'width' | 'height' | 'data' | 'min' | 'max'>> = {},
): GreyImage {
  if (!Number.isInteger(width) || width < 1) throw new RangeError(`width must be a positive integer, got ${width}`);
  if (!Number.isInteger(height) || height < 1) throw new RangeError(`height must be a positive integer, got ${height}`);
  if (data.length !== width * height) {
    throw new RangeError(`data length ${data.length} does not match ${width} × ${height} = ${width * height}`);
  }
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < data.length; i++) {
    const v = data[i];
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return {
    width,
    height,
    data,
    bitDepth: fields.bitDepth ?? 32,
    sampleKind: fields.sampleKind ?? 'float',
    min,
    max,
    calibration: fields.calibration ?? null,
    warnings: fields.warnings ?? [],
  };
}
