/**
 * TIFF LZW decompression on typed arrays (a fast path for the TIFF reader).
 */

/**
 * Decompresses one TIFF LZW strip.
 *
 * @param input - the strip's compressed bytes.
 * @param expectedLength - the strip's uncompressed size in bytes; output stops there.
 * @returns exactly expectedLength bytes, or fewer when the stream ends early (EOI or end of data).
 * @throws Error on a code that is not yet in the table (corrupt data).
 *
 * Notes: MSB-first codes of 9–12 bits, Clear 256, EOI 257, first free code 258, code width
 * growing one code early ("early change", as written by the usual TIFF encoders). The table is
 * held as prefix/suffix arrays, so decoding is linear in the output.
 * Reference: TIFF Revision 6.0 (Adobe, 1992), section 13; Welch, IEEE Computer 17(6), 8 (1984).
 */
export function decompressLzw(input: Uint8Array, expectedLength: number): Uint8Array {
  if (!Number.isInteger(expectedLength) || expectedLength < 0) throw new RangeError(`expectedLength must be a non-negative integer, got ${expectedLength}`);
  const out = new Uint8Array(expectedLength);
  const prefix = new Int32Array(4096);
  const suffix = new Uint8Array(4096);
  const first = new Uint8Array(4096);
  const length = new Int32Array(4096);
  for (let i = 0; i < 256; i++) {
    suffix[i] = i;
    first[i] = i;
    length[i] = 1;
    prefix[i] = -1;
  }
  let next = 258;
  let width = 9;
  let old = -1;
  let pos = 0;
  let bitBuf = 0;
  let bitCount = 0;
  let inPos = 0;
  const n = input.length;
  while (pos < expectedLength) {
    while (bitCount < width) {
      if (inPos >= n) return out.subarray(0, pos);
      bitBuf = ((bitBuf << 8) | input[inPos++]) >>> 0;
      bitCount += 8;
    }
    const code = (bitBuf >>> (bitCount - width)) & ((1 << width) - 1);
    bitCount -= width;
    bitBuf &= (1 << bitCount) - 1;
    if (code === 257) break;
    if (code === 256) {
      next = 258;
      width = 9;
      old = -1;
      continue;
    }
    if (old === -1) {
      if (code > 255) throw new Error(`LZW code ${code} after a Clear code`);
      out[pos++] = code;
      old = code;
      continue;
    }
    let entry: number;
    if (code < next) entry = code;
    else if (code === next) entry = old; // the KwKwK case: old string + its first byte
    else throw new Error(`LZW code ${code} is beyond the table (next ${next})`);
    // Write the string of `entry` backwards into its place.
    const len = length[entry];
    const end = Math.min(pos + len, expectedLength);
    let c = entry;
    for (let k = pos + len - 1; k >= pos; k--) {
      if (k < end) out[k] = suffix[c];
      c = prefix[c];
    }
    pos = end;
    if (code === next && pos < expectedLength) out[pos++] = first[old];
    if (next < 4096) {
      prefix[next] = old;
      suffix[next] = first[entry];
      first[next] = first[old];
      length[next] = length[old] + 1;
      next++;
      if (next + 1 >= 1 << width && width < 12) width++;
    }
    old = code;
  }
  return out.subarray(0, pos);
}
