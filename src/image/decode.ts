/**
 * Reading micrographs: TIFF, PNG, JPEG and MRC2014 bytes into the one `GreyImage`.
 *
 * The format is found from the content (magic bytes), never from the extension alone. Each
 * format has its own strict reader (`decode-tiff.ts`, `decode-png.ts`, `decode-jpeg.ts`,
 * `decode-mrc.ts`); every one parses and checks its headers first, so sizes are held to the
 * pixel and decompressed-bytes budgets and truncated or damaged files are refused before any
 * pixel buffer is allocated, and then turns the pixels into grey row by row.
 */
import type { Budget, Decoded, Fail, ImageFormat } from './decode-common';
import { DEFAULT_MAX_DECOMPRESSED_BYTES, DEFAULT_MAX_PIXELS, ImageReadError, allocFrom, handleNonFinite } from './decode-common';
import { ImageDataError, readJpeg } from './decode-jpeg';
import { looksLikeMrcHeader, readMrc } from './decode-mrc';
import { readPng } from './decode-png';
import { type ByteSource, bytesSource, readTiff } from './decode-tiff';
import type { GreyImage } from './grey-image';
import { makeGreyImage } from './grey-image';
import type { Workspace } from './workspace';

export { DEFAULT_MAX_DECOMPRESSED_BYTES, DEFAULT_MAX_PIXELS, ImageReadError, LUMA_BT709, METADATA_REL_UNCERTAINTY } from './decode-common';
export type { ImageFormat } from './decode-common';
export { bytesSource, type ByteSource } from './decode-tiff';

/** What to do with NaN and infinite pixels (float TIFF, MRC modes 2 and 12). */
export type NonFinitePolicy = 'reject' | 'replace';

export interface DecodeOptions {
  /**
   * Largest image accepted, in pixels (width × height of the one plane read), checked from the
   * header before anything is allocated. Default 268,435,456 (16384²): 1 GiB as Float32Array.
   */
  maxPixels?: number;
  /**
   * Largest number of bytes the file's compressed image data may expand to (PNG image data,
   * TIFF LZW or Deflate strips and tiles, the JPEG decoder's working memory), checked from the
   * header before decompressing. Default 1 GiB.
   */
  maxDecompressedBytes?: number;
  /**
   * NaN or ±Infinity pixels: 'replace' (default) sets them to the median of the finite pixels and
   * adds a warning with the count, so the image is measured; 'reject' refuses the file, naming
   * how many there are.
   */
  nonFinite?: NonFinitePolicy;
  /**
   * Buffers to reuse for the pixels and the undecoded samples (see createWorkspace): the image
   * returned is then valid only until the next decode with the same workspace. Default: fresh
   * arrays.
   */
  workspace?: Workspace;
}

const EXTENSIONS: Record<string, ImageFormat> = {
  tif: 'tiff', tiff: 'tiff',
  png: 'png',
  jpg: 'jpeg', jpeg: 'jpeg', jpe: 'jpeg', jfif: 'jpeg',
  mrc: 'mrc', mrcs: 'mrc', map: 'mrc', st: 'mrc', ali: 'mrc', rec: 'mrc',
};

const FORMAT_NAME: Record<ImageFormat, string> = { tiff: 'TIFF', png: 'PNG', jpeg: 'JPEG', mrc: 'MRC' };

/** The format named by a file's extension, or null when the extension is not one we read. */
export function formatFromExtension(fileName: string): ImageFormat | null {
  const m = /\.([A-Za-z0-9]+)$/.exec(fileName);
  return m ? EXTENSIONS[m[1].toLowerCase()] ?? null : null;
}

/**
 * The format of a file from its first bytes: TIFF "II*\0"/"MM\0*" (TIFF 6.0 section 2), PNG's
 * 8-byte signature (PNG specification, 3rd ed., section 5.2), JPEG SOI + marker FF D8 FF
 * (ITU-T T.81 annex B), MRC "MAP " at byte 208 (MRC2014, Cheng et al. 2015). Null if none fits.
 */
