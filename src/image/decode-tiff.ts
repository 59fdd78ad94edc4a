/**
 * The strict TIFF reader: directories and tags are validated (types, counts, offsets inside the
 * file, strip and tile layout consistent with the image, predictor values, loops in the
 * directory chain and in metadata sub-directories), then each strip or tile is decompressed
 * under a cap and turned into grey pixels row by row, so the undecoded image is never held whole.
 *
 * Reference: TIFF Revision 6.0 (Adobe, 1992) §2 (structure), §8 (baseline fields), §9 (PackBits), §13 (LZW),
 * §14 (Predictor), §15 (tiles), §19 (SampleFormat); Adobe PageMaker 6.0 TIFF Technical Notes
 * (Deflate, compression 8); Adobe Photoshop TIFF Technical Note 3 (floating-point predictor 3).
 */
import type { Alloc, Budget, Decoded, Fail } from './decode-common';
import { DEFLATE_MAX_RATIO, GreyWriter, pixelStorage, HOST_LITTLE_ENDIAN, NM_PER_CM, NM_PER_INCH, bytesText, checkDecompressed, checkSize, resolutionCalibration } from './decode-common';
import type { Calibration, SampleKind } from './grey-image';
import { LzwDataError, lzwDecode } from './lzw';
import { PackBitsDataError, packBitsDecode } from './packbits';
import { ZlibDataError, inflateZlib } from './zlib';

/** Bytes per value of each field type (TIFF 6.0 §2, plus IFD = 13 from TIFF Technical Note 1). */
const TYPE_SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4 };
const TYPE_NAME: Record<number, string> = { 1: 'BYTE', 2: 'ASCII', 3: 'SHORT', 4: 'LONG', 5: 'RATIONAL', 6: 'SBYTE', 7: 'UNDEFINED', 8: 'SSHORT', 9: 'SLONG', 10: 'SRATIONAL', 11: 'FLOAT', 12: 'DOUBLE', 13: 'IFD' };

// Tag numbers, TIFF 6.0 sections 8 and 15–19, and the metadata directories (TIFF/EP, Exif 2.3).
const T = {
  width: 256, height: 257, bits: 258, compression: 259, photometric: 262, stripOffsets: 273,
  orientation: 274, spp: 277, rowsPerStrip: 278, stripByteCounts: 279, xRes: 282, yRes: 283, planar: 284,
  resUnit: 296, predictor: 317, tileWidth: 322, tileLength: 323, tileOffsets: 324,
  tileByteCounts: 325, subIfds: 330, description: 270, extraSamples: 338, sampleFormat: 339, exifIfd: 34665, gpsIfd: 34853, interopIfd: 40965,
} as const;
const TAG_NAME: Record<number, string> = {
  256: 'ImageWidth', 257: 'ImageLength', 258: 'BitsPerSample', 259: 'Compression', 262: 'PhotometricInterpretation',
  273: 'StripOffsets', 274: 'Orientation', 277: 'SamplesPerPixel', 278: 'RowsPerStrip', 279: 'StripByteCounts',
  282: 'XResolution', 283: 'YResolution', 284: 'PlanarConfiguration', 296: 'ResolutionUnit', 317: 'Predictor',
  322: 'TileWidth', 323: 'TileLength', 324: 'TileOffsets', 325: 'TileByteCounts', 330: 'SubIFDs', 338: 'ExtraSamples',
  339: 'SampleFormat', 34665: 'Exif IFD', 34853: 'GPS IFD', 40965: 'Interoperability IFD',
};
const COMPRESSION_NAME: Record<number, string> = { 1: 'none', 5: 'LZW', 8: 'Deflate', 32946: 'Deflate', 32773: 'PackBits' };
const UNSUPPORTED_COMPRESSION: Record<number, string> = { 2: 'CCITT RLE', 3: 'CCITT fax 3', 4: 'CCITT fax 4', 6: 'old-style JPEG', 7: 'JPEG' };
/** Metadata directories walked for loops, with the tags that point to further ones. */
const SUB_DIRECTORY_TAGS = [T.subIfds, T.exifIfd, T.gpsIfd, T.interopIfd];
/** Most metadata directories walked (a real file has a handful). */
const MAX_SUB_DIRECTORIES = 256;
/** Most pages counted. */
const MAX_PAGES = 100000;

function tagName(tag: number): string {
  return TAG_NAME[tag] ? `${tag} (${TAG_NAME[tag]})` : String(tag);
}

interface Entry {
  tag: number;
  type: number;
  count: number;
  /** Byte offset of the value(s) in the file. */
  at: number;
}

/**
 * A file read by position: its length and the bytes of a range. The whole file in memory is one
 * (bytesSource); a file handle read piece by piece is another (fileSource in decode-file.ts), so a
 * large TIFF is decoded strip by strip without the whole file being held.
 */
