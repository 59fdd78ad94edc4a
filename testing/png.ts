/**
 * Test-only PNG tools: split a PNG into chunks, write chunks back with correct (or deliberately
 * wrong) CRCs, change IHDR fields, and encode simple images whose zlib stream the caller controls.
 * Reference: PNG specification (W3C, 3rd ed.) §5.3 (chunk layout, CRC), §11.2.2 (IHDR).
 */
import { zlibSync } from 'fflate';
import { crc32 } from '../src/image/zlib';

/** One chunk: its four-letter type and its data. */
export interface PngChunk {
  type: string;
  data: Uint8Array;
}

const SIGNATURE = Uint8Array.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);

/**
 * The chunks of a well-formed PNG (no checks: test inputs only).
 * @param png - the file.
 * @returns its chunks in order.
 */
export function readChunks(png: Uint8Array): PngChunk[] {
  const v = new DataView(png.buffer, png.byteOffset, png.byteLength);
  const out: PngChunk[] = [];
  for (let at = 8; at + 12 <= png.length; ) {
    const len = v.getUint32(at);
    out.push({ type: String.fromCharCode(...png.subarray(at + 4, at + 8)), data: png.slice(at + 8, at + 8 + len) });
    at += 12 + len;
  }
  return out;
}

/**
 * A PNG file from chunks, each with its CRC (PNG spec §5.3).
 * @param chunks - the chunks in order.
 * @param options - `wrongCrc`: index of a chunk whose CRC is written off by one.
 * @returns the file.
 */
export function writePng(chunks: PngChunk[], options: { wrongCrc?: number } = {}): Uint8Array {
  const size = 8 + chunks.reduce((s, c) => s + 12 + c.data.length, 0);
  const out = new Uint8Array(size);
  const v = new DataView(out.buffer);
  out.set(SIGNATURE);
  let at = 8;
  chunks.forEach((c, i) => {
    v.setUint32(at, c.data.length);
    for (let k = 0; k < 4; k++) out[at + 4 + k] = c.type.charCodeAt(k);
    out.set(c.data, at + 8);
    const crc = crc32(out, at + 4, at + 8 + c.data.length);
    v.setUint32(at + 8 + c.data.length, options.wrongCrc === i ? (crc + 1) >>> 0 : crc);
    at += 12 + c.data.length;
  });
  return out;
}

/**
 * The same PNG with IHDR fields changed and its CRC recomputed.
 * @param png - the file.
 * @param fields - the IHDR fields to set.
 * @returns a new file.
 */
export function withIhdr(png: Uint8Array, fields: { width?: number; height?: number; depth?: number; colourType?: number; interlace?: number }): Uint8Array {
  const chunks = readChunks(png);
  const d = chunks[0].data.slice();
  const v = new DataView(d.buffer);
  if (fields.width !== undefined) v.setUint32(0, fields.width);
  if (fields.height !== undefined) v.setUint32(4, fields.height);
  if (fields.depth !== undefined) d[8] = fields.depth;
  if (fields.colourType !== undefined) d[9] = fields.colourType;
  if (fields.interlace !== undefined) d[12] = fields.interlace;
  chunks[0] = { type: 'IHDR', data: d };
  return writePng(chunks);
}

/**
 * An IHDR chunk's data (PNG spec §11.2.2).
 * @returns 13 bytes.
 */
export function ihdr(width: number, height: number, depth: number, colourType: number, interlace = 0): Uint8Array {
  const d = new Uint8Array(13);
  const v = new DataView(d.buffer);
  v.setUint32(0, width);
  v.setUint32(4, height);
  d[8] = depth;
  d[9] = colourType;
  d[12] = interlace;
  return d;
}

/**
 * A non-interlaced PNG from already filtered scanlines (each row starts with its filter byte).
 * @param width - pixels per row.
 * @param height - rows.
 * @param depth - bit depth.
 * @param colourType - PNG colour type.
 * @param scanlines - the filtered rows, concatenated (the caller may make them too short or too long).
 * @param extra - chunks to put before IDAT (e.g. a PLTE).
 * @returns the file.
 */
export function pngFromScanlines(width: number, height: number, depth: number, colourType: number, scanlines: Uint8Array, extra: PngChunk[] = []): Uint8Array {
  return writePng([{ type: 'IHDR', data: ihdr(width, height, depth, colourType) }, ...extra, { type: 'IDAT', data: zlibSync(scanlines, { level: 9 }) }, { type: 'IEND', data: new Uint8Array(0) }]);
}

/**
 * A grey 8-bit PNG of given pixels (filter 0 on every row).
 * @returns the file.
 */
export function greyPng(width: number, height: number, pixels: Uint8Array): Uint8Array {
  const raw = new Uint8Array(height * (width + 1));
  for (let y = 0; y < height; y++) raw.set(pixels.subarray(y * width, (y + 1) * width), y * (width + 1) + 1);
  return pngFromScanlines(width, height, 8, 0, raw);
}
