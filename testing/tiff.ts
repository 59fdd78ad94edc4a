/**
 * A test-only TIFF builder: strips or tiles, no compression, LZW or Deflate, predictors 1–3,
 * either byte order, and any extra or deliberately wrong tags, so the strict reader can be tested
 * on layouts the project's exporter never writes.
 * Reference: TIFF 6.0 §2 (structure), §8 (fields), §14 (predictor 2), §15 (tiles); Adobe Photoshop
 * TIFF Technical Note 3 (predictor 3).
 */
import { zlibSync } from 'fflate';
import { compressLzw } from './encode-tiff';

/** A tag written as given (type 3 SHORT, 4 LONG, 5 RATIONAL as [num, den] pairs, 2 ASCII bytes, 13 IFD...). */
export interface RawTag {
  tag: number;
  type: number;
  values: number[];
}

/** Options of {@link buildTiff}. */
export interface BuildTiffOptions {
  width: number;
  height: number;
  /** Samples per pixel (default 1). */
  spp?: number;
  bits: 8 | 16 | 32;
  /** 1 unsigned, 2 signed, 3 float (default 1, or 3 for 32 bits). */
  sampleFormat?: number;
  /** Interleaved samples, row-major. */
  data: ArrayLike<number>;
  /** PhotometricInterpretation (default 1, or 2 for spp ≥ 3). */
  photometric?: number;
  /** 1 none, 5 LZW, 8 Deflate (default 1). */
  compression?: 1 | 5 | 8;
  /** 1, 2 or 3 (default 1). */
  predictor?: number;
  /** Tiles instead of strips. */
  tile?: { width: number; length: number };
  /** Rows per strip (default: all rows in one strip). */
  rowsPerStrip?: number;
  bigEndian?: boolean;
  /** Tags added or replacing the builder's own (same number). */
  tags?: RawTag[];
  /** Tags of the builder's own to leave out. */
  omit?: number[];
}

const TYPE_SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4 };

/** The raw bytes of one row of samples in file order, predictor applied. */
function rowBytes(samples: number[], o: BuildTiffOptions, spp: number): Uint8Array {
  const n = samples.length;
  const bps = o.bits / 8;
  const predictor = o.predictor ?? 1;
  const le = !o.bigEndian;
  const kind = o.sampleFormat ?? (o.bits === 32 ? 3 : 1);
  if (predictor === 3) {
    // TN3: each float big-endian, bytes split into planes (most significant first), then differenced
    const planes = new Uint8Array(n * 4);
    const tmp = new DataView(new ArrayBuffer(4));
    for (let i = 0; i < n; i++) {
      tmp.setFloat32(0, samples[i], false);
      for (let k = 0; k < 4; k++) planes[k * n + i] = tmp.getUint8(k);
    }
    for (let i = planes.length - 1; i >= spp; i--) planes[i] = (planes[i] - planes[i - spp]) & 255;
    return planes;
  }
  let vals = samples.slice();
  if (predictor === 2) {
    const mask = o.bits === 8 ? 255 : 0xffff;
    vals = vals.map((v) => v & mask);
    for (let i = n - 1; i >= spp; i--) vals[i] = (vals[i] - vals[i - spp]) & mask;
  }
  const out = new Uint8Array(n * bps);
  const dv = new DataView(out.buffer);
  for (let i = 0; i < n; i++) {
    if (o.bits === 8) out[i] = vals[i] & 255;
    else if (o.bits === 16) dv.setUint16(2 * i, vals[i] & 0xffff, le);
    else if (kind === 3) dv.setFloat32(4 * i, vals[i], le);
    else dv.setUint32(4 * i, vals[i] >>> 0, le);
  }
  return out;
}

/**
 * Builds a TIFF file (one page).
 * @param o - layout, samples and tags.
 * @returns the file's bytes.
 */
