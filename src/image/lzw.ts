/**
 * TIFF LZW decompression on typed arrays, streamed in pieces under an output cap.
 */

/** Damaged LZW data; the message says what is wrong in plain words. */
export class LzwDataError extends Error {
  override name = 'LzwDataError';
}

/** Output bytes collected before they are handed to the sink. */
const PIECE = 65536;

/**
 * Decompresses one TIFF LZW strip or tile, handing the output to a sink in pieces.
 *
 * @param input - the strip's compressed bytes.
 * @param maxBytes - the most bytes to produce; decoding stops there (the strip's rows need no more).
 * @param sink - receives the output in order; the piece is reused after the call.
 * @returns the number of bytes produced: maxBytes, or fewer when the stream ends early (EOI or end of data).
 * @throws LzwDataError on a code that is not yet in the table (damaged data).
 *
 * Notes: MSB-first codes of 9–12 bits, Clear 256, EOI 257, first free code 258, code width
 * growing one code early ("early change", as written by the usual TIFF encoders). The table is
 * held as prefix/suffix arrays and strings are written from it, never from earlier output, so
 * only one piece of output exists at a time whatever the strip's size.
 * Reference: TIFF Revision 6.0 (Adobe, 1992), section 13; Welch, IEEE Computer 17(6), 8 (1984).
 */
export function lzwDecode(input: Uint8Array, maxBytes: number, sink: (piece: Uint8Array) => void): number {
  if (!Number.isInteger(maxBytes) || maxBytes < 0) throw new RangeError(`maxBytes must be a non-negative integer, got ${maxBytes}`);
  // A string is at most 4096 bytes long (one per table entry), so a piece never overflows.
  const buf = new Uint8Array(Math.min(PIECE, maxBytes) + 4097);
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
  let pos = 0; // in buf
  let done = 0; // handed to the sink
  let bitBuf = 0;
  let bitCount = 0;
  let inPos = 0;
  const n = input.length;
  const flush = () => {
    if (pos > 0) sink(buf.subarray(0, pos));
    done += pos;
    pos = 0;
  };
  while (done + pos < maxBytes) {
    if (pos >= PIECE) flush();
    while (bitCount < width) {
      if (inPos >= n) {
        flush();
        return done;
      }
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
    const room = maxBytes - done; // bytes of buf still allowed
    if (old === -1) {
      if (code > 255) throw new LzwDataError(`LZW code ${code} follows a Clear code, where only a single byte (0–255) may: the compressed data is damaged`);
      buf[pos++] = code;
      old = code;
      continue;
    }
    let entry: number;
    if (code < next) entry = code;
    else if (code === next) entry = old; // the KwKwK case: old string + its first byte
    else throw new LzwDataError(`LZW code ${code} is beyond the table (next ${next}): the compressed data is damaged`);
    // Write the string of `entry` backwards into its place.
    const len = length[entry];
    const end = Math.min(pos + len, room);
    let c = entry;
    for (let k = pos + len - 1; k >= pos; k--) {
      if (k < end) buf[k] = suffix[c];
      c = prefix[c];
    }
    pos = end;
    if (code === next && pos < room) buf[pos++] = first[old];
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
  flush();
  return done;
}

/**
 * Decompresses one TIFF LZW strip into one array (see {@link lzwDecode}).
 *
 * @param input - the strip's compressed bytes.
 * @param expectedLength - the strip's uncompressed size in bytes; output stops there.
 * @returns exactly expectedLength bytes, or fewer when the stream ends early (EOI or end of data).
 * @throws LzwDataError on a code that is not yet in the table (damaged data).
 */
export function decompressLzw(input: Uint8Array, expectedLength: number): Uint8Array {
  if (!Number.isInteger(expectedLength) || expectedLength < 0) throw new RangeError(`expectedLength must be a non-negative integer, got ${expectedLength}`);
  const out = new Uint8Array(expectedLength);
  let at = 0;
  lzwDecode(input, expectedLength, (piece) => {
    out.set(piece, at);
    at += piece.length;
  });
  return out.subarray(0, at);
}
