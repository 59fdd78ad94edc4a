/** Helpers that make and edit small image files for the image tests (no binaries committed). */

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
