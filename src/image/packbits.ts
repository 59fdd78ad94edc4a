/**
 * PackBits run-length decoding, the baseline TIFF compression 32773.
 */

/** Damaged PackBits data: a literal run or a repeat that the data ends inside. */
export class PackBitsDataError extends Error {
  override name = 'PackBitsDataError';
}

/**
 * Decodes PackBits data: a header byte n of 0 to 127 is followed by n + 1 literal bytes, one of
 * −127 to −1 by one byte repeated 1 − n times, and −128 is skipped.
 *
 * @param data - the compressed bytes.
 * @param maxBytes - bytes to produce at most; decoding stops there (a strip's or tile's size).
 * @param sink - receives the decoded bytes in pieces, in order (each piece valid during the call).
 * @returns the number of bytes produced (at most maxBytes).
 * @throws PackBitsDataError when the data end inside a literal run or before a repeated byte.
 * Notes: every header byte consumes at least one input byte, so decoding ends after at most
 * data.length steps; the output is written in pieces of at most 64 KiB.
 * Reference: TIFF Revision 6.0 (Adobe, 1992) §9, PackBits Compression.
 */
export function packBitsDecode(data: Uint8Array, maxBytes: number, sink: (piece: Uint8Array) => void): number {
  if (!(data instanceof Uint8Array)) throw new TypeError('packBitsDecode: data must be a Uint8Array');
  if (!Number.isInteger(maxBytes) || maxBytes < 0) throw new RangeError(`packBitsDecode: maxBytes must be a non-negative integer, got ${maxBytes}`);
  const chunk = new Uint8Array(Math.min(65536, Math.max(1, maxBytes)));
  let fill = 0;
  let produced = 0;
  const flush = () => {
    if (fill > 0) sink(chunk.subarray(0, fill));
    fill = 0;
  };
  let i = 0;
  while (i < data.length && produced < maxBytes) {
    const n = (data[i++] << 24) >> 24;
    if (n === -128) continue;
    if (n >= 0) {
      const len = n + 1;
      if (i + len > data.length) throw new PackBitsDataError(`a literal run of ${len} bytes at byte ${i - 1} runs past the end of the data (${data.length} bytes)`);
      for (let k = 0; k < len && produced < maxBytes; k++) {
        chunk[fill++] = data[i + k];
        produced++;
        if (fill === chunk.length) flush();
      }
      i += len;
    } else {
      if (i >= data.length) throw new PackBitsDataError(`a repeat at byte ${i - 1} has no byte to repeat (the data end there)`);
      const v = data[i++];
      for (let k = 0; k < 1 - n && produced < maxBytes; k++) {
        chunk[fill++] = v;
        produced++;
        if (fill === chunk.length) flush();
      }
    }
  }
  flush();
  return produced;
}
