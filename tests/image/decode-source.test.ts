// Decoding by position (a file handle, a Blob read slice by slice) against decoding the file held
// whole: the same pixels, calibration and warnings, or the same refusal, for valid TIFFs of every
// kind the reader takes and for every class of damaged TIFF in testing/corrupt.ts; and the file is
// never held whole (TIFF 6.0 §2: directories and strips are found by their offsets).
import { describe, expect, test } from 'vitest';
import { decodeImage, decodeImageSource, type ByteSource } from '../../src/image/decode';
import { classesOf } from '../../testing/corrupt';
import { encodeTiff } from '../../testing/encode-tiff';
import { rng } from '../../testing/random';
import { expectSameImage, outcome } from './same-image';

/** A source that copies each read (as a file handle does) and records the reads. */
function fileLike(bytes: Uint8Array): ByteSource & { reads: number[] } {
  const reads: number[] = [];
  return {
    length: bytes.length,
    reads,
    read(offset, length) {
      if (!(offset >= 0 && length >= 0 && offset + length <= bytes.length)) throw new RangeError(`read ${offset} + ${length} outside ${bytes.length}`);
      reads.push(length);
      return bytes.slice(offset, offset + length);
    },
  };
}

describe('a TIFF decoded by position equals the TIFF decoded whole', () => {
  const r = rng(20);
  const cases: { name: string; bytes: Uint8Array; stripBytes: number }[] = [];
  for (const compression of ['none', 'lzw', 'deflate'] as const) {
    for (const rowsPerStrip of [1, 7, 64]) {
      const w = 300;
      const h = 200;
      const data = Uint16Array.from({ length: w * h }, (_, i) => Math.round(20000 + 8000 * Math.sin(i / 13) + 3000 * r()));
      cases.push({ name: `16-bit, ${compression}, ${rowsPerStrip} rows per strip`, bytes: encodeTiff({ width: w, height: h, data, compression, rowsPerStrip, resolution: { x: 1e7 / 0.05, unit: 'cm' } }), stripBytes: rowsPerStrip * w * 2 });
    }
  }
  const f32 = Float32Array.from({ length: 128 * 96 }, () => r() * 2 - 1);
  cases.push({ name: '32-bit float, deflate', bytes: encodeTiff({ width: 128, height: 96, data: f32, compression: 'deflate', rowsPerStrip: 16 }), stripBytes: 16 * 128 * 4 });
  const rgb = Uint8Array.from({ length: 64 * 48 * 3 }, () => Math.floor(256 * r()));
  cases.push({ name: '8-bit RGB, none', bytes: encodeTiff({ width: 64, height: 48, data: rgb, samplesPerPixel: 3, rowsPerStrip: 8 }), stripBytes: 8 * 64 * 3 });

  test.each(cases)('$name', ({ name, bytes, stripBytes }) => {
    const source = fileLike(bytes);
    expectSameImage(outcome(() => decodeImage(bytes, 'a.tif')), outcome(() => decodeImageSource(source, 'a.tif')), name);
    // never the whole file at once: directory pages (64 KiB) or one strip at a time
    expect(Math.max(...source.reads)).toBeLessThanOrEqual(Math.max(65536, stripBytes));
    if (bytes.length > 65536) expect(Math.max(...source.reads)).toBeLessThan(bytes.length);
  });

  test('every class of damaged TIFF: the same refusal, warning or image', () => {
    const classes = classesOf('tiff');
    expect(classes.length).toBeGreaterThan(5);
    const rr = rng(2020);
    for (const c of classes) {
      for (let k = 0; k < 3; k++) {
        const input = c.make(rr);
        expectSameImage(outcome(() => decodeImage(input.bytes, input.name)), outcome(() => decodeImageSource(fileLike(input.bytes), input.name)), `${c.id} #${k}`);
      }
    }
  });

  test('other formats are read whole and decoded alike; a bad source is refused by name', () => {
    const png = new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 0]);
    expectSameImage(outcome(() => decodeImage(png, 'b.png')), outcome(() => decodeImageSource(fileLike(png), 'b.png')), 'truncated PNG');
    expectSameImage(outcome(() => decodeImage(new Uint8Array(0), 'c.tif')), outcome(() => decodeImageSource(fileLike(new Uint8Array(0)), 'c.tif')), 'empty file');
    expect(() => decodeImageSource({ length: -1, read: () => new Uint8Array(0) }, 'd.tif')).toThrow(/source must have a non-negative integer length/);
  });
});