export interface ByteSource {
  /** The file's length in bytes. */
  readonly length: number;
  /** The bytes offset … offset + length − 1 (inside the file): a fresh array or a view of the file held in memory. */
  read(offset: number, length: number): Uint8Array;
}

/**
 * The source of a file already in memory (reads are views, no copies).
 * @param bytes - the whole file
 * @returns a ByteSource over it
 */
export function bytesSource(bytes: Uint8Array): ByteSource {
  return { length: bytes.length, read: (offset, length) => bytes.subarray(offset, offset + length) };
}

/** Bytes per page of the directory reader's cache (directories and tag values are read a page at a time). */
const PAGE_BYTES = 1 << 16;

/** The file with bounds-checked reads; every failure names the byte or the tag. */
class TiffFile {
  readonly le: boolean;
  readonly length: number;
  /** Pages of the file read so far (directories and tag values only: strips and tiles are read apart). */
  private readonly pages = new Map<number, DataView>();
  constructor(readonly src: ByteSource, readonly fail: Fail) {
    this.length = src.length;
    this.le = src.read(0, 1)[0] === 0x49;
  }
  private page(p: number): DataView {
    let v = this.pages.get(p);
    if (!v) {
      const start = p * PAGE_BYTES;
      const b = this.src.read(start, Math.min(PAGE_BYTES, this.length - start));
      v = new DataView(b.buffer, b.byteOffset, b.byteLength);
      this.pages.set(p, v);
    }
    return v;
  }
  /** A view holding bytes at … at + n − 1 (inside the file) and where they start in it. */
  view(at: number, n: number): { v: DataView; o: number } {
    const p = Math.floor(at / PAGE_BYTES);
    if (Math.floor((at + n - 1) / PAGE_BYTES) === p) return { v: this.page(p), o: at - p * PAGE_BYTES };
    // a range across pages (a long tag value, e.g. the offsets of thousands of strips): read whole
    const b = this.src.read(at, n);
    return { v: new DataView(b.buffer, b.byteOffset, n), o: 0 };
  }
  u16(at: number): number {
    if (at + 2 > this.length) this.fail(`truncated: the TIFF header points to byte ${at}, past the end (${this.length} bytes)`);
    const { v, o } = this.view(at, 2);
    return v.getUint16(o, this.le);
  }
  u32(at: number): number {
    if (at + 4 > this.length) this.fail(`truncated: the TIFF header points to byte ${at}, past the end (${this.length} bytes)`);
    const { v, o } = this.view(at, 4);
    return v.getUint32(o, this.le);
  }
  /** True when a directory of at least its entry count fits at `offset`. */
  directoryFits(offset: number): boolean {
    if (offset < 8 || offset + 2 > this.length) return false;
    const n = this.u16(offset);
    return offset + 2 + n * 12 + 4 <= this.length;
  }
  /** Reads one directory's entries (TIFF 6.0 §2); every value must lie inside the file. */
  ifd(offset: number, what: string): { entries: Map<number, Entry>; next: number } {
    const n = this.u16(offset);
    if (n === 0) this.fail(`invalid TIFF: ${what} at byte ${offset} has no entries (TIFF 6.0 §2)`);
    if (offset + 2 + n * 12 + 4 > this.length) this.fail(`truncated: the TIFF ${what} at byte ${offset} (${n} entries) runs past the end of the file`);
    const entries = new Map<number, Entry>();
    for (let i = 0; i < n; i++) {
      const e = offset + 2 + i * 12;
      const tag = this.u16(e);
      const type = this.u16(e + 2);
      const count = this.u32(e + 4);
      const size = TYPE_SIZE[type];
      if (size === undefined) continue; // unknown type: skip the entry (TIFF 6.0 §2)
      const total = size * count;
      const at = total <= 4 ? e + 8 : this.u32(e + 8);
      if (at + total > this.length) this.fail(`truncated: TIFF tag ${tagName(tag)} points to bytes ${at}–${at + total}, past the end (${this.length} bytes)`);
      if (!entries.has(tag)) entries.set(tag, { tag, type, count, at });
    }
    return { entries, next: this.u32(offset + 2 + n * 12) };
  }
  /** The values of an entry as numbers. */
  numbers(e: Entry): number[] {
    const out: number[] = new Array(e.count);
    const { v, o } = this.view(e.at, TYPE_SIZE[e.type] * e.count);
    const le = this.le;
    for (let i = 0; i < e.count; i++) {
      switch (e.type) {
        case 1: case 2: case 7: out[i] = v.getUint8(o + i); break;
        case 3: out[i] = v.getUint16(o + 2 * i, le); break;
        case 4: case 13: out[i] = v.getUint32(o + 4 * i, le); break;
        case 5: {
          const den = v.getUint32(o + 8 * i + 4, le);
          out[i] = den === 0 ? NaN : v.getUint32(o + 8 * i, le) / den;
          break;
        }
        case 6: out[i] = v.getInt8(o + i); break;
        case 8: out[i] = v.getInt16(o + 2 * i, le); break;
        case 9: out[i] = v.getInt32(o + 4 * i, le); break;
        case 10: {
          const den = v.getInt32(o + 8 * i + 4, le);
          out[i] = den === 0 ? NaN : v.getInt32(o + 8 * i, le) / den;
          break;
        }
        case 11: out[i] = v.getFloat32(o + 4 * i, le); break;
        default: out[i] = v.getFloat64(o + 8 * i, le); break;
      }
    }
    return out;
  }
}