export function detectFormat(bytes: Uint8Array): ImageFormat | null {
  const b = bytes;
  if (b.length >= 4 && ((b[0] === 0x49 && b[1] === 0x49 && b[2] === 42 && b[3] === 0) || (b[0] === 0x4d && b[1] === 0x4d && b[2] === 0 && b[3] === 42))) return 'tiff';
  if (b.length >= 8 && b[0] === 0x89 && b[1] === 0x50 && b[2] === 0x4e && b[3] === 0x47 && b[4] === 0x0d && b[5] === 0x0a && b[6] === 0x1a && b[7] === 0x0a) return 'png';
  if (b.length >= 3 && b[0] === 0xff && b[1] === 0xd8 && b[2] === 0xff) return 'jpeg';
  if (b.length >= 212 && b[208] === 0x4d && b[209] === 0x41 && b[210] === 0x50 && b[211] === 0x20) return 'mrc';
  return null;
}

/** True for a BigTIFF header ("II" 43 / "MM" 43, BigTIFF proposal), which this reader does not read. */
function isBigTiff(b: Uint8Array): boolean {
  return b.length >= 4 && ((b[0] === 0x49 && b[1] === 0x49 && b[2] === 43 && b[3] === 0) || (b[0] === 0x4d && b[1] === 0x4d && b[2] === 0 && b[3] === 43));
}

/**
 * Reads an image file into a GreyImage.
 *
 * @param bytes - the whole file.
 * @param fileName - the file's name, used for messages and to compare the extension with the content.
 * @param options - memory budgets and NaN policy, see {@link DecodeOptions}.
 * @returns the grey image with its calibration from metadata (or null) and the reader's warnings.
 * @throws ImageReadError for an empty, truncated, damaged, unknown, unsupported or oversized
 *   file; the message names the file and says what is wrong in the user's terms.
 *
 * Notes: TIFF (8/16-bit integer, 32-bit float; none, LZW, Deflate; predictors 1–3; strips or
 * tiles; first page), PNG (8/16-bit grey, grey+alpha, RGB, RGBA, 8-bit palette; every CRC and
 * the Adler-32 checked), JPEG (baseline/progressive 8-bit), MRC2014 (modes 0, 1, 2, 6, 12; first
 * section). Colour becomes grey with ITU-R BT.709 luma weights. Calibration: TIFF X/YResolution +
 * ResolutionUnit, PNG pHYs (metre), MRC cell/grid; default editor resolutions (72–600 dpi) and
 * unit-less values are reported as "not a calibration". The rules of each reader are in
 * docs/opening-images.md.
 * Reference: TIFF 6.0 (Adobe 1992); PNG specification (W3C, 3rd ed.); ITU-T T.81; MRC2014 (Cheng
 * et al., J. Struct. Biol. 192, 146, 2015).
 */
export function decodeImage(bytes: Uint8Array, fileName: string, options: DecodeOptions = {}): GreyImage {
  if (!(bytes instanceof Uint8Array)) throw new TypeError(`bytes must be a Uint8Array, got ${Object.prototype.toString.call(bytes)}`);
  return decodeFrom(bytes, bytesSource(bytes), fileName, options);
}

/**
 * Reads an image file by position (a file handle, a Blob read slice by slice) into a GreyImage:
 * a TIFF is decoded strip by strip (or tile by tile), so only its directories and one strip are
 * held besides the pixels, never the whole file; other formats are read whole and decoded as by
 * {@link decodeImage}.
 *
 * @param source - the file's length and a positional read (see ByteSource).
 * @param fileName - as for decodeImage.
 * @param options - as for decodeImage.
 * @returns the same image, warnings and calibration as decodeImage on the file's bytes.
 * @throws as decodeImage.
 * Reference: as decodeImage (TIFF 6.0 §2: directories and strips are located by offsets, so they
 * can be read where they lie).
 */
export function decodeImageSource(source: ByteSource, fileName: string, options: DecodeOptions = {}): GreyImage {
  if (!(source && Number.isInteger(source.length) && source.length >= 0 && typeof source.read === 'function')) {
    throw new TypeError(`source must have a non-negative integer length and a read(offset, length) function, got ${Object.prototype.toString.call(source)}`);
  }
  const head = source.read(0, Math.min(source.length, 8));
  if (detectFormat(head) === 'tiff') return decodeFrom(head, source, fileName, options);
  const all = source.read(0, source.length);
  return decodeFrom(all, bytesSource(all), fileName, options);
}

