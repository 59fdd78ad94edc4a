/**
 * What the per-format image readers share: the error type, the budgets, the grey writer that
 * turns rows of samples into the one grey image, and calibration from resolution metadata.
 */
import { newPixels, type Calibration, type PixelArray, type PixelStorage, type SampleKind } from './grey-image';
import type { Workspace } from './workspace';
import { INDICATED_MAGNIFICATION_REL, makeCalibration } from '../calibration/calibration';

/** A file that cannot be read; the message is `"<fileName>: <reason>"`. */
export class ImageReadError extends Error {
  override name = 'ImageReadError';
  /** The file name as given to the reader. */
  readonly fileName: string;
  /** The reason alone, without the file name. */
  readonly reason: string;
  constructor(fileName: string, reason: string, options?: { cause?: unknown }) {
    super(`${fileName}: ${reason}`, options);
    this.fileName = fileName;
    this.reason = reason;
  }
}

/** File formats the reader knows. */
export type ImageFormat = 'tiff' | 'png' | 'jpeg' | 'mrc';

/** Stops reading with a reason in the user's terms (the caller adds the file name). */
export type Fail = (reason: string) => never;

/** Default pixel budget: 16384² pixels (1 GiB as Float32Array). */
export const DEFAULT_MAX_PIXELS = 16384 * 16384;
/**
 * Default budget of bytes a file's compressed image data may expand to (PNG IDAT, TIFF LZW and
 * Deflate strips and tiles, the JPEG decoder's working memory): 1 GiB.
 */
export const DEFAULT_MAX_DECOMPRESSED_BYTES = 2 ** 30;

/** The limits a reader works within, checked from the header before anything is allocated. */
export interface Budget {
  /** Largest width × height of the plane read. */
  maxPixels: number;
  /** Largest number of bytes compressed data may expand to, over the whole image. */
  maxDecompressedBytes: number;
}

/**
 * Relative standard uncertainty given to a pixel size read from file metadata. The value in
 * the file comes from the indicated magnification, which is reproducible to about ±5 % (EMSA
 * abstract "Magnification determination for high resolution electron microscopy").
 */
export const METADATA_REL_UNCERTAINTY = INDICATED_MAGNIFICATION_REL;

/**
 * ITU-R BT.709 luma weights, used to turn RGB into grey (ITU-R Recommendation BT.709-6, item 3.2).
 * They sum to 1, so an image with R = G = B keeps its values.
 */
export const LUMA_BT709 = { r: 0.2126, g: 0.7152, b: 0.0722 } as const;

/** Largest expansion of a Deflate stream: 258 bytes from a 2-bit code, about 1032:1 (RFC 1951). */
export const DEFLATE_MAX_RATIO = 1032;

/**
 * Resolutions that editors, plotting libraries, scanners and cameras write by default, in pixels
 * per inch (matched within ±0.5 %, which also catches the rounded per-cm and per-metre forms):
 * not a calibration (common practice).
 */
const DEFAULT_DPI = [72, 96, 100, 150, 200, 240, 300, 400, 600, 1200];
/**
 * Pixel sizes outside this range are not a physical calibration of an electron micrograph
 * (common practice): above 10 µm a pixel is a print or screen resolution (every default dpi
 * lies there), below 1 pm it is below any instrument's sampling.
 */
export const MAX_CALIBRATED_NM_PER_PX = 1e4; // 10 µm
export const MIN_CALIBRATED_NM_PER_PX = 1e-3; // 1 pm

export const NM_PER_INCH = 25.4e6; // 1 inch = 25.4 mm exactly (international yard and pound agreement, 1959)
export const NM_PER_CM = 1e7;
export const NM_PER_M = 1e9;

/** Pixels before conversion, with what the reader learned from the header. */
export interface Decoded {
  width: number;
  height: number;
  data: PixelArray;
  bitDepth: number;
  sampleKind: SampleKind;
  calibration: Calibration | null;
  warnings: string[];
  /** True for float data, which may hold NaN or infinities. */
  mayBeNonFinite: boolean;
}