/** Reads the baseline fields of a directory with their types and counts checked. */
class Fields {
  constructor(private readonly f: TiffFile, private readonly entries: Map<number, Entry>) {}
  has(tag: number): boolean {
    return this.entries.has(tag);
  }
  private typed(tag: number, types: number[]): Entry | undefined {
    const e = this.entries.get(tag);
    if (!e) return undefined;
    if (!types.includes(e.type)) {
      this.f.fail(`invalid TIFF: tag ${tagName(tag)} has type ${TYPE_NAME[e.type]}; ${types.map((t) => TYPE_NAME[t]).join(' or ')} expected (TIFF 6.0 §8)`);
    }
    if (e.count === 0) this.f.fail(`invalid TIFF: tag ${tagName(tag)} holds no value (TIFF 6.0 §2)`);
    return e;
  }
  /** One SHORT or LONG value; `dflt` when the tag is absent (undefined: required). */
  one(tag: number, dflt?: number): number {
    const e = this.typed(tag, [3, 4]);
    if (!e) {
      if (dflt === undefined) this.f.fail(`invalid TIFF: required tag ${tagName(tag)} is missing (TIFF 6.0 §8)`);
      return dflt;
    }
    if (e.count !== 1) this.f.fail(`invalid TIFF: tag ${tagName(tag)} holds ${e.count} values; 1 expected (TIFF 6.0 §8)`);
    return this.f.numbers(e)[0];
  }
  /** A list of values of the given types (empty when absent). */
  list(tag: number, types: number[] = [3, 4]): number[] {
    const e = this.typed(tag, types);
    return e ? this.f.numbers(e) : [];
  }
  /** Per-sample values: count 1 (applies to all) or spp; `dflt` when absent. */
  perSample(tag: number, spp: number, dflt: number): number[] {
    const v = this.list(tag);
    if (v.length === 0) return [dflt];
    if (v.length !== 1 && v.length !== spp) this.f.fail(`invalid TIFF: tag ${tagName(tag)} holds ${v.length} values for ${spp} samples per pixel (TIFF 6.0 §8)`);
    return v;
  }
  rational(tag: number): number[] {
    return this.list(tag, [5, 11, 12]);
  }
  /** An ASCII value (its first 4096 characters), or '' when absent or of another type. */
  ascii(tag: number): string {
    const e = this.entries.get(tag);
    if (!e || e.type !== 2 || e.count === 0) return '';
    const bytes = this.f.numbers({ ...e, count: Math.min(e.count, 4096) });
    let out = '';
    for (const b of bytes) {
      if (b === 0) break;
      out += String.fromCharCode(b);
    }
    return out;
  }
}

/** Nanometres per length unit as an image description names it (ASCII spellings, µ escaped or as micro sign). */
const DESCRIPTION_UNIT_NM: Record<string, number> = {
  pm: 1e-3, picometer: 1e-3, picometre: 1e-3,
  'å': 0.1, a: 0.1, angstrom: 0.1, ångström: 0.1,
  nm: 1, nanometer: 1, nanometre: 1,
  um: 1e3, 'µm': 1e3, 'μm': 1e3, micron: 1e3, microns: 1e3, micrometer: 1e3, micrometre: 1e3,
  mm: 1e6, millimeter: 1e6, millimetre: 1e6,
};

/**
 * The length unit an image description states for the resolution when the TIFF's own
 * ResolutionUnit is 'none': a line `unit=nm` (also `micron`, `um`, `\u00B5m`, `A`) among the
 * description's key=value lines, as scientific image editors write it.
 * @returns the unit's name and nanometres per unit, or null when none is stated
 */
function descriptionUnit(description: string): { name: string; nmPerUnit: number } | null {
  const m = /(?:^|\n)\s*unit\s*=\s*([^\n\r]{1,24})/i.exec(description);
  if (!m) return null;
  const raw = m[1].trim().replace(/\\u00b5/gi, 'µ').replace(/\\u00c5/gi, 'Å');
  const key = raw.toLowerCase();
  const nm = DESCRIPTION_UNIT_NM[key];
  return nm === undefined ? null : { name: raw, nmPerUnit: nm };
}

