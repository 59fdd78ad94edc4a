/** Functions that make and edit small image files for the image tests (no binaries committed). */

/** Overwrites the inline value of a SHORT or LONG tag in the first IFD of a little-endian TIFF. */
export function setTiffTag(bytes: Uint8Array, tag: number, value: number): Uint8Array {
  const out = bytes.slice();
  const v = new DataView(out.buffer);
  const ifd = v.getUint32(4, true);
  const n = v.getUint16(ifd, true);
  for (let i = 0; i < n; i++) {
    const e = ifd + 2 + i * 12;
    if (v.getUint16(e, true) !== tag) continue;
    const type = v.getUint16(e + 2, true);
    if (type === 3) v.setUint16(e + 8, value, true);
    else v.setUint32(e + 8, value, true);
    return out;
  }
  throw new Error(`tag ${tag} not found`);
}

/** Renumbers a tag in the first IFD of a little-endian TIFF (e.g. to a private number, removing it). */
export function renumberTiffTag(bytes: Uint8Array, tag: number, newTag: number): Uint8Array {
  const out = bytes.slice();
  const v = new DataView(out.buffer);
  const ifd = v.getUint32(4, true);
  const n = v.getUint16(ifd, true);
  for (let i = 0; i < n; i++) {
    const e = ifd + 2 + i * 12;
    if (v.getUint16(e, true) === tag) {
      v.setUint16(e, newTag, true);
      return out;
    }
  }
  throw new Error(`tag ${tag} not found`);
}

/** Sets 4-byte word n (1-based) of an MRC header, little-endian. */
export function setMrcWord(bytes: Uint8Array, word: number, value: number, float = false): Uint8Array {
  const out = bytes.slice();
  const v = new DataView(out.buffer);
  if (float) v.setFloat32((word - 1) * 4, value, true);
  else v.setInt32((word - 1) * 4, value, true);
  return out;
}

const CRC_TABLE = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