/**
 * The storage that holds every grey value of a file exactly.
 * @param bits - bits per sample in the file.
 * @param kind - the file's sample type.
 * @param colour - true when the grey values may be a weighted sum of colour samples (luma).
 * @returns 'uint8' or 'uint16' for unsigned 8- or 16-bit grey, 'int16' for signed 8- or 16-bit
 * grey, else 'float32'.
 */
export function pixelStorage(bits: number, kind: SampleKind, colour: boolean): PixelStorage {
  if (colour || kind === 'float') return 'float32';
  if (bits === 8) return kind === 'uint' ? 'uint8' : 'int16';
  if (bits === 16) return kind === 'uint' ? 'uint16' : 'int16';
  return 'float32';
}

/** Where a reader takes its large arrays from: fresh ones, or a workspace's. */
export interface Alloc {
  /** The grey pixels in the given storage (every element is written). */
  grey(pixels: number, storage: PixelStorage): PixelArray;
  /** Working bytes (a strip, a tile, a row); byteOffset 0; contents unspecified. */
  raw(byteLength: number): Uint8Array;
}

/**
 * Large arrays from a workspace or fresh.
 * @param workspace - buffers to reuse, or undefined for fresh arrays.
 * @returns the allocator the readers use.
 */
export function allocFrom(workspace: Workspace | undefined): Alloc {
  if (!workspace) return { grey: (n, storage) => newPixels(storage, n), raw: (n) => new Uint8Array(n) };
  return { grey: (n, storage) => workspace.pixels('decode-grey', storage, n), raw: (n) => workspace.bytes('decode-raw', n) };
}

/** A byte count for messages: exact bytes, with MiB or GiB beside large ones. */
export function bytesText(n: number): string {
  if (n >= 2 ** 30) return `${n} bytes (${(n / 2 ** 30).toFixed(2)} GiB)`;
  if (n >= 2 ** 20) return `${n} bytes (${(n / 2 ** 20).toFixed(1)} MiB)`;
  return `${n} bytes`;
}

/**
 * Checks a declared image size against the pixel budget, before any allocation.
 * @param width - declared width.
 * @param height - declared height.
 * @param budget - the limits.
 * @param fail - stops reading with a reason.
 * @param what - where the size was read (e.g. "PNG IHDR chunk").
 */
export function checkSize(width: number, height: number, budget: Budget, fail: Fail, what: string): void {
  if (!Number.isFinite(width) || !Number.isFinite(height) || width <= 0 || height <= 0 || !Number.isInteger(width) || !Number.isInteger(height)) {
    fail(`invalid image size ${width} × ${height} in the ${what}`);
  }
  if (width * height > budget.maxPixels) {
    fail(`image of ${width} × ${height} = ${width * height} pixels is over the memory budget of ${budget.maxPixels} pixels`);
  }
}

/**
 * Checks how many bytes compressed data will expand to against the decompressed-bytes budget.
 * @param bytes - the decompressed size the header implies.
 * @param budget - the limits.
 * @param fail - stops reading with a reason.
 * @param what - what expands (e.g. "the PNG image data of 16384 × 16384 RGBA pixels").
 */
export function checkDecompressed(bytes: number, budget: Budget, fail: Fail, what: string): void {
  if (!(bytes <= budget.maxDecompressedBytes)) {
    fail(`${what} would decompress to ${bytesText(bytes)}, over the limit of ${bytesText(budget.maxDecompressedBytes)}`);
  }
}

/**
 * Replaces or refuses NaN and infinite pixels.
 * @param data - the grey pixels (changed in place with 'replace').
 * @param policy - 'reject' or 'replace'.
 * @param warnings - receives a note of what was replaced.
 * @param fail - stops reading with a reason.
 */
export function handleNonFinite(data: PixelArray, policy: 'reject' | 'replace', warnings: string[], fail: Fail): void {
  let bad = 0;
  for (let i = 0; i < data.length; i++) if (!Number.isFinite(data[i])) bad++;
  if (bad === 0) return;
  if (policy === 'reject') {
    fail(`${bad} of ${data.length} pixels are NaN or infinite (refused on request; by default they are set to the median of the finite pixels)`);
  }
  const finite = new Float32Array(data.length - bad);
  let n = 0;
  for (let i = 0; i < data.length; i++) if (Number.isFinite(data[i])) finite[n++] = data[i];
  if (n === 0) fail(`all ${data.length} pixels are NaN or infinite`);
  finite.sort();
  const median = n % 2 ? finite[(n - 1) / 2] : (finite[n / 2 - 1] + finite[n / 2]) / 2;
  for (let i = 0; i < data.length; i++) if (!Number.isFinite(data[i])) data[i] = median;
  warnings.push(`${bad} NaN or infinite pixels were replaced by the median of the finite pixels (${median})`);
}