/** One strip or tile: where its bytes lie and which part of the image it covers. */
interface Segment {
  what: string;
  offset: number;
  count: number;
  /** Image x and y of its top-left pixel. */
  x0: number;
  y0: number;
  /** Columns and rows stored (a tile is stored whole, padding included). */
  cols: number;
  rows: number;
  /** Columns and rows inside the image. */
  usefulCols: number;
  usefulRows: number;
  /** Most decompressed bytes accepted (a last strip may be stored padded to full height). */
  maxBytes: number;
}

/**
 * Reads the first page of a TIFF file into grey pixels.
 *
 * @param src - the file (signature already recognised): in memory (bytesSource) or read by
 *   position, in which case only the directories and one strip or tile at a time are held.
 * @param budget - pixel and decompressed-byte limits.
 * @param fail - stops reading with a reason.
 * @param alloc - where the pixel and working arrays come from.
 * @returns the decoded image and the reader's warnings.
 * Notes: 8/16/32-bit integer (unsigned or signed; 32-bit integers are held as 32-bit float, exact
 * up to 2²⁴, with a warning above) and 32-bit float samples; no compression, LZW, Deflate or
 * PackBits; predictor 1, 2 (integers) or 3 (float); strips or tiles; grey, WhiteIsZero (inverted:
 * max − v for unsigned, −1 − v for signed, −v for float) or RGB; orientation 1 only. Metadata
 * sub-directories are only checked for loops, never read.
 */
