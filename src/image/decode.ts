/**
 * Reading micrographs: TIFF, PNG, JPEG and MRC2014 bytes into the one `GreyImage`.
 *
 * The format is found from the content (magic bytes), never from the extension alone. Every
 * header is parsed here first, so sizes are checked against the memory budget and truncated
 * files are refused before any pixel buffer is allocated; only then are the pixels decoded
 * (TIFF strips and MRC here; TIFF tiles, predictors and WhiteIsZero by the `tiff` package; PNG
 * and JPEG by image-js).
 */
import { decode as decodeRaster } from 'image-js';
import { unzlibSync } from 'fflate';
import { decode as decodeTiffPages } from 'tiff';
import { decompressLzw } from './lzw';
import type { Calibration, GreyImage, SampleKind } from './grey-image';
import { makeGreyImage } from './grey-image';
import type { Workspace } from './workspace';

/** A file that cannot be read; the message is `"<fileName>: <reason>"`. */
export class ImageReadError extends Error {
  override name = 'ImageReadError';
  /** The file name as given to the reader. */
  readonly fileName: string;
  /** The reason alone, without the file name. */
  readonly reason: string;
  constructor(fileName: string, reason: string) {
    super(`${fileName}: ${reason}`);
    this.fileName = fileName;
    this.reason = reason;
  }
}

/** File formats the reader knows. */
export type ImageFormat = 'tiff' | 'png' | 'jpeg' | 'mrc';

/** What to do with NaN and infinite pixels (float TIFF, MRC modes 2 and 12). */
export type NonFinitePolicy = 'reject' | 'replace';

export interface DecodeOptions {
  /**
   * Largest image accepted, in pixels (width × height of the one plane read), checked from the
   * header before anything is allocated. Default 268,435,456 (16384²): 1 GiB as Float32Array.
   */
  maxPixels?: number;
  /**
   * NaN or ±Infinity pixels: 'reject' (default) refuses the file, naming how many there are;
   * 'replace' sets them to the median of the finite pixels and adds a warning with the count.
   */
  nonFinite?: NonFinitePolicy;
  /**
   * Buffers to reuse for the pixels and the undecoded samples (see createWorkspace): the image
   * returned is then valid only until the next decode with the same workspace. Default: fresh
   * arrays.
   */
  workspace?: Workspace;
}

/** Default memory budget: 16384² pixels. */
export const DEFAULT_MAX_PIXELS = 16384 * 16384;

/**
 * Relative standard uncertainty given to a pixel size read from file metadata. The value in
 * the file comes from the indicated magnification, which is reproducible to about ±5 % (EMSA
 * abstract "Magnification determination for high resolution electron microscopy").
 */
export const METADATA_REL_UNCERTAINTY = 0.05;

/**
 * ITU-R BT.709 luma weights, used to turn RGB into grey (ITU-R Recommendation BT.709-6, item 3.2).
 * They sum to 1, so an image with R = G = B keeps its values.
 */
export const LUMA_BT709 = { r: 0.2126, g: 0.7152, b: 0.0722 } as const;

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
const MAX_CALIBRATED_NM_PER_PX = 1e4; // 10 µm
const MIN_CALIBRATED_NM_PER_PX = 1e-3; // 1 pm

/** Largest expansion of a Deflate stream: 258 bytes from a 2-bit code, about 1032:1 (RFC 1951). */
const DEFLATE_MAX_RATIO = 1032;

const NM_PER_INCH = 25.4e6; // 1 inch = 25.4 mm exactly (international yard and pound agreement, 1959)
const NM_PER_CM = 1e7;
const NM_PER_M = 1e9;

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

/** Pixels before conversion, with what the reader learned from the header. */
interface Decoded {
  width: number;
  height: number;
  data: Float32Array;
  bitDepth: number;
  sampleKind: SampleKind;
  calibration: Calibration | null;
  warnings: string[];
  /** True for float data, which may hold NaN or infinities. */
  mayBeNonFinite: boolean;
}

type Fail = (reason: string) => never;

/** Where a reader takes its large arrays from: fresh ones, or a workspace's. */
interface Alloc {
  /** The grey pixels (every element is written). */
  grey(pixels: number): Float32Array;
  /** Undecoded sample bytes (every byte is written); byteOffset 0. */
  raw(byteLength: number): Uint8Array;
}

function allocFrom(workspace: Workspace | undefined): Alloc {
  if (!workspace) return { grey: (n) => new Float32Array(n), raw: (n) => new Uint8Array(n) };
  return { grey: (n) => workspace.float32('decode-grey', n), raw: (n) => workspace.bytes('decode-raw', n) };
}

/**
 * Reads an image file into a GreyImage.
 *
 * @param bytes - the whole file.
 * @param fileName - the file's name, used for messages and to compare the extension with the content.
 * @param options - memory budget and NaN policy, see {@link DecodeOptions}.
 * @returns the grey image with its calibration from metadata (or null) and the reader's warnings.
 * @throws ImageReadError for an empty, truncated, unknown, unsupported, oversized or invalid file.
 *
 * Notes: TIFF (8/16-bit integer, 32-bit float; none, LZW, Deflate; first page), PNG (8/16-bit grey,
 * grey+alpha, RGB, RGBA, 8-bit palette), JPEG (baseline/progressive 8-bit), MRC2014 (modes 0, 1,
 * 2, 6, 12; first section). Colour becomes grey with ITU-R BT.709 luma weights. Calibration:
 * TIFF X/YResolution + ResolutionUnit, PNG pHYs (metre), MRC cell/grid; default editor
 * resolutions (72–600 dpi) and unit-less values are reported as "not a calibration".
 * Reference: TIFF 6.0 (Adobe 1992); PNG specification (W3C, 3rd ed.); MRC2014 (Cheng et al.,
 * J. Struct. Biol. 192, 146, 2015).
 */