/** Options of a {@link GreyWriter}. */
export interface GreyWriterOptions {
  /** Samples per pixel in the rows written. */
  spp: number;
  /** True when samples 0–2 are red, green and blue. */
  colour: boolean;
  /** True when the last sample of each pixel is alpha (counted for a warning, otherwise ignored). */
  hasAlpha: boolean;
  /** The opaque alpha value (NaN: do not count transparent pixels). */
  alphaMax: number;
  /** How the grey values are stored (default float32; colour files are always float32, for luma). */
  storage?: PixelStorage;
}

/**
 * Turns rows of interleaved samples into grey pixels as they are decoded, so that no reader has
 * to hold the whole undecoded image.
 *
 * Grey files give channel 0; colour files give channel 0 when R = G = B in every pixel, else
 * ITU-R BT.709 luma (pixels written before the first coloured one are converted then, exactly as
 * if luma had been taken from the start). Alpha is counted for a warning and otherwise ignored.
 */
export class GreyWriter {
  readonly data: PixelArray;
  private readonly spp: number;
  private readonly colour: boolean;
  private readonly alphaIndex: number;
  private readonly alphaMax: number;
  private coloured = false;
  /** (start, count, step) of each run written while every colour pixel so far was grey. */
  private runs: number[] = [];
  private transparent = 0;

  /**
   * @param pixels - width × height.
   * @param options - sample layout.
   * @param alloc - where the pixel array comes from.
   */
  constructor(pixels: number, options: GreyWriterOptions, alloc: Alloc) {
    this.data = alloc.grey(pixels, options.colour && options.spp >= 3 ? 'float32' : options.storage ?? 'float32');
    this.spp = options.spp;
    this.colour = options.colour && options.spp >= 3;
    this.alphaIndex = options.hasAlpha && options.spp > 1 && !Number.isNaN(options.alphaMax) ? options.spp - 1 : -1;
    this.alphaMax = options.alphaMax;
  }

  /**
   * Writes n pixels.
   * @param samples - interleaved samples.
   * @param s0 - index of the first pixel's first sample.
   * @param n - pixels to write.
   * @param start - index in the image of the first pixel.
   * @param step - index step between consecutive pixels (1 in a row; the pass step of Adam7).
   */
  write(samples: ArrayLike<number>, s0: number, n: number, start: number, step = 1): void {
    const out = this.data;
    const spp = this.spp;
    if (this.alphaIndex >= 0) {
      const a = this.alphaIndex;
      for (let k = 0, j = s0; k < n; k++, j += spp) if (samples[j + a] !== this.alphaMax) this.transparent++;
    }
    if (spp === 1) {
      for (let k = 0; k < n; k++) out[start + k * step] = samples[s0 + k];
      return;
    }
    if (!this.colour) {
      for (let k = 0, j = s0; k < n; k++, j += spp) out[start + k * step] = samples[j];
      return;
    }
    let k = 0;
    if (!this.coloured) {
      for (let j = s0; k < n; k++, j += spp) {
        const v = samples[j];
        if (v !== samples[j + 1] || v !== samples[j + 2]) break;
        out[start + k * step] = v;
      }
      this.runs.push(start, k, step);
      if (k === n) return;
      this.coloured = true;
      this.toLuma();
    }
    const { r, g, b } = LUMA_BT709;
    for (let j = s0 + k * spp; k < n; k++, j += spp) out[start + k * step] = r * samples[j] + g * samples[j + 1] + b * samples[j + 2];
  }

  /** Converts the pixels written while all were grey (R = G = B = v) to luma, as the formula gives for them. */
  private toLuma(): void {
    const { r, g, b } = LUMA_BT709;
    const out = this.data;
    const runs = this.runs;
    for (let i = 0; i < runs.length; i += 3) {
      const [start, count, step] = [runs[i], runs[i + 1], runs[i + 2]];
      for (let k = 0; k < count; k++) {
        const v = out[start + k * step];
        out[start + k * step] = r * v + g * v + b * v;
      }
    }
    this.runs = [];
  }