export function readTiff(src: ByteSource, budget: Budget, fail: Fail, alloc: Alloc): Decoded {
  const fileLength = src.length;
  if (fileLength < 8) fail(`truncated: ${fileLength} bytes is shorter than the 8-byte TIFF header`);
  const f = new TiffFile(src, fail);
  const first = f.u32(4);
  if (first < 8 || first >= fileLength) fail(`invalid TIFF: the first directory offset ${first} is outside the file (8 to ${fileLength - 1}; TIFF 6.0 §2)`);
  const { entries, next } = f.ifd(first, 'first directory');
  const t = new Fields(f, entries);
  const warnings: string[] = [];

  const width = t.one(T.width);
  const height = t.one(T.height);
  checkSize(width, height, budget, fail, 'TIFF header');
  const spp = t.one(T.spp, 1);
  if (spp < 1 || spp > 4) fail(`unsupported TIFF: ${spp} samples per pixel`);
  const bitsAll = t.perSample(T.bits, spp, 1);
  const bits = bitsAll[0];
  const formats = t.perSample(T.sampleFormat, spp, 1);
  const sampleFormat = formats[0];
  const compression = t.one(T.compression, 1);
  const photometric = t.one(T.photometric, 1);
  const planar = t.one(T.planar, 1);
  const predictor = t.one(T.predictor, 1);
  const orientation = t.one(T.orientation, 1);

  if (bitsAll.some((b) => b !== bits) || formats.some((x) => x !== sampleFormat)) fail('unsupported TIFF: samples of different bit depths or types');
  if (photometric === 3) fail('unsupported TIFF: palette colour (PhotometricInterpretation 3)');
  if (photometric > 2) fail(`unsupported TIFF: PhotometricInterpretation ${photometric} (only grey and RGB are read)`);
  if (photometric === 2 && spp < 3) fail(`invalid TIFF: RGB with ${spp} samples per pixel`);
  if (planar !== 1 && planar !== 2) fail(`invalid TIFF: PlanarConfiguration ${planar} (1 and 2 are defined, TIFF 6.0 §8)`);
  if (spp > 1 && planar !== 1) fail('unsupported TIFF: separate colour planes (PlanarConfiguration 2)');
  let sampleKind: SampleKind;
  if (sampleFormat === 3) {
    if (bits !== 32) fail(`unsupported TIFF: ${bits}-bit float samples (32-bit float is read)`);
    sampleKind = 'float';
  } else if (sampleFormat === 1 || sampleFormat === 2 || sampleFormat === 4) {
    if (bits !== 8 && bits !== 16 && bits !== 32) fail(`unsupported TIFF: ${bits}-bit ${sampleFormat === 2 ? 'signed ' : ''}integer samples (8-, 16- and 32-bit integers and 32-bit float are read)`);
    sampleKind = sampleFormat === 2 ? 'int' : 'uint';
  } else {
    fail(`unsupported TIFF: SampleFormat ${sampleFormat} (${sampleFormat === 5 || sampleFormat === 6 ? 'complex' : 'unknown'})`);
  }
  if (!COMPRESSION_NAME[compression]) {
    const name = UNSUPPORTED_COMPRESSION[compression];
    fail(`unsupported TIFF compression ${compression}${name ? ` (${name})` : ''}; none, LZW, Deflate and PackBits are read`);
  }
  // TIFF 6.0 §14 and Technical Note 3: 1 none, 2 horizontal differencing, 3 floating point.
  if (predictor !== 1 && predictor !== 2 && predictor !== 3) fail(`invalid TIFF: Predictor ${predictor} (1, 2 and 3 are defined, TIFF 6.0 §14)`);
  if (predictor === 2 && sampleKind === 'float') fail('unsupported TIFF: Predictor 2 (horizontal differencing) on float samples; float data uses Predictor 3');
  if (predictor === 3 && sampleKind !== 'float') fail(`invalid TIFF: Predictor 3 (floating point) on ${bits}-bit integer samples (TIFF Technical Note 3)`);
  if (orientation < 1 || orientation > 8) fail(`invalid TIFF: Orientation ${orientation} (1 to 8 are defined, TIFF 6.0 §8)`);
  if (orientation !== 1) fail(`unsupported TIFF: Orientation ${orientation} (rows stored other than top to bottom, left to right); save the image with Orientation 1`);

  // Strip or tile layout: counts of offsets and byte counts must match the image (TIFF 6.0 §8, §15).
  const bps = bits / 8;
  const rowBytes = width * spp * bps;
  const imageBytes = rowBytes * height;
  const tiled = t.has(T.tileOffsets);
  const kind = tiled ? 'tile' : 'strip';
  const offsets = t.list(tiled ? T.tileOffsets : T.stripOffsets, [3, 4, 13]);
  const counts = t.list(tiled ? T.tileByteCounts : T.stripByteCounts);
  if (offsets.length === 0) fail(`invalid TIFF: no ${kind} offsets (tag ${tiled ? tagName(T.tileOffsets) : tagName(T.stripOffsets)})`);
  const segments: Segment[] = [];
  if (tiled) {
    const tw = t.one(T.tileWidth);
    const tl = t.one(T.tileLength);
    if (tw < 1 || tl < 1) fail(`invalid TIFF: tile size ${tw} × ${tl}`);
    const across = Math.ceil(width / tw);
    const down = Math.ceil(height / tl);
    const tileBytes = tw * tl * spp * bps;
    const allTiles = tileBytes * across * down;
    // Tiles cover the image with padding at the right and bottom edges; more than 4× the image
    // (or 16 MiB for small images) is not padding but a damaged size.
    if (allTiles > Math.max(4 * imageBytes, 16 * 2 ** 20)) {
      fail(`invalid TIFF: tiles of ${tw} × ${tl} pixels (${across * down} of them, ${bytesText(allTiles)}) are far larger than the ${width} × ${height} image they cover (${bytesText(imageBytes)}): the tile size is damaged`);
    }
    if (tw % 16 !== 0 || tl % 16 !== 0) warnings.push(`TIFF tile size ${tw} × ${tl} is not a multiple of 16 as TIFF 6.0 §15 asks; read anyway`);
    if (offsets.length !== across * down) fail(`invalid TIFF: ${offsets.length} tile offsets where the ${width} × ${height} image in ${tw} × ${tl} tiles needs ${across * down} (TIFF 6.0 §15)`);
    if (counts.length !== offsets.length) fail(`invalid TIFF: ${counts.length} tile byte counts for ${offsets.length} tile offsets (TIFF 6.0 §15)`);
    for (let i = 0; i < offsets.length; i++) {
      const x0 = (i % across) * tw;
      const y0 = Math.floor(i / across) * tl;
      segments.push({ what: `tile ${i}`, offset: offsets[i], count: counts[i], x0, y0, cols: tw, rows: tl, usefulCols: Math.min(tw, width - x0), usefulRows: Math.min(tl, height - y0), maxBytes: tileBytes });
    }
  } else {
    const rpsDeclared = t.one(T.rowsPerStrip, 2 ** 32 - 1);
    if (rpsDeclared < 1) fail(`invalid TIFF: RowsPerStrip ${rpsDeclared}`);
    const rps = Math.min(rpsDeclared, height);
    const strips = Math.ceil(height / rps);
    if (offsets.length !== strips) fail(`invalid TIFF: ${offsets.length} strip offsets where ${height} rows in strips of ${rps} need ${strips} (TIFF 6.0 §8, StripOffsets)`);
    if (counts.length === 0 && compression !== 1) fail('invalid TIFF: compressed data without byte counts (tag 279, StripByteCounts)');
    if (counts.length !== 0 && counts.length !== offsets.length) fail(`invalid TIFF: ${counts.length} strip byte counts for ${offsets.length} strip offsets (TIFF 6.0 §8)`);
    for (let i = 0; i < strips; i++) {
      const rows = Math.min(rps, height - i * rps);
      segments.push({ what: `strip ${i}`, offset: offsets[i], count: counts.length ? counts[i] : rows * rowBytes, x0: 0, y0: i * rps, cols: width, rows, usefulCols: width, usefulRows: rows, maxBytes: rps * rowBytes });
    }
  }
  let compressedTotal = 0;
  let decompressedTotal = 0;
  for (const s of segments) {
    if (s.offset + s.count > fileLength) fail(`truncated: ${s.what} needs bytes ${s.offset}–${s.offset + s.count} but the file has ${fileLength}`);
    const need = s.rows * s.cols * spp * bps;
    if (compression === 1 && s.count < need) fail(`truncated: ${s.what} holds ${s.count} bytes, its ${s.rows} rows of ${s.cols} pixels need ${need}`);
    compressedTotal += s.count;
    decompressedTotal += need;
  }
  if (compression !== 1) {
    checkDecompressed(decompressedTotal, budget, fail, `the TIFF's ${segments.length} ${COMPRESSION_NAME[compression]}-compressed ${kind}s of ${width} × ${height} pixels`);
    if ((compression === 8 || compression === 32946) && compressedTotal * DEFLATE_MAX_RATIO < imageBytes) {
      // Deflate expands at most 1032:1 (RFC 1951): fewer compressed bytes cannot hold the image.
      fail(`truncated or corrupt: ${compressedTotal} bytes of Deflate data cannot hold ${imageBytes} bytes of image`);
    }
    if (compression === 32773 && compressedTotal * 64 < imageBytes) {
      // PackBits expands at most 64:1 (two bytes repeat one 128 times, TIFF 6.0 §9).
      fail(`truncated or corrupt: ${compressedTotal} bytes of PackBits data cannot hold ${imageBytes} bytes of image`);
    }
  }

  // Pages: walk the directory chain (guarding against loops) only to count them.
  const seen = new Set<number>([first]);
  let pages = 1;
  let nextOffset = next;
  while (nextOffset !== 0 && pages < MAX_PAGES) {
    if (seen.has(nextOffset) || !f.directoryFits(nextOffset)) {
      warnings.push(`the TIFF page chain is broken after page ${pages} (${seen.has(nextOffset) ? `it loops back to byte ${nextOffset}` : `byte ${nextOffset} holds no directory`}); later pages ignored`);
      break;
    }
    seen.add(nextOffset);
    pages++;
    nextOffset = f.u32(nextOffset + 2 + f.u16(nextOffset) * 12);
  }
  if (pages > 1) warnings.push(`multi-page TIFF: read page 1 of ${pages}`);
  checkSubDirectories(f, entries, seen, warnings);

  // Decode.
  const extra = t.list(T.extraSamples);
  // ExtraSamples (tag 338) 1 or 2 = associated or unassociated alpha; a 4th RGB or 2nd grey sample without the tag is taken as alpha too.
  const hasAlpha = (photometric === 2 && spp === 4) || (photometric < 2 && spp === 2) || extra.some((x) => x === 1 || x === 2);
  const writer = new GreyWriter(width * height, { spp, colour: photometric === 2, hasAlpha, alphaMax: sampleKind === 'uint' ? 2 ** bits - 1 : NaN, storage: pixelStorage(bits, sampleKind, photometric === 2) }, alloc);
  const rows = new RowConverter(bits, sampleKind, f.le, predictor, photometric === 0, spp, Math.max(...segments.map((s) => s.cols)));
  const largestSegment = Math.max(...segments.map((s) => s.cols * spp * bps));
  const rowBuffer = alloc.raw(largestSegment);
  for (const s of segments) {
    const segRowBytes = s.cols * spp * bps;
    let row = 0;
    let fill = 0;
    const onRow = (r: Uint8Array) => {
      if (row < s.usefulRows) {
        const samples = rows.convert(r, s.cols);
        writer.write(samples, 0, s.usefulCols, (s.y0 + row) * width + s.x0);
      }
      row++;
    };
    // Whole rows inside a piece are used where they lie; a row split between pieces is joined in rowBuffer.
    const sink = (piece: Uint8Array) => {
      let i = 0;
      if (fill > 0) {
        const take = Math.min(segRowBytes - fill, piece.length);
        rowBuffer.set(piece.subarray(0, take), fill);
        fill += take;
        i = take;
        if (fill === segRowBytes) {
          onRow(rowBuffer.subarray(0, segRowBytes));
          fill = 0;
        }
      }
      for (; i + segRowBytes <= piece.length; i += segRowBytes) onRow(piece.subarray(i, i + segRowBytes));
      if (i < piece.length) {
        rowBuffer.set(piece.subarray(i), 0);
        fill = piece.length - i;
      }
    };
    const data = src.read(s.offset, s.count);
    const need = s.rows * segRowBytes;
    const method = COMPRESSION_NAME[compression];
    let produced: number;
    try {
      if (compression === 1) {
        sink(data.subarray(0, need));
        produced = need;
      } else if (compression === 5) {
        produced = lzwDecode(data, need, sink);
      } else if (compression === 32773) {
        produced = packBitsDecode(data, need, sink);
      } else {
        // a last strip may be stored padded to full height: the padding rows are counted, not used
        produced = inflateZlib([data], { maxBytes: s.maxBytes, sink });
      }
    } catch (e) {
      if (e instanceof LzwDataError || e instanceof ZlibDataError || e instanceof PackBitsDataError) fail(`damaged TIFF data in ${s.what} (bytes ${s.offset}–${s.offset + s.count}, ${method}): ${e.message}`);
      throw e;
    }
    if (produced < need) fail(`truncated or corrupt TIFF data: ${s.what} gives ${produced} bytes, ${need} expected`);
  }
  if (rows.beyondFloat) warnings.push('32-bit integer samples beyond 16 777 216 (2²⁴) are held as 32-bit float and lose their last digits');
  if (photometric === 0) warnings.push('WhiteIsZero TIFF: values inverted so that larger is brighter');
  if (photometric < 2 && spp > 1) warnings.push(`grey TIFF with ${spp} samples per pixel: read the first`);
  const data = writer.finish(warnings);

  // Calibration: XResolution/YResolution (pixels per ResolutionUnit; unit default 2 = inch).
  let calibration: Calibration | null = null;
  const xr = t.rational(T.xRes);
  if (xr.length) {
    const yr = t.rational(T.yRes);
    const unit = t.one(T.resUnit, 2);
    // with ResolutionUnit 'none' (1), a unit stated in the image description (unit=nm) is the resolution's unit
    const stated = unit === 1 ? descriptionUnit(t.ascii(T.description)) : null;
    const nmPerUnit = unit === 2 ? NM_PER_INCH : unit === 3 ? NM_PER_CM : stated ? stated.nmPerUnit : null;
    const unitName = unit === 2 ? 'inch' : unit === 3 ? 'cm' : stated ? stated.name : `ResolutionUnit ${unit}`;
    const detail = stated
      ? `TIFF XResolution/YResolution (tags 282/283) with the unit '${stated.name}' of the image description (tag 270), ResolutionUnit 296 being 'none'`
      : 'TIFF XResolution/YResolution (tags 282/283, ResolutionUnit 296)';
    calibration = resolutionCalibration(xr[0], yr.length ? yr[0] : xr[0], nmPerUnit, unitName, detail, warnings);
  }
  return { width, height, data, bitDepth: bits, sampleKind, calibration, warnings, mayBeNonFinite: sampleKind === 'float' };
}

