/**
 * A small baseline TIFF writer (little-endian, one strip set per page) for exports, demo data,
 * test fixtures and benchmarks.
 *
 * Reference: TIFF Revision 6.0 (Adobe, 1992), sections 2 (structure), 8 (baseline fields),
 * 13 (LZW) and 19 (SampleFormat); Deflate as compression 8 from the Adobe TIFF Technical Note
 * (2002), stored as a zlib stream (RFC 1950).
 */
import { zlibSync } from 'fflate';

/** How a page's strips are compressed. */
export type TiffCompression = 'none' | 'deflate' | 'lzw' | 'packbits';

/** The unit the resolution values count pixels per (TIFF ResolutionUnit 1, 2, 3). */
export type TiffResolutionUnit = 'none' | 'inch' | 'cm';

export interface EncodeTiffOptions {
  /** Width in pixels. */
  width: number;
  /** Height in pixels. */
  height: number;
  /**
   * Samples, row-major, samplesPerPixel values per pixel interleaved. The array type sets the
   * sample type: Uint8Array 8-bit unsigned, Uint16Array 16-bit unsigned, Uint32Array and
   * Int32Array 32-bit unsigned and signed integers, Float32Array 32-bit float.
   */
  data: Uint8Array | Uint16Array | Uint32Array | Int32Array | Float32Array;
  /** 1 grey (default), 3 RGB, 4 RGBA (the fourth sample is unassociated alpha). */
  samplesPerPixel?: 1 | 3 | 4;
  /** Strip compression; default 'none'. */
  compression?: TiffCompression;
  /**
   * Resolution as pixels per unit (TIFF XResolution, YResolution, ResolutionUnit); y defaults to x.
   * Example: 0.25 nm per pixel is 1e7 / 0.25 = 4e7 pixels per cm.
   */
  resolution?: { x: number; y?: number; unit: TiffResolutionUnit };
  /** ImageDescription (tag 270), ASCII. */
  description?: string;
  /** Software (tag 305), ASCII. */
  software?: string;
  /** Deflate effort 1 (fastest) to 9 (smallest); default 6. */
  deflateLevel?: number;
  /** Rows per strip; default: as many rows as fit in about 64 KiB, at least 1. */
  rowsPerStrip?: number;
}

const TYPE_BYTE = 1;
const TYPE_ASCII = 2;
const TYPE_SHORT = 3;
const TYPE_LONG = 4;
const TYPE_RATIONAL = 5;

interface Entry {
  tag: number;
  type: number;
  /** Numbers for SHORT/LONG/BYTE; [num, den] pairs flattened for RATIONAL; bytes for ASCII. */
  values: number[] | Uint8Array;
}

function typeSize(type: number): number {
  return type === TYPE_SHORT ? 2 : type === TYPE_LONG ? 4 : type === TYPE_RATIONAL ? 8 : 1;
}

function count(e: Entry): number {
  return e.type === TYPE_RATIONAL ? e.values.length / 2 : e.values.length;
}

/** A positive number as a TIFF RATIONAL (two uint32) with as many significant digits as fit. */
export function toRational(value: number): [number, number] {
  if (!Number.isFinite(value) || value <= 0) throw new RangeError(`resolution must be a positive finite number, got ${value}`);
  if (value > 0xffffffff) throw new RangeError(`resolution ${value} does not fit a TIFF RATIONAL`);
  let den = 1;
  while (den < 1e9 && value * den * 10 <= 0xffffffff) den *= 10;
  let num = Math.round(value * den);
  if (num === 0) num = 1;
  return [num, den];
}

function asciiBytes(text: string, field: string): Uint8Array {
  const out = new Uint8Array(text.length + 1);
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c > 127) throw new RangeError(`${field} must be ASCII, found character code ${c} at ${i}`);
    out[i] = c;
  }
  return out; // NUL-terminated (TIFF 6.0, section 2, type ASCII)
}

/**
 * TIFF LZW compression (TIFF 6.0 section 13): MSB-first codes of 9–12 bits, Clear = 256,
 * EOI = 257, first free code 258, code width grows one code early ("early change").
 */
export function compressLzw(input: Uint8Array): Uint8Array {
  return compressLzwWith(input, newLzwTables());
}

interface LzwTables {
  codes: Uint16Array;
  stamp: Uint32Array;
  generation: number;
}

function newLzwTables(): LzwTables {
  return { codes: new Uint16Array(4096 * 256), stamp: new Uint32Array(4096 * 256), generation: 0 };
}