/** decodeImage's work: `bytes` tell the format (the whole file, or its first bytes when it is a TIFF read from `source`). */
function decodeFrom(bytes: Uint8Array, source: ByteSource, fileName: string, options: DecodeOptions): GreyImage {
  const fail: Fail = (reason) => {
    throw new ImageReadError(fileName, reason);
  };
  if (typeof fileName !== 'string') throw new TypeError(`fileName must be a string, got ${typeof fileName}`);
  const maxPixels = options.maxPixels ?? DEFAULT_MAX_PIXELS;
  if (!Number.isInteger(maxPixels) || maxPixels < 1) throw new RangeError(`maxPixels must be a positive integer, got ${maxPixels}`);
  const maxDecompressedBytes = options.maxDecompressedBytes ?? DEFAULT_MAX_DECOMPRESSED_BYTES;
  if (!Number.isInteger(maxDecompressedBytes) || maxDecompressedBytes < 1) throw new RangeError(`maxDecompressedBytes must be a positive integer, got ${maxDecompressedBytes}`);
  const nonFinite = options.nonFinite ?? 'replace';
  if (nonFinite !== 'reject' && nonFinite !== 'replace') throw new RangeError(`nonFinite must be 'reject' or 'replace', got '${nonFinite}'`);
  const budget: Budget = { maxPixels, maxDecompressedBytes };

  if (source.length === 0) fail('the file is empty');
  const byExtension = formatFromExtension(fileName);
  let format = detectFormat(bytes);
  const warnings: string[] = [];
  if (!format && byExtension === 'mrc' && looksLikeMrcHeader(bytes)) {
    format = 'mrc';
    warnings.push('no MRC2014 "MAP " signature at byte 208; read as an older MRC file');
  }
  if (!format) {
    if (isBigTiff(bytes)) fail('unsupported TIFF: BigTIFF (version 43) is not read; save the image as a classic TIFF');
    if (byExtension) {
      if (bytes.length < 16) fail(`truncated: ${bytes.length} bytes is too short for a ${FORMAT_NAME[byExtension]} file`);
      fail(`not a ${FORMAT_NAME[byExtension]} file: the content does not start with a ${FORMAT_NAME[byExtension]} signature`);
    }
    fail('unknown or unsupported format: the content is not TIFF, PNG, JPEG or MRC, and the extension is not one of .tif, .tiff, .png, .jpg, .jpeg, .mrc, .mrcs, .map');
  }
  if (byExtension && byExtension !== format) {
    warnings.push(`the content is ${FORMAT_NAME[format]} but the extension says ${FORMAT_NAME[byExtension]}; read as ${FORMAT_NAME[format]}`);
  } else if (!byExtension) {
    warnings.push(`the extension is not an image extension; the content is ${FORMAT_NAME[format]}`);
  }

  let decoded: Decoded;
  try {
    const alloc = allocFrom(options.workspace);
    if (format === 'tiff') decoded = readTiff(source, budget, fail, alloc);
    else if (format === 'png') decoded = readPng(bytes, budget, fail, alloc);
    else if (format === 'jpeg') decoded = readJpeg(bytes, budget, fail, alloc);
    else decoded = readMrc(bytes, budget, fail, alloc);
  } catch (e) {
    if (e instanceof ImageReadError) throw e;
    throw new ImageReadError(fileName, readerFailure(e, FORMAT_NAME[format]), { cause: e });
  }
  warnings.push(...decoded.warnings);
  if (decoded.mayBeNonFinite) handleNonFinite(decoded.data, nonFinite, warnings, fail);
  return makeGreyImage(decoded.width, decoded.height, decoded.data, {
    bitDepth: decoded.bitDepth,
    sampleKind: decoded.sampleKind,
    calibration: decoded.calibration,
    warnings,
  });
}

/** A reason in the user's terms for an error that a reader did not put in words itself (the error stays the cause). */
function readerFailure(e: unknown, formatName: string): string {
  if (e instanceof ImageDataError) return e.message;
  if (e instanceof RangeError && /allocation|Invalid typed array length|Array buffer/i.test(e.message)) {
    return `there is not enough memory to read this ${formatName} image; read a smaller crop of it, or free memory and try again`;
  }
  return `the ${formatName} data is damaged in a way the reader cannot place, so it cannot be decoded`;
}