/**
 * Walks the metadata sub-directories (SubIFDs, Exif, GPS, Interoperability) without recursion,
 * noting one that lies outside the file or loops back to a directory already read.
 */
function checkSubDirectories(f: TiffFile, root: Map<number, Entry>, seen: Set<number>, warnings: string[]): void {
  const queue: { offset: number; from: number }[] = [];
  const push = (entries: Map<number, Entry>) => {
    for (const tag of SUB_DIRECTORY_TAGS) {
      const e = entries.get(tag);
      if (!e || (e.type !== 4 && e.type !== 13)) continue;
      for (const offset of f.numbers(e).slice(0, MAX_SUB_DIRECTORIES)) queue.push({ offset, from: tag });
    }
  };
  push(root);
  let walked = 0;
  while (queue.length > 0) {
    const { offset, from } = queue.shift()!;
    const name = TAG_NAME[from];
    if (seen.has(offset)) {
      warnings.push(`the TIFF's ${name} (tag ${from}) points back to the directory at byte ${offset}, already read (a loop); its metadata was ignored`);
      return;
    }
    if (!f.directoryFits(offset)) {
      warnings.push(`the TIFF's ${name} (tag ${from}) points to byte ${offset}, where no directory fits in the file; its metadata was ignored`);
      continue;
    }
    if (++walked > MAX_SUB_DIRECTORIES) {
      warnings.push(`the TIFF has more than ${MAX_SUB_DIRECTORIES} metadata directories; the rest were ignored`);
      return;
    }
    seen.add(offset);
    // Entries of a metadata directory that point outside the file only matter if they are read: they are not.
    const n = f.u16(offset);
    const entries = new Map<number, Entry>();
    for (let i = 0; i < n; i++) {
      const e = offset + 2 + i * 12;
      const tag = f.u16(e);
      if (!SUB_DIRECTORY_TAGS.includes(tag as (typeof SUB_DIRECTORY_TAGS)[number])) continue;
      const type = f.u16(e + 2);
      const count = f.u32(e + 4);
      const size = TYPE_SIZE[type];
      if (size === undefined || count === 0) continue;
      const at = size * count <= 4 ? e + 8 : f.u32(e + 8);
      if (at + size * count > f.length) {
        warnings.push(`the TIFF's ${name} (tag ${from}) holds tag ${tagName(tag)} pointing past the end of the file; it was ignored`);
        continue;
      }
      entries.set(tag, { tag, type, count, at });
    }
    push(entries);
  }
}