/** LZW with caller-owned tables, so that the strips of one page share one allocation. */
function compressLzwWith(input: Uint8Array, tables: LzwTables): Uint8Array {
  // At most 12 bits per input byte, plus Clear codes and EOI.
  const out = new Uint8Array(Math.ceil(input.length * 1.5) + Math.ceil(input.length / 2000) * 2 + 16);
  let o = 0;
  let bitBuf = 0;
  let bitCount = 0;
  let width = 9;
  const put = (code: number) => {
    bitBuf = (bitBuf << width) | code;
    bitCount += width;
    while (bitCount >= 8) {
      bitCount -= 8;
      out[o++] = (bitBuf >>> bitCount) & 0xff;
    }
    bitBuf &= (1 << bitCount) - 1;
  };
  // Table lookup by (prefix code, byte) = prefix * 256 + byte, direct-indexed; a generation
  // stamp per slot makes a table reset O(1).
  const { codes, stamp } = tables;
  let generation = ++tables.generation;
  let next = 258;
  put(256);
  if (input.length > 0) {
    let w = input[0];
    for (let i = 1; i < input.length; i++) {
      const k = input[i];
      const key = w * 256 + k;
      if (stamp[key] === generation) {
        w = codes[key];
        continue;
      }
      put(w);
      stamp[key] = generation;
      codes[key] = next++;
      if (next === 4094) {
        put(256);
        generation = ++tables.generation;
        next = 258;
        width = 9;
      } else if (next > (1 << width) - 1) {
        width++;
      }
      w = k;
    }
    put(w);
    next++;
    if (next > (1 << width) - 1 && width < 12) width++;
  }
  put(257);
  if (bitCount > 0) out[o++] = (bitBuf << (8 - bitCount)) & 0xff;
  return out.slice(0, o);
}

function validate(o: EncodeTiffOptions): void {
  if (!Number.isInteger(o.width) || o.width < 1) throw new RangeError(`width must be a positive integer, got ${o.width}`);
  if (!Number.isInteger(o.height) || o.height < 1) throw new RangeError(`height must be a positive integer, got ${o.height}`);
  const spp = o.samplesPerPixel ?? 1;
  if (spp !== 1 && spp !== 3 && spp !== 4) throw new RangeError(`samplesPerPixel must be 1, 3 or 4, got ${spp}`);
  if (!(o.data instanceof Uint8Array || o.data instanceof Uint16Array || o.data instanceof Uint32Array || o.data instanceof Int32Array || o.data instanceof Float32Array)) {
    throw new TypeError('data must be a Uint8Array, Uint16Array, Uint32Array, Int32Array or Float32Array');
  }
  if (o.data.length !== o.width * o.height * spp) {
    throw new RangeError(`data length ${o.data.length} does not match ${o.width} × ${o.height} × ${spp} = ${o.width * o.height * spp}`);
  }
  const c = o.compression ?? 'none';
  if (c !== 'none' && c !== 'deflate' && c !== 'lzw' && c !== 'packbits') throw new RangeError(`compression must be 'none', 'deflate', 'lzw' or 'packbits', got '${c}'`);
  if (o.rowsPerStrip !== undefined && (!Number.isInteger(o.rowsPerStrip) || o.rowsPerStrip < 1)) {
    throw new RangeError(`rowsPerStrip must be a positive integer, got ${o.rowsPerStrip}`);
  }
  if (o.deflateLevel !== undefined && (!Number.isInteger(o.deflateLevel) || o.deflateLevel < 1 || o.deflateLevel > 9)) {
    throw new RangeError(`deflateLevel must be an integer from 1 to 9, got ${o.deflateLevel}`);
  }
  if (o.resolution) {
    const u = o.resolution.unit;
    if (u !== 'none' && u !== 'inch' && u !== 'cm') throw new RangeError(`resolution unit must be 'none', 'inch' or 'cm', got '${u}'`);
  }
}

/**
 * PackBits, each row packed on its own as TIFF 6.0 §9 asks: runs of 3 to 128 equal bytes as a
 * repeat, the rest as literal runs of at most 128 bytes.
 */