  /**
   * The grey pixels, with the notes on colour and alpha added to warnings.
   * @param warnings - receives the notes.
   * @returns the pixel array.
   */
  finish(warnings: string[]): PixelArray {
    if (this.colour) {
      if (this.coloured) warnings.push('colour image converted to grey with the ITU-R BT.709 luma weights 0.2126 R + 0.7152 G + 0.0722 B');
      else warnings.push('colour image with R = G = B in every pixel: read the grey values as they are');
    }
    if (this.transparent > 0) warnings.push(`alpha channel ignored (${this.transparent} pixels are not fully opaque)`);
    return this.data;
  }
}

/**
 * A calibration from resolution metadata (pixels per unit), or null with a "not a calibration"
 * warning when the values are unit-less, an editor's default dpi, or physically implausible.
 * @param pxPerUnitX - pixels per unit along x.
 * @param pxPerUnitY - pixels per unit along y.
 * @param nmPerUnit - nm in one unit, or null for a unit-less value.
 * @param unitName - the unit's name for messages.
 * @param detail - where the values were read.
 * @param warnings - receives the "not a calibration" notes.
 * @returns the calibration, or null.
 */
export function resolutionCalibration(
  pxPerUnitX: number,
  pxPerUnitY: number,
  nmPerUnit: number | null,
  unitName: string,
  detail: string,
  warnings: string[],
): Calibration | null {
  if (nmPerUnit === null) {
    warnings.push(`not a calibration: ${detail} has no absolute unit (${unitName}); pixel size unknown`);
    return null;
  }
  if (!(pxPerUnitX > 0) || !(pxPerUnitY > 0) || !Number.isFinite(pxPerUnitX) || !Number.isFinite(pxPerUnitY)) {
    warnings.push(`not a calibration: ${detail} holds ${pxPerUnitX} × ${pxPerUnitY} pixels per ${unitName}`);
    return null;
  }
  for (const v of [pxPerUnitX, pxPerUnitY]) {
    const dpi = v * (NM_PER_INCH / nmPerUnit);
    const near = DEFAULT_DPI.find((d) => Math.abs(dpi - d) <= 0.005 * d);
    if (near !== undefined) {
      warnings.push(`not a calibration: ${detail} is ${fmt(v)} pixels per ${unitName} (${near} dpi), a default of editors and cameras`);
      return null;
    }
  }
  const nmPerPx = nmPerUnit / pxPerUnitX;
  const nmPerPxY = nmPerUnit / pxPerUnitY;
  for (const s of [nmPerPx, nmPerPxY]) {
    if (s > MAX_CALIBRATED_NM_PER_PX || s < MIN_CALIBRATED_NM_PER_PX) {
      warnings.push(`not a calibration: ${detail} gives ${fmt(s)} nm per pixel, outside 1 pm to 10 µm`);
      return null;
    }
  }
  return metadataCalibration(
    nmPerPx,
    `${detail}: ${fmt(pxPerUnitX)}${pxPerUnitY !== pxPerUnitX ? ` × ${fmt(pxPerUnitY)}` : ''} pixels per ${unitName}`,
    Math.abs(nmPerPxY - nmPerPx) > 1e-9 * nmPerPx ? nmPerPxY : undefined,
  );
}

/** A number to six significant digits, without trailing zeros. */
export function fmt(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

/** Byte order of this machine (typed arrays use it). */
export const HOST_LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/**
 * A pixel size read from a file's metadata, with its one uncertainty part: the indicated
 * magnification's reproducibility (type B, INDICATED_MAGNIFICATION_REL).
 * @param nmPerPx along x; @param detail the tags read; @param nmPerPxY along y when the pixels are not square
 */
export function metadataCalibration(nmPerPx: number, detail: string, nmPerPxY?: number): Calibration {
  return makeCalibration(nmPerPx, 'metadata', detail, [{ name: 'indicated magnification', rel: METADATA_REL_UNCERTAINTY, type: 'B' }], nmPerPxY === undefined ? {} : { nmPerPxY });
}
