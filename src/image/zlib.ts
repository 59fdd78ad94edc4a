/**
 * Checked decompression for the image readers: CRC-32 (PNG chunks), Adler-32 and zlib streams
 * inflated piece by piece under an output cap, so that a small file cannot make the reader hold
 * or produce more bytes than its declared image needs.
 */
import { Inflate } from 'fflate';

/** CRC-32 table for the polynomial 0xEDB88320 (PNG specification, 3rd ed., annex D). */
const CRC_TABLE = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

/**
 * CRC-32 of bytes, as PNG chunks carry it.
 *
 * @param bytes - the bytes (for a PNG chunk: its type and data, PNG spec §5.3).
 * @param start - first index (default 0).
 * @param end - one past the last index (default bytes.length).
 * @returns the CRC as an unsigned 32-bit number.
 * Reference: PNG specification (W3C, 3rd ed.), §5.3 and annex D (ISO 3309 / ITU-T V.42 CRC).
 */
export function crc32(bytes: Uint8Array, start = 0, end = bytes.length): number {
  if (!(start >= 0 && end <= bytes.length && start <= end)) throw new RangeError(`crc32 range ${start}–${end} is outside 0–${bytes.length}`);
  let c = 0xffffffff;
  for (let i = start; i < end; i++) c = CRC_TABLE[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/**
 * Running Adler-32 checksum.
 * Reference: RFC 1950 (ZLIB 3.3), §2.2 and §9 (sums modulo 65521).
 */
export class Adler32 {
  private a = 1;
  private b = 0;
  /** Adds bytes to the checksum. */
  update(bytes: Uint8Array): void {
    let a = this.a;
    let b = this.b;
    let i = 0;
    const n = bytes.length;
    while (i < n) {
      // 5552 bytes is the most that cannot overflow 2^53 before the modulo (RFC 1950 sample code uses NMAX = 5552 for 32 bits)
      const end = Math.min(n, i + 5552);
      for (; i < end; i++) {
        a += bytes[i];
        b += a;
      }
      a %= 65521;
      b %= 65521;
    }
    this.a = a;
    this.b = b;
  }
  /** The checksum of every byte added so far. */
  value(): number {
    return ((this.b << 16) | this.a) >>> 0;
  }
}

/** Why a zlib stream could not be read; `reason` is in the user's terms. */
export class ZlibDataError extends Error {
  override name = 'ZlibDataError';
}

/** Plain words for the inflater's error codes (fflate's codes 0–3; RFC 1951 §3.2). */
const INFLATE_REASONS: Record<number, string> = {
  0: 'the compressed data ends before its last block',
  1: 'a compressed block has an invalid type (RFC 1951 §3.2.3)',
  2: 'a compressed block holds an invalid length or literal code (RFC 1951 §3.2.5)',
  3: 'a compressed block refers back to data before its start (invalid distance, RFC 1951 §3.2.5)',
};

/** Options of {@link inflateZlib}. */
export interface InflateOptions {
  /** Most bytes the stream may produce; more is an error (the declared image needs no more). */
  maxBytes: number;
  /** Receives the decompressed bytes in order, in pieces (the piece is reused after the call). */
  sink(piece: Uint8Array): void;
  /** Verify the Adler-32 at the end (default true). */
  checkAdler?: boolean;
}

/** Bytes of compressed input given to the inflater at a time: at most ~1032× that (33 MiB) comes out per step (RFC 1951). */
const INPUT_PIECE = 32768;

/**
 * Inflates one zlib stream (RFC 1950 header, Deflate data, Adler-32) held in one or more pieces,
 * handing the output to a sink as it comes, never producing more than a cap.
 *
 * @param pieces - the stream's bytes in order (e.g. the data of consecutive PNG IDAT chunks).
 * @param options - output cap, sink, Adler-32 check.
 * @returns the number of bytes produced.
 * @throws ZlibDataError with a reason in plain words: a bad header (method other than 8, window
 *   over 32 KiB, a preset dictionary, a failing header check), damaged Deflate data, more output
 *   than `maxBytes`, an Adler-32 that does not match, or a stream cut short.
 * Notes: the input is fed 32 KiB at a time, so at most about 33 MiB of output exists between two
 * checks of the cap. Reference: RFC 1950 §2.2 (zlib), RFC 1951 (Deflate); fflate's streaming
 * inflater does the Deflate decoding.
 */
export function inflateZlib(pieces: Uint8Array[], options: InflateOptions): number {
  const { maxBytes, sink } = options;
  if (!(Number.isInteger(maxBytes) && maxBytes >= 0)) throw new RangeError(`maxBytes must be a non-negative integer, got ${maxBytes}`);
  const total = pieces.reduce((s, p) => s + p.length, 0);
  if (total < 6) throw new ZlibDataError(`the compressed data is ${total} bytes long, too short for a zlib stream (at least 6 bytes)`);
  const at = (k: number): number => {
    // byte k of the concatenated pieces
    for (const p of pieces) {
      if (k < p.length) return p[k];
      k -= p.length;
    }
    return 0;
  };
  const cmf = at(0);
  const flg = at(1);
  if ((cmf & 0x0f) !== 8) throw new ZlibDataError(`the zlib header names compression method ${cmf & 0x0f}; only 8 (Deflate) is defined (RFC 1950 §2.2)`);
  if (cmf >> 4 > 7) throw new ZlibDataError(`the zlib header declares a window of 2^${(cmf >> 4) + 8} bytes, over the 32 KiB Deflate allows (RFC 1950 §2.2)`);
  if ((cmf * 256 + flg) % 31 !== 0) throw new ZlibDataError('the zlib header check bits are wrong (RFC 1950 §2.2: CMF·256 + FLG must be a multiple of 31): the data is damaged');
  if (flg & 0x20) throw new ZlibDataError('the zlib stream asks for a preset dictionary, which image files may not use (PNG spec §10.1)');
  const adlerStored = ((at(total - 4) << 24) | (at(total - 3) << 16) | (at(total - 2) << 8) | at(total - 1)) >>> 0;
  const adler = new Adler32();
  let produced = 0;
  let ended = false;
  const inflater = new Inflate((chunk: Uint8Array, final: boolean) => {
    if (chunk.length) {
      produced += chunk.length;
      if (produced > maxBytes) throw new ZlibDataError(`the compressed data holds more than the ${maxBytes} bytes the declared image needs`);
      adler.update(chunk);
      sink(chunk);
    }
    if (final) ended = true;
  });
  // Feed bytes 2 .. total-4 (the Deflate data), in small pieces.
  const deflateEnd = total - 4;
  let offset = 0; // position of the current piece's start in the concatenation
  try {
    for (const p of pieces) {
      const from = Math.max(2, offset);
      const to = Math.min(deflateEnd, offset + p.length);
      for (let k = from; k < to; k += INPUT_PIECE) {
        const stop = Math.min(to, k + INPUT_PIECE);
        inflater.push(p.subarray(k - offset, stop - offset), false);
      }
      offset += p.length;
    }
    inflater.push(new Uint8Array(0), true);
  } catch (e) {
    const code = (e as { code?: unknown }).code;
    // Errors of the sink (and our own cap) pass through; only the inflater's are put in words here.
    if (e instanceof ZlibDataError || typeof code !== 'number') throw e;
    const reason = INFLATE_REASONS[code] ?? 'the compressed data is damaged';
    throw new ZlibDataError(`${reason}${produced > 0 ? ` (after ${produced} bytes were decompressed)` : ''}`, { cause: e });
  }
  if (!ended) throw new ZlibDataError(`the compressed data ends before its last block (after ${produced} bytes were decompressed)`);
  if ((options.checkAdler ?? true) && adler.value() !== adlerStored) {
    throw new ZlibDataError(`the Adler-32 checksum of the decompressed data (0x${hex8(adler.value())}) differs from the one stored (0x${hex8(adlerStored)}): the data is damaged (RFC 1950 §2.2)`);
  }
  return produced;
}

function hex8(v: number): string {
  return v.toString(16).padStart(8, '0');
}