export function packBitsRows(data: Uint8Array, rowBytes: number): Uint8Array {
  const out: number[] = [];
  for (let r = 0; r < data.length; r += rowBytes) {
    const row = data.subarray(r, Math.min(data.length, r + rowBytes));
    let i = 0;
    while (i < row.length) {
      let run = 1;
      while (i + run < row.length && run < 128 && row[i + run] === row[i]) run++;
      if (run >= 3) {
        out.push((1 - run) & 255, row[i]);
        i += run;
        continue;
      }
      const start = i;
      while (i < row.length && i - start < 128 && !(i + 2 < row.length && row[i] === row[i + 1] && row[i] === row[i + 2])) i++;
      out.push(i - start - 1);
      for (let k = start; k < i; k++) out.push(row[k]);
    }
  }
  return Uint8Array.from(out);
}

interface PageLayout {
  entries: Entry[];
  strips: Uint8Array[];
  stripOffsetsIndex: number;
}

function buildPage(o: EncodeTiffOptions): PageLayout {
  validate(o);
  const spp = o.samplesPerPixel ?? 1;
  const bytesPerSample = o.data.BYTES_PER_ELEMENT;
  const bits = bytesPerSample * 8;
  const sampleFormat = o.data instanceof Float32Array ? 3 : o.data instanceof Int32Array ? 2 : 1;
  const rowBytes = o.width * spp * bytesPerSample;
  const rowsPerStrip = Math.min(o.height, o.rowsPerStrip ?? Math.max(1, Math.floor(65536 / rowBytes)));
  // Samples as little-endian bytes (typed arrays are little-endian on every platform we run on,
  // but write through a DataView so the file does not depend on it).
  const raw = new Uint8Array(o.data.length * bytesPerSample);
  const view = new DataView(raw.buffer);
  const d = o.data;
  if (d instanceof Uint8Array) raw.set(d);
  else if (d instanceof Uint16Array) for (let i = 0; i < d.length; i++) view.setUint16(i * 2, d[i], true);
  else if (d instanceof Uint32Array) for (let i = 0; i < d.length; i++) view.setUint32(i * 4, d[i], true);
  else if (d instanceof Int32Array) for (let i = 0; i < d.length; i++) view.setInt32(i * 4, d[i], true);
  else for (let i = 0; i < d.length; i++) view.setFloat32(i * 4, d[i], true);

  const compression = o.compression ?? 'none';
  const strips: Uint8Array[] = [];
  const tables = compression === 'lzw' ? newLzwTables() : null;
  for (let y = 0; y < o.height; y += rowsPerStrip) {
    const rows = Math.min(rowsPerStrip, o.height - y);
    const chunk = raw.subarray(y * rowBytes, (y + rows) * rowBytes);
    strips.push(compression === 'deflate' ? zlibSync(chunk, { level: (o.deflateLevel ?? 6) as 6 }) : tables ? compressLzwWith(chunk, tables) : compression === 'packbits' ? packBitsRows(chunk, rowBytes) : chunk);
  }

  const entries: Entry[] = [
    { tag: 256, type: TYPE_LONG, values: [o.width] }, // ImageWidth
    { tag: 257, type: TYPE_LONG, values: [o.height] }, // ImageLength
    { tag: 258, type: TYPE_SHORT, values: new Array(spp).fill(bits) }, // BitsPerSample
    { tag: 259, type: TYPE_SHORT, values: [compression === 'deflate' ? 8 : compression === 'lzw' ? 5 : compression === 'packbits' ? 32773 : 1] }, // Compression
    { tag: 262, type: TYPE_SHORT, values: [spp === 1 ? 1 : 2] }, // PhotometricInterpretation: BlackIsZero / RGB
  ];
  if (o.description !== undefined) entries.push({ tag: 270, type: TYPE_ASCII, values: asciiBytes(o.description, 'description') });
  entries.push({ tag: 273, type: TYPE_LONG, values: strips.map(() => 0) }); // StripOffsets, filled in later
  const stripOffsetsIndex = entries.length - 1;
  entries.push(
    { tag: 277, type: TYPE_SHORT, values: [spp] }, // SamplesPerPixel
    { tag: 278, type: TYPE_LONG, values: [rowsPerStrip] }, // RowsPerStrip
    { tag: 279, type: TYPE_LONG, values: strips.map((s) => s.length) }, // StripByteCounts
  );
  if (o.resolution) {
    const x = toRational(o.resolution.x);
    const y = toRational(o.resolution.y ?? o.resolution.x);
    entries.push(
      { tag: 282, type: TYPE_RATIONAL, values: x }, // XResolution
      { tag: 283, type: TYPE_RATIONAL, values: y }, // YResolution
    );
  }
  entries.push({ tag: 284, type: TYPE_SHORT, values: [1] }); // PlanarConfiguration: chunky
  if (o.resolution) {
    entries.push({ tag: 296, type: TYPE_SHORT, values: [o.resolution.unit === 'none' ? 1 : o.resolution.unit === 'inch' ? 2 : 3] });
  }
  if (o.software !== undefined) entries.push({ tag: 305, type: TYPE_ASCII, values: asciiBytes(o.software, 'software') });
  if (spp === 4) entries.push({ tag: 338, type: TYPE_SHORT, values: [2] }); // ExtraSamples: unassociated alpha
  entries.push({ tag: 339, type: TYPE_SHORT, values: new Array(spp).fill(sampleFormat) }); // SampleFormat
  return { entries, strips, stripOffsetsIndex };
}