export function buildTiff(o: BuildTiffOptions): Uint8Array {
  const spp = o.spp ?? 1;
  const le = !o.bigEndian;
  const compression = o.compression ?? 1;
  const compress = (raw: Uint8Array) => (compression === 5 ? compressLzw(raw) : compression === 8 ? zlibSync(raw) : raw);
  const sample = (x: number, y: number, s: number) => (x < o.width && y < o.height ? Number(o.data[(y * o.width + x) * spp + s]) : 0);
  const segments: Uint8Array[] = [];
  if (o.tile) {
    const { width: tw, length: tl } = o.tile;
    for (let ty = 0; ty < Math.ceil(o.height / tl); ty++) {
      for (let tx = 0; tx < Math.ceil(o.width / tw); tx++) {
        const rows: Uint8Array[] = [];
        for (let r = 0; r < tl; r++) {
          const s: number[] = [];
          for (let c = 0; c < tw; c++) for (let k = 0; k < spp; k++) s.push(sample(tx * tw + c, ty * tl + r, k));
          rows.push(rowBytes(s, o, spp));
        }
        segments.push(compress(concat(rows)));
      }
    }
  } else {
    const rps = o.rowsPerStrip ?? o.height;
    for (let y0 = 0; y0 < o.height; y0 += rps) {
      const rows: Uint8Array[] = [];
      for (let y = y0; y < Math.min(o.height, y0 + rps); y++) {
        const s: number[] = [];
        for (let x = 0; x < o.width; x++) for (let k = 0; k < spp; k++) s.push(sample(x, y, k));
        rows.push(rowBytes(s, o, spp));
      }
      segments.push(compress(concat(rows)));
    }
  }
  const dataStart = 8;
  const offsets: number[] = [];
  let at = dataStart;
  for (const s of segments) {
    offsets.push(at);
    at += s.length + (s.length & 1);
  }
  const tags = new Map<number, RawTag>();
  const put = (tag: number, type: number, values: number[]) => tags.set(tag, { tag, type, values });
  put(256, 4, [o.width]);
  put(257, 4, [o.height]);
  put(258, 3, new Array(spp).fill(o.bits));
  put(259, 3, [compression]);
  put(262, 3, [o.photometric ?? (spp >= 3 ? 2 : 1)]);
  put(277, 3, [spp]);
  put(339, 3, new Array(spp).fill(o.sampleFormat ?? (o.bits === 32 ? 3 : 1)));
  if ((o.predictor ?? 1) !== 1) put(317, 3, [o.predictor!]);
  if (o.tile) {
    put(322, 4, [o.tile.width]);
    put(323, 4, [o.tile.length]);
    put(324, 4, offsets);
    put(325, 4, segments.map((s) => s.length));
  } else {
    put(273, 4, offsets);
    put(278, 4, [o.rowsPerStrip ?? o.height]);
    put(279, 4, segments.map((s) => s.length));
  }
  for (const t of o.omit ?? []) tags.delete(t);
  for (const t of o.tags ?? []) tags.set(t.tag, t);
  const entries = [...tags.values()].sort((a, b) => a.tag - b.tag);
  const ifdAt = at;
  const ifdSize = 2 + entries.length * 12 + 4;
  let extraAt = ifdAt + ifdSize;
  const valueBytes = (t: RawTag) => (t.type === 5 || t.type === 10 ? t.values.length / 2 : t.values.length) * TYPE_SIZE[t.type];
  const extraSize = entries.reduce((s, t) => s + (valueBytes(t) > 4 ? valueBytes(t) + (valueBytes(t) & 1) : 0), 0);
  const out = new Uint8Array(extraAt + extraSize);
  const v = new DataView(out.buffer);
  out.set(le ? [0x49, 0x49] : [0x4d, 0x4d]);
  v.setUint16(2, 42, le);
  v.setUint32(4, ifdAt, le);
  segments.forEach((s, i) => out.set(s, offsets[i]));
  v.setUint16(ifdAt, entries.length, le);
  entries.forEach((t, i) => {
    const e = ifdAt + 2 + i * 12;
    const count = t.type === 5 || t.type === 10 ? t.values.length / 2 : t.values.length;
    v.setUint16(e, t.tag, le);
    v.setUint16(e + 2, t.type, le);
    v.setUint32(e + 4, count, le);
    const size = valueBytes(t);
    let p = e + 8;
    if (size > 4) {
      v.setUint32(e + 8, extraAt, le);
      p = extraAt;
      extraAt += size + (size & 1);
    }
    t.values.forEach((val, k) => {
      switch (TYPE_SIZE[t.type]) {
        case 1: out[p + k] = val; break;
        case 2: v.setUint16(p + 2 * k, val, le); break;
        case 4: v.setUint32(p + 4 * k, val >>> 0, le); break;
        default: v.setUint32(p + 4 * k, val >>> 0, le); break; // rationals: num, den pairs
      }
    });
  });
  v.setUint32(ifdAt + 2 + entries.length * 12, 0, le);
  return out;
}

function concat(parts: Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((s, p) => s + p.length, 0));
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

/**
 * The byte offset of the first directory's entry for a tag (for hand edits), or −1.
 * @param bytes - a TIFF.
 * @param tag - the tag number.
 */
export function entryOffset(bytes: Uint8Array, tag: number): number {
  const le = bytes[0] === 0x49;
  const v = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const ifd = v.getUint32(4, le);
  const n = v.getUint16(ifd, le);
  for (let i = 0; i < n; i++) if (v.getUint16(ifd + 2 + i * 12, le) === tag) return ifd + 2 + i * 12;
  return -1;
}

/**
 * The offset of the first directory (for building sub-directory loops).
 * @param bytes - a TIFF.
 */
export function firstIfdOffset(bytes: Uint8Array): number {
  return new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength).getUint32(4, bytes[0] === 0x49);
}