export function decodeImage(bytes: Uint8Array, fileName: string, options: DecodeOptions = {}): GreyImage {
  const fail: Fail = (reason) => {
    throw new ImageReadError(fileName, reason);
  };
  if (!(bytes instanceof Uint8Array)) throw new TypeError(`bytes must be a Uint8Array, got ${Object.prototype.toString.call(bytes)}`);
  if (typeof fileName !== 'string') throw new TypeError(`fileName must be a string, got ${typeof fileName}`);
  const maxPixels = options.maxPixels ?? DEFAULT_MAX_PIXELS;
  if (!Number.isInteger(maxPixels) || maxPixels < 1) throw new RangeError(`maxPixels must be a positive integer, got ${maxPixels}`);
  const nonFinite = options.nonFinite ?? 'reject';
  if (nonFinite !== 'reject' && nonFinite !== 'replace') throw new RangeError(`nonFinite must be 'reject' or 'replace', got '${nonFinite}'`);

  if (bytes.length === 0) fail('the file is empty');
  const byExtension = formatFromExtension(fileName);
  let format = detectFormat(bytes);
  const warnings: string[] = [];
  if (!format && byExtension === 'mrc' && looksLikeMrcHeader(bytes)) {
    format = 'mrc';
    warnings.push('no MRC2014 "MAP " signature at byte 208; read as an older MRC file');
  }
  if (!format) {
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
    if (format === 'tiff') decoded = readTiff(bytes, maxPixels, fail, alloc);
    else if (format === 'png') decoded = readPng(bytes, maxPixels, fail, alloc);
    else if (format === 'jpeg') decoded = readJpeg(bytes, maxPixels, fail, alloc);
    else decoded = readMrc(bytes, maxPixels, fail, alloc);
  } catch (e) {
    if (e instanceof ImageReadError) throw e;
    const message = e instanceof Error ? e.message : String(e);
    fail(`cannot decode the ${FORMAT_NAME[format]} data (corrupt or unsupported): ${message}`);
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

// ---------------------------------------------------------------------------------------------
// Shared routines

function checkSize(width: number, height: number, maxPixels: number, fail: Fail, what: string): void {
  if (!Number.isFinite(width) || !Number.isFinite(height) || width <= 0 || height <= 0 || !Number.isInteger(width) || !Number.isInteger(height)) {
    fail(`invalid image size ${width} × ${height} in the ${what}`);
  }
  if (width * height > maxPixels) {
    fail(`image of ${width} × ${height} = ${width * height} pixels is over the memory budget of ${maxPixels} pixels`);
  }
}

function handleNonFinite(data: Float32Array, policy: NonFinitePolicy, warnings: string[], fail: Fail): void {
  let bad = 0;
  for (let i = 0; i < data.length; i++) if (!Number.isFinite(data[i])) bad++;
  if (bad === 0) return;
  if (policy === 'reject') {
    fail(`${bad} of ${data.length} pixels are NaN or infinite (read with nonFinite 'replace' to set them to the median of the finite pixels)`);
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

/**
 * Grey from interleaved samples (spp per pixel). Grey files (colour false) give channel 0; colour
 * files give channel 0 when R = G = B everywhere, else BT.709 luma. With hasAlpha, the last
 * sample is alpha, counted for the warning and otherwise ignored.
 */
function toGrey(
  samples: ArrayLike<number>,
  pixels: number,
  spp: number,
  warnings: string[],
  hasAlpha: boolean,
  alphaMax: number,
  colour: boolean,
  alloc: Alloc,
): Float32Array {
  const out = alloc.grey(pixels);
  if (spp === 1) {
    for (let i = 0; i < pixels; i++) out[i] = samples[i];
    return out;
  }
  let transparent = 0;
  if (hasAlpha && !Number.isNaN(alphaMax)) {
    const a = spp - 1;
    for (let i = 0; i < pixels; i++) if (samples[i * spp + a] !== alphaMax) transparent++;
  }
  if (!colour) {
    for (let i = 0; i < pixels; i++) out[i] = samples[i * spp];
  } else {
    let equal = true;
    for (let i = 0; i < pixels && equal; i++) {
      const j = i * spp;
      if (samples[j] !== samples[j + 1] || samples[j] !== samples[j + 2]) equal = false;
    }
    if (equal) {
      for (let i = 0; i < pixels; i++) out[i] = samples[i * spp];
      warnings.push('colour image with R = G = B in every pixel: read the grey values as they are');
    } else {
      const { r, g, b } = LUMA_BT709;
      for (let i = 0; i < pixels; i++) {
        const j = i * spp;
        out[i] = r * samples[j] + g * samples[j + 1] + b * samples[j + 2];
      }
      warnings.push('colour image converted to grey with the ITU-R BT.709 luma weights 0.2126 R + 0.7152 G + 0.0722 B');
    }
  }
  if (transparent > 0) warnings.push(`alpha channel ignored (${transparent} pixels are not fully opaque)`);
  return out;
}

/**
 * A calibration from resolution metadata (pixels per unit), or null with a "not a calibration"
 * warning when the values are unit-less, an editor's default dpi, or physically implausible.
 */
function resolutionCalibration(
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
  const cal: Calibration = {
    nmPerPx,
    source: 'metadata',
    relUncertainty: METADATA_REL_UNCERTAINTY,
    detail: `${detail}: ${fmt(pxPerUnitX)}${pxPerUnitY !== pxPerUnitX ? ` × ${fmt(pxPerUnitY)}` : ''} pixels per ${unitName}`,
  };
  if (Math.abs(nmPerPxY - nmPerPx) > 1e-9 * nmPerPx) cal.nmPerPxY = nmPerPxY;
  return cal;
}

function fmt(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

// ---------------------------------------------------------------------------------------------
// TIFF: TIFF Revision 6.0 (Adobe, 1992)

const TIFF_TYPE_SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4 };

interface TiffEntry {
  type: number;
  count: number;
  /** Byte offset of the value(s) in the file. */
  at: number;
}

class TiffHeader {
  readonly view: DataView;
  readonly le: boolean;
  constructor(readonly bytes: Uint8Array, readonly fail: Fail) {
    this.view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    this.le = bytes[0] === 0x49;
  }
  u16(at: number): number {
    if (at + 2 > this.bytes.length) this.fail(`truncated: the TIFF header points to byte ${at}, past the end (${this.bytes.length} bytes)`);
    return this.view.getUint16(at, this.le);
  }
  u32(at: number): number {
    if (at + 4 > this.bytes.length) this.fail(`truncated: the TIFF header points to byte ${at}, past the end (${this.bytes.length} bytes)`);
    return this.view.getUint32(at, this.le);
  }
  /** Reads one IFD's entries; returns them and the next IFD offset. */
  ifd(offset: number): { entries: Map<number, TiffEntry>; next: number } {
    const n = this.u16(offset);
    if (offset + 2 + n * 12 + 4 > this.bytes.length) this.fail(`truncated: the TIFF directory at byte ${offset} runs past the end of the file`);
    const entries = new Map<number, TiffEntry>();
    for (let i = 0; i < n; i++) {
      const e = offset + 2 + i * 12;
      const tag = this.u16(e);
      const type = this.u16(e + 2);
      const count = this.u32(e + 4);
      const size = TIFF_TYPE_SIZE[type];
      if (size === undefined) continue; // unknown type: skip the entry (TIFF 6.0 section 2)
      const total = size * count;
      const at = total <= 4 ? e + 8 : this.u32(e + 8);
      if (at + total > this.bytes.length) this.fail(`truncated: TIFF tag ${tag} points to bytes ${at}–${at + total}, past the end (${this.bytes.length} bytes)`);
      entries.set(tag, { type, count, at });
    }
    return { entries, next: this.u32(offset + 2 + n * 12) };
  }
  numbers(e: TiffEntry | undefined): number[] {
    if (!e) return [];
    const out: number[] = [];
    for (let i = 0; i < e.count; i++) {
      switch (e.type) {
        case 1: case 7: out.push(this.bytes[e.at + i]); break;
        case 3: out.push(this.view.getUint16(e.at + 2 * i, this.le)); break;
        case 4: case 13: out.push(this.view.getUint32(e.at + 4 * i, this.le)); break;
        case 5: {
          const num = this.view.getUint32(e.at + 8 * i, this.le);
          const den = this.view.getUint32(e.at + 8 * i + 4, this.le);
          out.push(den === 0 ? NaN : num / den);
          break;
        }
        case 6: out.push(this.view.getInt8(e.at + i)); break;
        case 8: out.push(this.view.getInt16(e.at + 2 * i, this.le)); break;
        case 9: out.push(this.view.getInt32(e.at + 4 * i, this.le)); break;
        case 10: {
          const den = this.view.getInt32(e.at + 8 * i + 4, this.le);
          out.push(den === 0 ? NaN : this.view.getInt32(e.at + 8 * i, this.le) / den);
          break;
        }
        case 11: out.push(this.view.getFloat32(e.at + 4 * i, this.le)); break;
        case 12: out.push(this.view.getFloat64(e.at + 8 * i, this.le)); break;
        default: break;
      }
    }
    return out;
  }
}

// Tag numbers, TIFF 6.0 sections 8 and 15–19.
const T = {
  width: 256, height: 257, bits: 258, compression: 259, photometric: 262, stripOffsets: 273,
  spp: 277, rowsPerStrip: 278, stripByteCounts: 279, xRes: 282, yRes: 283, planar: 284,
  resUnit: 296, orientation: 274, predictor: 317, tileWidth: 322, tileLength: 323, tileOffsets: 324,
  tileByteCounts: 325, extraSamples: 338, sampleFormat: 339,
} as const;

function readTiff(bytes: Uint8Array, maxPixels: number, fail: Fail, alloc: Alloc): Decoded {
  if (bytes.length < 8) fail(`truncated: ${bytes.length} bytes is shorter than the 8-byte TIFF header`);
  const h = new TiffHeader(bytes, fail);
  const first = h.u32(4);
  if (first < 8) fail(`invalid TIFF: first directory offset ${first}`);
  const { entries, next } = h.ifd(first);
  const warnings: string[] = [];
  const one = (tag: number, dflt?: number): number => {
    const v = h.numbers(entries.get(tag));
    if (v.length === 0) {
      if (dflt === undefined) fail(`invalid TIFF: required tag ${tag} is missing`);
      return dflt;
    }
    return v[0];
  };
  const width = one(T.width);
  const height = one(T.height);
  checkSize(width, height, maxPixels, fail, 'TIFF header');
  const spp = one(T.spp, 1);
  const bitsAll = h.numbers(entries.get(T.bits));
  const bits = bitsAll.length ? bitsAll[0] : 1;
  const formats = h.numbers(entries.get(T.sampleFormat));
  const sampleFormat = formats.length ? formats[0] : 1;
  const compression = one(T.compression, 1);
  const photometric = one(T.photometric, 1);
  const planar = one(T.planar, 1);

  if (bitsAll.some((b) => b !== bits) || formats.some((f) => f !== sampleFormat)) fail('unsupported TIFF: samples of different bit depths or types');
  if (spp < 1 || spp > 4) fail(`unsupported TIFF: ${spp} samples per pixel`);
  if (photometric === 3) fail('unsupported TIFF: palette colour (PhotometricInterpretation 3)');
  if (photometric > 2) fail(`unsupported TIFF: PhotometricInterpretation ${photometric} (only grey and RGB are read)`);
  if (photometric === 2 && spp < 3) fail(`invalid TIFF: RGB with ${spp} samples per pixel`);
  if (spp > 1 && planar !== 1) fail('unsupported TIFF: separate colour planes (PlanarConfiguration 2)');
  let sampleKind: SampleKind;
  if (sampleFormat === 3) {
    if (bits !== 32) fail(`unsupported TIFF: ${bits}-bit float samples (32-bit float is read)`);
    sampleKind = 'float';
  } else if (sampleFormat === 1 || sampleFormat === 2 || sampleFormat === 4) {
    if (bits !== 8 && bits !== 16) fail(`unsupported TIFF: ${bits}-bit ${sampleFormat === 2 ? 'signed ' : ''}integer samples (8- and 16-bit integers and 32-bit float are read)`);
    sampleKind = sampleFormat === 2 ? 'int' : 'uint';
  } else {
    fail(`unsupported TIFF: SampleFormat ${sampleFormat} (${sampleFormat === 5 || sampleFormat === 6 ? 'complex' : 'unknown'})`);
  }
  if (![1, 5, 8, 32946].includes(compression)) {
    const names: Record<number, string> = { 2: 'CCITT RLE', 3: 'CCITT fax 3', 4: 'CCITT fax 4', 6: 'old-style JPEG', 7: 'JPEG', 32773: 'PackBits' };
    fail(`unsupported TIFF compression ${compression}${names[compression] ? ` (${names[compression]})` : ''}; none, LZW and Deflate are read`);
  }

  // Every strip or tile must lie inside the file (checked before decoding).
  const tiled = entries.has(T.tileOffsets);
  const offsets = h.numbers(entries.get(tiled ? T.tileOffsets : T.stripOffsets));
  const counts = h.numbers(entries.get(tiled ? T.tileByteCounts : T.stripByteCounts));
  if (offsets.length === 0) fail('invalid TIFF: no strip or tile offsets');
  const bytesPerSample = bits / 8;
  const rowBytes = width * spp * bytesPerSample;
  let expected: number;
  if (tiled) {
    const tw = one(T.tileWidth);
    const tl = one(T.tileLength);
    if (tw < 1 || tl < 1) fail(`invalid TIFF: tile size ${tw} × ${tl}`);
    expected = Math.ceil(width / tw) * Math.ceil(height / tl);
  } else {
    const rps = Math.min(one(T.rowsPerStrip, height), height);
    if (rps < 1) fail(`invalid TIFF: RowsPerStrip ${rps}`);
    expected = Math.ceil(height / rps);
  }
  if (offsets.length < expected) fail(`invalid TIFF: ${offsets.length} ${tiled ? 'tiles' : 'strips'} where ${expected} are needed`);
  if (counts.length === 0 && compression !== 1) fail('invalid TIFF: compressed data without byte counts');
  for (let i = 0; i < offsets.length; i++) {
    const count = counts.length ? counts[i] : Math.min(rowBytes * height, bytes.length - offsets[i]);
    if (offsets[i] + count > bytes.length) {
      fail(`truncated: ${tiled ? 'tile' : 'strip'} ${i} needs bytes ${offsets[i]}–${offsets[i] + count} but the file has ${bytes.length}`);
    }
  }
  if ((compression === 8 || compression === 32946) && counts.length) {
    // Deflate expands at most 1032:1 (RFC 1951: a 258-byte match costs at least 2 bits): fewer
    // compressed bytes than that cannot hold the declared image.
    const total = counts.reduce((a, b) => a + b, 0);
    if (total * DEFLATE_MAX_RATIO < rowBytes * height) fail(`truncated or corrupt: ${total} bytes of Deflate data cannot hold ${rowBytes * height} bytes of image`);
  }
  if (!tiled && compression === 1 && counts.length) {
    const total = counts.reduce((a, b) => a + b, 0);
    if (total < rowBytes * height) fail(`truncated: the strips hold ${total} bytes, the image needs ${rowBytes * height}`);
  }

  // Pages: walk the IFD chain (guarding against loops) only to count them.
  let pages = 1;
  const seen = new Set<number>([first]);
  let nextOffset = next;
  while (nextOffset !== 0 && pages < 100000) {
    if (seen.has(nextOffset) || nextOffset + 2 > bytes.length) {
      warnings.push('the TIFF page chain is broken after page ' + pages + '; later pages ignored');
      break;
    }
    seen.add(nextOffset);
    const n = h.u16(nextOffset);
    if (nextOffset + 2 + n * 12 + 4 > bytes.length) {
      warnings.push('the TIFF page chain is broken after page ' + pages + '; later pages ignored');
      break;
    }
    pages++;
    nextOffset = h.u32(nextOffset + 2 + n * 12);
  }
  if (pages > 1) warnings.push(`multi-page TIFF: read page 1 of ${pages}`);

  // Decode the pixels of page 1: strips without a predictor here (fast), anything else
  // (tiles, predictors, WhiteIsZero, orientation) by the tiff package.
  const pixels = width * height;
  let samples: ArrayLike<number>;
  const predictor = one(T.predictor, 1);
  const orientation = one(T.orientation, 1);
  if (!tiled && predictor === 1 && photometric !== 0 && orientation === 1) {
    const rps = Math.min(one(T.rowsPerStrip, height), height);
    samples = readTiffStrips(bytes, h.le, offsets, counts, compression, rowBytes, rps, height, bits, sampleKind, fail, alloc);
  } else {
    const page = decodeTiffPages(bytes, { pages: [0] })[0] as unknown as { data: ArrayLike<number> & { buffer: ArrayBufferLike; byteOffset: number; length: number } };
    if (!page?.data || page.data.length !== pixels * spp) fail(`truncated or corrupt TIFF data: decoded ${page?.data?.length ?? 0} samples, expected ${pixels * spp}`);
    samples = page.data;
    if (sampleKind === 'int') {
      samples = bits === 8
        ? new Int8Array(page.data.buffer, page.data.byteOffset, page.data.length)
        : new Int16Array(page.data.buffer, page.data.byteOffset, page.data.length);
    }
  }
  if (photometric === 0) warnings.push('WhiteIsZero TIFF: values inverted so that larger is brighter');
  const extra = h.numbers(entries.get(T.extraSamples));
  // ExtraSamples (tag 338) 1 or 2 = associated or unassociated alpha; a 4th RGB or 2nd grey sample without the tag is taken as alpha too.
  const hasAlpha = (photometric === 2 && spp === 4) || (photometric < 2 && spp === 2) || extra.some((x) => x === 1 || x === 2);
  if (photometric < 2 && spp > 1) warnings.push(`grey TIFF with ${spp} samples per pixel: read the first`);
  const data = toGrey(samples, pixels, spp, warnings, hasAlpha, sampleKind === 'uint' ? 2 ** bits - 1 : NaN, photometric === 2, alloc);

  // Calibration: XResolution/YResolution (pixels per ResolutionUnit; unit default 2 = inch).
  let calibration: Calibration | null = null;
  const xr = h.numbers(entries.get(T.xRes));
  if (xr.length) {
    const yr = h.numbers(entries.get(T.yRes));
    const unit = one(T.resUnit, 2);
    const nmPerUnit = unit === 2 ? NM_PER_INCH : unit === 3 ? NM_PER_CM : null;
    const unitName = unit === 2 ? 'inch' : unit === 3 ? 'cm' : `ResolutionUnit ${unit}`;
    calibration = resolutionCalibration(xr[0], yr.length ? yr[0] : xr[0], nmPerUnit, unitName, 'TIFF XResolution/YResolution (tags 282/283, ResolutionUnit 296)', warnings);
  }
  return { width, height, data, bitDepth: bits, sampleKind, calibration, warnings, mayBeNonFinite: sampleKind === 'float' };
}

/** Byte order of this machine (typed arrays use it). */
const HOST_LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/** Decompresses and joins the strips of a chunky, predictor-free TIFF into typed samples. */
function readTiffStrips(
  bytes: Uint8Array,
  le: boolean,
  offsets: number[],
  counts: number[],
  compression: number,
  rowBytes: number,
  rowsPerStrip: number,
  height: number,
  bits: number,
  sampleKind: SampleKind,
  fail: Fail,
  alloc: Alloc,
): Int8Array | Uint8Array | Int16Array | Uint16Array | Float32Array {
  const total = rowBytes * height;
  const raw = alloc.raw(total);
  const strips = Math.ceil(height / rowsPerStrip);
  for (let i = 0; i < strips; i++) {
    const start = i * rowsPerStrip * rowBytes;
    const want = Math.min(rowsPerStrip * rowBytes, total - start);
    const count = counts.length ? counts[i] : want;
    const src = bytes.subarray(offsets[i], offsets[i] + count);
    let got: Uint8Array;
    if (compression === 1) got = src.subarray(0, want);
    else if (compression === 5) got = decompressLzw(src, want);
    else got = unzlibSync(src, { out: new Uint8Array(rowsPerStrip * rowBytes) }); // a last strip may be padded to full height
    if (got.length < want) fail(`truncated or corrupt TIFF data: strip ${i} gives ${got.length} bytes, ${want} expected`);
    raw.set(got.subarray(0, want), start);
  }
  const n = total / (bits / 8);
  const v = new DataView(raw.buffer, 0, total);
  if (bits === 8) return sampleKind === 'int' ? new Int8Array(raw.buffer, 0, n) : raw;
  if (le === HOST_LITTLE_ENDIAN) {
    // Same byte order as this machine: view the bytes directly (raw starts at byte 0, so aligned).
    if (bits === 16) return sampleKind === 'int' ? new Int16Array(raw.buffer, 0, n) : new Uint16Array(raw.buffer, 0, n);
    return new Float32Array(raw.buffer, 0, n);
  }
  if (bits === 16) {
    const out = sampleKind === 'int' ? new Int16Array(n) : new Uint16Array(n);
    if (sampleKind === 'int') for (let i = 0; i < n; i++) out[i] = v.getInt16(2 * i, le);
    else for (let i = 0; i < n; i++) out[i] = v.getUint16(2 * i, le);
    return out;
  }
  const out = new Float32Array(n);
  for (let i = 0; i < n; i++) out[i] = v.getFloat32(4 * i, le);
  return out;
}

// ---------------------------------------------------------------------------------------------
// PNG: Portable Network Graphics specification (W3C, 3rd edition), sections 5 and 11

function readPng(bytes: Uint8Array, maxPixels: number, fail: Fail, alloc: Alloc): Decoded {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (bytes.length < 33) fail(`truncated: ${bytes.length} bytes is too short for a PNG header`);
  const chunkType = (at: number) => String.fromCharCode(bytes[at], bytes[at + 1], bytes[at + 2], bytes[at + 3]);
  if (chunkType(12) !== 'IHDR' || view.getUint32(8) !== 13) fail('invalid PNG: the first chunk is not a 13-byte IHDR');
  const width = view.getUint32(16);
  const height = view.getUint32(20);
  const depth = bytes[24];
  const colourType = bytes[25];
  const interlace = bytes[28];
  checkSize(width, height, maxPixels, fail, 'PNG IHDR chunk');
  const channelsByType: Record<number, number> = { 0: 1, 2: 3, 3: 1, 4: 2, 6: 4 };
  if (!(colourType in channelsByType)) fail(`invalid PNG: colour type ${colourType}`);
  if (colourType === 3 ? depth !== 8 : depth !== 8 && depth !== 16) {
    fail(`unsupported PNG: ${depth}-bit ${colourType === 3 ? 'palette indices (8-bit palettes are read)' : 'samples (8- and 16-bit are read)'}`);
  }
  if (interlace > 1) fail(`invalid PNG: interlace method ${interlace}`);

  // Walk the chunks: every one must fit, and the file must end with IEND.
  let at = 8;
  let ended = false;
  let idat = false;
  let idatBytes = 0;
  let phys: { x: number; y: number; unit: number } | null = null;
  while (at + 12 <= bytes.length) {
    const len = view.getUint32(at);
    const type = chunkType(at + 4);
    if (at + 12 + len > bytes.length) fail(`truncated: PNG chunk ${type} at byte ${at} runs past the end of the file`);
    if (type === 'IDAT') {
      idat = true;
      idatBytes += len;
    }
    if (type === 'pHYs' && len === 9) phys = { x: view.getUint32(at + 8), y: view.getUint32(at + 12), unit: bytes[at + 16] };
    at += 12 + len;
    if (type === 'IEND') {
      ended = true;
      break;
    }
  }
  if (!idat) fail('truncated: the PNG has no image data (IDAT)');
  if (!ended) fail('truncated: the PNG ends before its IEND chunk');
  const rawBytes = height * (1 + Math.ceil((width * channelsByType[colourType] * depth) / 8));
  if (idatBytes * DEFLATE_MAX_RATIO < rawBytes) fail(`truncated or corrupt: ${idatBytes} bytes of image data cannot hold ${width} × ${height} pixels`);

  const img = decodeRaster(bytes);
  const spp = img.channels;
  const pixels = width * height;
  const raw = img.getRawImage().data;
  if (img.width !== width || img.height !== height || raw.length !== pixels * spp) fail('corrupt PNG: decoded size differs from the header');
  const warnings: string[] = [];
  if (colourType === 3) warnings.push('palette PNG: palette colours looked up');
  const hasAlpha = spp === 2 || spp === 4;
  const data = toGrey(raw, pixels, spp, warnings, hasAlpha, colourType === 3 ? 255 : 2 ** depth - 1, spp >= 3, alloc);

  let calibration: Calibration | null = null;
  if (phys) {
    calibration = resolutionCalibration(phys.x, phys.y, phys.unit === 1 ? NM_PER_M : null, phys.unit === 1 ? 'metre' : 'unit 0 (aspect ratio only)', 'PNG pHYs chunk', warnings);
  }
  return { width, height, data, bitDepth: colourType === 3 ? 8 : depth, sampleKind: 'uint', calibration, warnings, mayBeNonFinite: false };
}

// ---------------------------------------------------------------------------------------------
// JPEG: ITU-T T.81 (1992), annex B (markers, frame header)

function readJpeg(bytes: Uint8Array, maxPixels: number, fail: Fail, alloc: Alloc): Decoded {
  let at = 2;
  let frame: { width: number; height: number; precision: number; components: number; marker: number } | null = null;
  let scanAt = -1;
  while (at + 4 <= bytes.length) {
    if (bytes[at] !== 0xff) fail(`corrupt JPEG: no marker at byte ${at}`);
    const marker = bytes[at + 1];
    if (marker === 0xff) {
      at++;
      continue;
    }
    if (marker === 0x01 || (marker >= 0xd0 && marker <= 0xd7)) {
      at += 2;
      continue;
    }
    const len = (bytes[at + 2] << 8) | bytes[at + 3];
    if (len < 2) fail(`corrupt JPEG: segment length ${len} at byte ${at}`);
    if (at + 2 + len > bytes.length) fail(`truncated: JPEG segment at byte ${at} runs past the end of the file`);
    if (marker >= 0xc0 && marker <= 0xcf && marker !== 0xc4 && marker !== 0xc8 && marker !== 0xcc) {
      if (len < 8) fail('corrupt JPEG: short frame header');
      frame = {
        precision: bytes[at + 4],
        height: (bytes[at + 5] << 8) | bytes[at + 6],
        width: (bytes[at + 7] << 8) | bytes[at + 8],
        components: bytes[at + 9],
        marker,
      };
    }
    if (marker === 0xda) {
      scanAt = at + 2 + len;
      break;
    }
    at += 2 + len;
  }
  if (!frame) fail('truncated: the JPEG ends before its frame header (SOF)');
  if (frame.height === 0) fail('unsupported JPEG: height defined later by a DNL marker');
  checkSize(frame.width, frame.height, maxPixels, fail, 'JPEG frame header');
  if (frame.marker !== 0xc0 && frame.marker !== 0xc1 && frame.marker !== 0xc2) {
    fail(`unsupported JPEG: frame type SOF${frame.marker - 0xc0} (baseline and progressive Huffman JPEG are read)`);
  }
  if (frame.precision !== 8) fail(`unsupported JPEG: ${frame.precision}-bit samples (8-bit is read)`);
  if (frame.components !== 1 && frame.components !== 3) fail(`unsupported JPEG: ${frame.components} colour components`);
  if (scanAt < 0) fail('truncated: the JPEG ends before its image data (SOS)');
  // The entropy-coded data cannot contain FF D9 (T.81 B.1.1.5, byte stuffing): no EOI = truncated.
  let eoi = false;
  for (let i = bytes.length - 2; i >= scanAt; i--) {
    if (bytes[i] === 0xff && bytes[i + 1] === 0xd9) {
      eoi = true;
      break;
    }
  }
  if (!eoi) fail('truncated: the JPEG has no end-of-image marker');
  // Each 8 × 8 block needs at least one bit of entropy-coded data (its DC difference code).
  const blocks = Math.ceil(frame.width / 8) * Math.ceil(frame.height / 8);
  if ((bytes.length - scanAt) * 8 < blocks) fail(`truncated or corrupt: ${bytes.length - scanAt} bytes of image data cannot hold ${frame.width} × ${frame.height} pixels`);

  const img = decodeRaster(bytes);
  const pixels = frame.width * frame.height;
  const raw = img.getRawImage().data;
  const spp = img.channels;
  if (img.width !== frame.width || img.height !== frame.height || raw.length !== pixels * spp) fail('corrupt JPEG: decoded size differs from the header');
  const warnings: string[] = [];
  let data: Float32Array;
  if (frame.components === 1) {
    data = alloc.grey(pixels);
    for (let i = 0; i < pixels; i++) data[i] = raw[i * spp];
  } else {
    data = toGrey(raw, pixels, spp, warnings, false, 255, spp >= 3, alloc);
  }
  warnings.push('JPEG is lossy: compression artefacts (8 × 8 blocks) add a spurious 8-pixel periodicity');
  return { width: frame.width, height: frame.height, data, bitDepth: 8, sampleKind: 'uint', calibration: null, warnings, mayBeNonFinite: false };
}

// ---------------------------------------------------------------------------------------------
// MRC2014: Cheng et al., J. Struct. Biol. 192, 146 (2015), Table 1

const MRC_MODES: Record<number, { bytes: number; kind: SampleKind; bits: number }> = {
  0: { bytes: 1, kind: 'int', bits: 8 },
  1: { bytes: 2, kind: 'int', bits: 16 },
  2: { bytes: 4, kind: 'float', bits: 32 },
  6: { bytes: 2, kind: 'uint', bits: 16 },
  12: { bytes: 2, kind: 'float', bits: 16 },
};

/** Byte order from the machine stamp (word 54): 0x44 0x44 or 0x44 0x41 little, 0x11 0x11 big. */
function mrcLittleEndian(bytes: Uint8Array): boolean | null {
  if (bytes.length < 216) return null;
  if (bytes[212] === 0x44) return true;
  if (bytes[212] === 0x11) return false;
  return null;
}

function plausibleMrc(view: DataView, le: boolean): boolean {
  const nx = view.getInt32(0, le);
  const ny = view.getInt32(4, le);
  const nz = view.getInt32(8, le);
  const mode = view.getInt32(12, le);
  return nx > 0 && ny > 0 && nz > 0 && nx < 1 << 24 && ny < 1 << 24 && [0, 1, 2, 3, 4, 6, 12, 101].includes(mode);
}

function looksLikeMrcHeader(bytes: Uint8Array): boolean {
  if (bytes.length < 1024) return false;
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  return plausibleMrc(view, true) || plausibleMrc(view, false);
}

/** IEEE 754 binary16 to a number. */
function halfToFloat(h: number): number {
  const s = h & 0x8000 ? -1 : 1;
  const e = (h >> 10) & 0x1f;
  const f = h & 0x3ff;
  if (e === 0) return s * f * 2 ** -24;
  if (e === 31) return f ? NaN : s * Infinity;
  return s * (1 + f / 1024) * 2 ** (e - 15);
}

function readMrc(bytes: Uint8Array, maxPixels: number, fail: Fail, alloc: Alloc): Decoded {
  if (bytes.length < 1024) fail(`truncated: ${bytes.length} bytes is shorter than the 1024-byte MRC header`);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const warnings: string[] = [];
  let le = mrcLittleEndian(bytes);
  if (le === null) {
    le = plausibleMrc(view, true) ? true : plausibleMrc(view, false) ? false : true;
    warnings.push(`MRC machine stamp 0x${bytes[212].toString(16)} 0x${bytes[213].toString(16)} is not a known byte order; read as ${le ? 'little' : 'big'}-endian from the header values`);
  }
  const word = (n: number) => view.getInt32((n - 1) * 4, le);
  const real = (n: number) => view.getFloat32((n - 1) * 4, le);
  const nx = word(1);
  const ny = word(2);
  const nz = word(3);
  const mode = word(4);
  checkSize(nx, ny, maxPixels, fail, 'MRC header (NX, NY)');
  if (nz < 1) fail(`invalid MRC: NZ = ${nz}`);
  const m = MRC_MODES[mode];
  if (!m) {
    const what = mode === 3 || mode === 4 ? 'complex' : mode === 101 ? '4-bit' : 'unknown';
    fail(`unsupported MRC mode ${mode} (${what}); modes 0, 1, 2, 6 and 12 are read`);
  }
  const nsymbt = word(24);
  if (nsymbt < 0) fail(`invalid MRC: NSYMBT = ${nsymbt}`);
  const start = 1024 + nsymbt;
  const section = nx * ny * m.bytes;
  const needed = start + section * nz;
  if (bytes.length < needed) fail(`truncated: the MRC header declares ${nx} × ${ny} × ${nz} voxels (${needed} bytes), the file has ${bytes.length}`);
  if (nz > 1) warnings.push(`MRC stack or volume of ${nz} sections: read section 1`);

  // Data rows are stored with y increasing upwards (first row at the bottom of the displayed
  // image, common practice in EM display, from memory); flip so that row 0 is the top.
  const pixels = nx * ny;
  const data = alloc.grey(pixels);
  for (let y = 0; y < ny; y++) {
    const src = start + (ny - 1 - y) * nx * m.bytes;
    const dst = y * nx;
    for (let x = 0; x < nx; x++) {
      const a = src + x * m.bytes;
      let v: number;
      switch (mode) {
        case 0: v = view.getInt8(a); break;
        case 1: v = view.getInt16(a, le); break;
        case 2: v = view.getFloat32(a, le); break;
        case 6: v = view.getUint16(a, le); break;
        default: v = halfToFloat(view.getUint16(a, le)); break;
      }
      data[dst + x] = v;
    }
  }

  // Pixel spacing = cell length / grid sampling (words 11 and 8; 12 and 9), Å → nm.
  let calibration: Calibration | null = null;
  const mx = word(8);
  const my = word(9);
  const xlen = real(11);
  const ylen = real(12);
  if (mx > 0 && xlen > 0 && Number.isFinite(xlen)) {
    const nmPerPx = (xlen / mx) / 10;
    const nmPerPxY = my > 0 && ylen > 0 && Number.isFinite(ylen) ? (ylen / my) / 10 : nmPerPx;
    if (nmPerPx > MAX_CALIBRATED_NM_PER_PX || nmPerPx < MIN_CALIBRATED_NM_PER_PX) {
      warnings.push(`not a calibration: MRC cell gives ${fmt(nmPerPx)} nm per pixel, outside 1 pm to 10 µm`);
    } else {
      calibration = {
        nmPerPx,
        source: 'metadata',
        relUncertainty: METADATA_REL_UNCERTAINTY,
        detail: `MRC cell/grid (words 11/8): ${fmt(xlen)} Å / ${mx} = ${fmt(xlen / mx)} Å per pixel`,
      };
      if (Math.abs(nmPerPxY - nmPerPx) > 1e-6 * nmPerPx) calibration.nmPerPxY = nmPerPxY;
      if (Math.abs(xlen / mx - 1) < 1e-6) warnings.push('MRC pixel spacing is exactly 1 Å, which some programs write when the size is unknown: check it');
    }
  }
  return { width: nx, height: ny, data, bitDepth: m.bits, sampleKind: m.kind, calibration, warnings, mayBeNonFinite: m.kind === 'float' };
}