/**
 * Writes a greyscale (or RGB/RGBA) baseline TIFF, little-endian.
 *
 * @param options - the image and its tags, see {@link EncodeTiffOptions}.
 * @returns the file's bytes.
 *
 * Notes: 8/16-bit unsigned or 32-bit IEEE float samples (SampleFormat 1 or 3), BlackIsZero,
 * chunky planar configuration, strips; compression none (1), LZW (5) or Deflate (8).
 * Reference: TIFF Revision 6.0 (Adobe, 1992).
 */
export function encodeTiff(options: EncodeTiffOptions): Uint8Array {
  return encodeTiffPages([options]);
}

/**
 * Writes several pages into one TIFF (a chain of IFDs), for multi-page files.
 *
 * @param pages - one options object per page, in order; at least one.
 * @returns the file's bytes.
 * Reference: TIFF Revision 6.0 (Adobe, 1992), section 2 (multiple IFDs).
 */
export function encodeTiffPages(pages: EncodeTiffOptions[]): Uint8Array {
  if (!Array.isArray(pages) || pages.length === 0) throw new RangeError(`pages must be a non-empty array, got ${pages?.length}`);
  const layouts = pages.map(buildPage);
  const align = (n: number) => n + (n & 1); // word boundary (TIFF 6.0, section 2)

  // Sizes: header, then per page: strips, IFD, out-of-line values.
  let offset = 8;
  const plans = layouts.map((layout) => {
    const stripOffsets: number[] = [];
    for (const s of layout.strips) {
      stripOffsets.push(offset);
      offset = align(offset + s.length);
    }
    layout.entries[layout.stripOffsetsIndex].values = stripOffsets;
    const ifdOffset = offset;
    offset += 2 + layout.entries.length * 12 + 4;
    const valueOffsets = layout.entries.map((e) => {
      const size = typeSize(e.type) * count(e);
      if (size <= 4) return -1;
      const at = offset;
      offset = align(offset + size);
      return at;
    });
    return { ifdOffset, valueOffsets };
  });

  const out = new Uint8Array(offset);
  const v = new DataView(out.buffer);
  out[0] = 0x49; // 'II' little-endian
  out[1] = 0x49;
  v.setUint16(2, 42, true);
  v.setUint32(4, plans[0].ifdOffset, true);

  const writeValues = (at: number, e: Entry) => {
    if (e.type === TYPE_ASCII || e.type === TYPE_BYTE) out.set(e.values as Uint8Array, at);
    else {
      const vals = e.values as number[];
      const step = e.type === TYPE_SHORT ? 2 : 4;
      for (let i = 0; i < vals.length; i++) {
        if (step === 2) v.setUint16(at + i * 2, vals[i], true);
        else v.setUint32(at + i * 4, vals[i], true);
      }
    }
  };

  layouts.forEach((layout, p) => {
    const plan = plans[p];
    const offsets = layout.entries[layout.stripOffsetsIndex].values as number[];
    layout.strips.forEach((s, i) => out.set(s, offsets[i]));
    let at = plan.ifdOffset;
    v.setUint16(at, layout.entries.length, true);
    at += 2;
    layout.entries.forEach((e, i) => {
      v.setUint16(at, e.tag, true);
      v.setUint16(at + 2, e.type, true);
      v.setUint32(at + 4, count(e), true);
      if (plan.valueOffsets[i] < 0) writeValues(at + 8, e);
      else {
        v.setUint32(at + 8, plan.valueOffsets[i], true);
        writeValues(plan.valueOffsets[i], e);
      }
      at += 12;
    });
    v.setUint32(at, p + 1 < plans.length ? plans[p + 1].ifdOffset : 0, true);
  });
  return out;
}