/**
 * Turns one stored row of bytes into typed samples: byte order, predictor, WhiteIsZero and the
 * sample type (TIFF 6.0 §14 horizontal differencing; Technical Note 3 floating-point predictor).
 */
class RowConverter {
  private readonly u8: Uint8Array;
  private readonly u16: Uint16Array;
  private readonly f32: Float32Array;
  private readonly u32: Uint32Array;
  constructor(
    private readonly bits: number,
    private readonly kind: SampleKind,
    private readonly le: boolean,
    private readonly predictor: number,
    private readonly whiteIsZero: boolean,
    private readonly spp: number,
    maxCols: number,
  ) {
    const n = maxCols * spp;
    this.u8 = new Uint8Array(n * (bits / 8));
    this.u16 = bits === 16 ? new Uint16Array(n) : new Uint16Array(0);
    this.f32 = bits === 32 ? new Float32Array(n) : new Float32Array(0);
    this.u32 = bits === 32 && kind !== 'float' ? new Uint32Array(n) : new Uint32Array(0);
  }

  /** Whether a 32-bit integer sample beyond 2²⁴ was seen (held as float, it lost its last digits). */
  beyondFloat = false;

  /** The samples of a row of `cols` pixels (valid until the next call). */
  convert(row: Uint8Array, cols: number): ArrayLike<number> {
    const n = cols * this.spp;
    const spp = this.spp;
    if (this.bits === 8) {
      let b = row;
      if (this.predictor === 2 || this.whiteIsZero) {
        b = this.u8.subarray(0, n);
        b.set(row.subarray(0, n));
        if (this.predictor === 2) for (let i = spp; i < n; i++) b[i] = (b[i] + b[i - spp]) & 255;
        if (this.whiteIsZero) for (let i = 0; i < n; i++) b[i] = 255 - b[i]; // = −1 − v for signed bytes
      }
      return this.kind === 'int' ? new Int8Array(b.buffer, b.byteOffset, n) : b;
    }
    if (this.bits === 16) {
      const u = this.u16;
      if (this.le === HOST_LITTLE_ENDIAN && (row.byteOffset & 1) === 0 && this.predictor === 1 && !this.whiteIsZero) {
        const direct = new Uint16Array(row.buffer, row.byteOffset, n);
        return this.kind === 'int' ? new Int16Array(row.buffer, row.byteOffset, n) : direct;
      }
      if (this.le) for (let i = 0; i < n; i++) u[i] = row[2 * i] | (row[2 * i + 1] << 8);
      else for (let i = 0; i < n; i++) u[i] = (row[2 * i] << 8) | row[2 * i + 1];
      if (this.predictor === 2) for (let i = spp; i < n; i++) u[i] = (u[i] + u[i - spp]) & 0xffff;
      if (this.whiteIsZero) for (let i = 0; i < n; i++) u[i] = 0xffff - u[i];
      return this.kind === 'int' ? new Int16Array(u.buffer, 0, n) : u.subarray(0, n);
    }
    const out = this.f32;
    if (this.kind !== 'float') {
      // 32-bit integers, held as float: exact up to 2²⁴ (the writer's caller warns above)
      const dv = new DataView(row.buffer, row.byteOffset, 4 * n);
      const u = this.u32;
      for (let i = 0; i < n; i++) u[i] = dv.getUint32(4 * i, this.le);
      if (this.predictor === 2) for (let i = spp; i < n; i++) u[i] = (u[i] + u[i - spp]) >>> 0;
      if (this.whiteIsZero) for (let i = 0; i < n; i++) u[i] = this.kind === 'int' ? ~u[i] >>> 0 : 0xffffffff - u[i];
      let largest = 0;
      if (this.kind === 'int') {
        for (let i = 0; i < n; i++) {
          const v = u[i] | 0;
          out[i] = v;
          if (Math.abs(v) > largest) largest = Math.abs(v);
        }
      } else {
        for (let i = 0; i < n; i++) {
          out[i] = u[i];
          if (u[i] > largest) largest = u[i];
        }
      }
      if (largest > 16777216) this.beyondFloat = true;
      return out.subarray(0, n);
    }
    // 32-bit float
    if (this.predictor === 3) {
      // Bytes were differenced across the row (stride spp) after being split into planes, most significant first.
      const b = this.u8;
      b.set(row.subarray(0, 4 * n));
      for (let i = spp; i < 4 * n; i++) b[i] = (b[i] + b[i - spp]) & 255;
      const tmp = new Uint8Array(4);
      const tv = new DataView(tmp.buffer);
      for (let i = 0; i < n; i++) {
        tmp[0] = b[i];
        tmp[1] = b[n + i];
        tmp[2] = b[2 * n + i];
        tmp[3] = b[3 * n + i];
        out[i] = tv.getFloat32(0, false);
      }
    } else if (this.le === HOST_LITTLE_ENDIAN && (row.byteOffset & 3) === 0 && !this.whiteIsZero) {
      return new Float32Array(row.buffer, row.byteOffset, n);
    } else {
      const dv = new DataView(row.buffer, row.byteOffset, 4 * n);
      for (let i = 0; i < n; i++) out[i] = dv.getFloat32(4 * i, this.le);
    }
    if (this.whiteIsZero) for (let i = 0; i < n; i++) out[i] = -out[i];
    return out.subarray(0, n);
  }
}