/** CRC-32 as used by PNG chunks (PNG specification, annex D). */
export function crc32(bytes: Uint8Array): number {
  let c = 0xffffffff;
  for (const b of bytes) c = CRC_TABLE[(c ^ b) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/** Inserts a pHYs chunk (pixels per unit x, y; unit 0 unknown, 1 metre) after IHDR. */
export function addPngPhys(png: Uint8Array, x: number, y: number, unit: 0 | 1): Uint8Array {
  const chunk = new Uint8Array(12 + 9);
  const v = new DataView(chunk.buffer);
  v.setUint32(0, 9);
  chunk.set([0x70, 0x48, 0x59, 0x73], 4); // 'pHYs'
  v.setUint32(8, x);
  v.setUint32(12, y);
  chunk[16] = unit;
  v.setUint32(17, crc32(chunk.subarray(4, 17)));
  const afterIhdr = 8 + 12 + 13;
  const out = new Uint8Array(png.length + chunk.length);
  out.set(png.subarray(0, afterIhdr));
  out.set(chunk, afterIhdr);
  out.set(png.subarray(afterIhdr), afterIhdr + chunk.length);
  return out;
}

/** A deterministic pseudo-random generator (LCG, Numerical Recipes constants) in [0, 1). */
export function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => (s = (s * 1664525 + 1013904223) >>> 0) / 2 ** 32;
}

/**
 * A greyscale baseline JPEG built by hand (ITU-T T.81 annex B) whose 8 × 8 blocks are flat:
 * block k has grey value 128 + dc[k] / 8 (DC coefficient dc[k], all quantiser steps 1, AC all
 * zero). dc values must be 0 or 256 (steps between neighbours 0 or ±256). Blocks run left to right, top to bottom.
 */
export function greyJpeg(blocksX: number, blocksY: number, dc: number[]): Uint8Array {
  if (dc.length !== blocksX * blocksY) throw new Error('one DC value per block');
  const out: number[] = [0xff, 0xd8];
  const segment = (marker: number, body: number[]) => out.push(0xff, marker, (body.length + 2) >> 8, (body.length + 2) & 0xff, ...body);
  segment(0xdb, [0x00, ...new Array(64).fill(1)]); // DQT: table 0, 8-bit, all steps 1
  const w = blocksX * 8;
  const h = blocksY * 8;
  segment(0xc0, [8, h >> 8, h & 0xff, w >> 8, w & 0xff, 1, 1, 0x11, 0]); // SOF0: 1 component
  // DHT DC table 0: category 0 -> code '0' (length 1), category 9 -> code '10' (length 2).
  segment(0xc4, [0x00, 1, 1, ...new Array(14).fill(0), 0, 9]);
  // DHT AC table 0: EOB (0x00) -> code '0'.
  segment(0xc4, [0x10, 1, ...new Array(15).fill(0), 0x00]);
  segment(0xda, [1, 1, 0x00, 0, 63, 0]); // SOS: component 1, tables 0/0, Ss 0, Se 63
  const bits: number[] = [];
  let previous = 0;
  for (const value of dc) {
    const diff = value - previous;
    previous = value;
    if (diff === 0) bits.push(0);
    else {
      // Category 9 holds |diff| in 256..511 (T.81 Table F.1); only ±256 is needed here.
      if (Math.abs(diff) !== 256) throw new Error('DC steps between blocks must be 0 or ±256');
      bits.push(1, 0);
      const extra = diff > 0 ? diff : diff + 511; // T.81 F.1.2.1: negative values as one's complement
      for (let b = 8; b >= 0; b--) bits.push((extra >> b) & 1);
    }
    bits.push(0); // EOB
  }
  while (bits.length % 8) bits.push(1); // pad with 1-bits (T.81 F.1.2.3)
  for (let i = 0; i < bits.length; i += 8) {
    let byte = 0;
    for (let b = 0; b < 8; b++) byte = (byte << 1) | bits[i + b];
    out.push(byte);
    if (byte === 0xff) out.push(0x00); // byte stuffing (T.81 B.1.1.5)
  }
  out.push(0xff, 0xd9);
  return Uint8Array.from(out);
}

/**
 * Turns an uncompressed single-page little-endian TIFF (as encodeTiff writes it) into the same
 * image in big-endian ("MM") byte order: header, directory entries, out-of-line values and
 * samples are all byte-swapped (TIFF 6.0 section 2).
 */
export function tiffToBigEndian(bytes: Uint8Array, bytesPerSample: 1 | 2 | 4): Uint8Array {
  const src = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const out = bytes.slice();
  const dst = new DataView(out.buffer);
  out[0] = out[1] = 0x4d;
  dst.setUint16(2, 42, false);
  const ifd = src.getUint32(4, true);
  dst.setUint32(4, ifd, false);
  const n = src.getUint16(ifd, true);
  dst.setUint16(ifd, n, false);
  const size: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 4 };
  let stripOffsets: number[] = [];
  let stripCounts: number[] = [];
  const swapValues = (at: number, type: number, count: number) => {
    const vals: number[] = [];
    const items = type === 5 ? count * 2 : count;
    for (let i = 0; i < items; i++) {
      if (size[type] === 2) {
        const v = src.getUint16(at + 2 * i, true);
        dst.setUint16(at + 2 * i, v, false);
        vals.push(v);
      } else if (size[type] === 4) {
        const v = src.getUint32(at + 4 * i, true);
        dst.setUint32(at + 4 * i, v, false);
        vals.push(v);
      }
    }
    return vals;
  };
  for (let i = 0; i < n; i++) {
    const e = ifd + 2 + i * 12;
    const tag = src.getUint16(e, true);
    const type = src.getUint16(e + 2, true);
    const count = src.getUint32(e + 4, true);
    dst.setUint16(e, tag, false);
    dst.setUint16(e + 2, type, false);
    dst.setUint32(e + 4, count, false);
    const total = (type === 5 ? 8 : size[type]) * count;
    let vals: number[];
    if (total <= 4) {
      out.set(bytes.subarray(e + 8, e + 12), e + 8);
      vals = swapValues(e + 8, type, count);
    } else {
      const at = src.getUint32(e + 8, true);
      dst.setUint32(e + 8, at, false);
      vals = swapValues(at, type, count);
    }
    if (tag === 273) stripOffsets = vals;
    if (tag === 279) stripCounts = vals;
  }
  stripOffsets.forEach((at, s) => {
    for (let k = 0; k < stripCounts[s]; k += bytesPerSample) {
      for (let b = 0; b < bytesPerSample; b++) out[at + k + b] = bytes[at + k + bytesPerSample - 1 - b];
    }
  });
  return out;
}
