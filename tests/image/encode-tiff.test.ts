import { describe, expect, test } from 'vitest';
import { decode as decodeTiff } from 'tiff';
import { decode } from 'image-js';
import { compressLzw, encodeTiff, encodeTiffPages, toRational } from '../../testing/encode-tiff';

const W = 67;
const H = 41;
function ramp<T extends Uint8Array | Uint16Array | Float32Array>(arr: T, f: (i: number) => number): T {
  for (let i = 0; i < arr.length; i++) arr[i] = f(i);
  return arr;
}
const samples = {
  u8: ramp(new Uint8Array(W * H), (i) => (i * 7 + (i >> 4)) % 256),
  u16: ramp(new Uint16Array(W * H), (i) => (i * 977 + 13) % 65536),
  f32: ramp(new Float32Array(W * H), (i) => Math.sin(i / 9) * 1234.5 - 0.25),
};

describe('encodeTiff', () => {
  // TIFF 6.0 section 2: bytes 0-1 "II" (little-endian), bytes 2-3 the number 42.
  test('writes the little-endian TIFF header', () => {
    const b = encodeTiff({ width: 2, height: 2, data: new Uint8Array(4) });
    expect([b[0], b[1], b[2] | (b[3] << 8)]).toEqual([0x49, 0x49, 42]);
  });

  for (const compression of ['none', 'deflate', 'lzw'] as const) {
    for (const [kind, data] of Object.entries(samples)) {
      test(`the tiff package reads back ${kind} samples, compression ${compression}`, () => {
        const bytes = encodeTiff({ width: W, height: H, data, compression, rowsPerStrip: 8 });
        const [ifd] = decodeTiff(bytes);
        expect([ifd.width, ifd.height]).toEqual([W, H]);
        // TIFF 6.0 tag 259 Compression: 1 none, 5 LZW; 8 Deflate (Adobe TIFF technical note).
        expect(ifd.compression).toBe({ none: 1, deflate: 8, lzw: 5 }[compression]);
        // TIFF 6.0 section 19, tag 339 SampleFormat: 1 unsigned integer, 3 IEEE float.
        expect(ifd.sampleFormat).toBe(kind === 'f32' ? 3 : 1);
        expect(ifd.bitsPerSample).toBe(data.BYTES_PER_ELEMENT * 8);
        expect(Array.from(ifd.data)).toEqual(Array.from(data));
      });
      if (kind !== 'f32') {
        test(`image-js reads back ${kind} samples, compression ${compression}`, () => {
          const img = decode(encodeTiff({ width: W, height: H, data, compression }));
          expect([img.width, img.height, img.bitDepth, img.channels]).toEqual([W, H, data.BYTES_PER_ELEMENT * 8, 1]);
          expect(Array.from(img.getRawImage().data)).toEqual(Array.from(data));
        });
      }
    }
  }

  // TIFF 6.0 section 8: XResolution 282, YResolution 283 (RATIONAL), ResolutionUnit 296
  // (1 none, 2 inch, 3 centimetre); ImageDescription 270 and Software 305 (ASCII).
  test('writes resolution, description and software tags', () => {
    const bytes = encodeTiff({
      width: W, height: H, data: samples.u16,
      resolution: { x: 4e7, y: 2e7, unit: 'cm' }, description: 'clay tactoids, film A', software: 'stratameter',
    });
    const [ifd] = decodeTiff(bytes);
    expect(ifd.xResolution).toBeCloseTo(4e7, 0);
    expect(ifd.yResolution).toBeCloseTo(2e7, 0);
    expect(ifd.resolutionUnit).toBe(3);
    expect(ifd.get(270)).toBe('clay tactoids, film A');
    expect(ifd.get(305)).toBe('stratameter');
    const tags = (decode(bytes).meta as { tiff: { tags: Record<string, unknown> } }).tiff.tags;
    expect(tags.ResolutionUnit).toBe(3);
  });

  test('writes RGB and RGBA that image-js reads as 3 and 4 channels', () => {
    const rgb = ramp(new Uint8Array(W * H * 3), (i) => i % 251);
    const img = decode(encodeTiff({ width: W, height: H, data: rgb, samplesPerPixel: 3 }));
    expect(img.channels).toBe(3);
    expect(Array.from(img.getRawImage().data)).toEqual(Array.from(rgb));
    const rgba = ramp(new Uint8Array(W * H * 4), (i) => (i % 4 === 3 ? 255 : i % 200));
    expect(decode(encodeTiff({ width: W, height: H, data: rgba, samplesPerPixel: 4 })).channels).toBe(4);
  });

  test('writes several pages as a chain of IFDs', () => {
    const bytes = encodeTiffPages([
      { width: 3, height: 2, data: new Uint8Array(6).fill(1) },
      { width: 5, height: 4, data: new Uint16Array(20).fill(500) },
    ]);
    const pages = decodeTiff(bytes);
    expect(pages.map((p) => [p.width, p.height, p.data[0]])).toEqual([[3, 2, 1], [5, 4, 500]]);
  });

  test('LZW handles incompressible data past the 4094-code table reset', () => {
    let s = 12345;
    const noise = ramp(new Uint8Array(300 * 300), () => ((s = (s * 1103515245 + 12345) >>> 0) >>> 24));
    const [ifd] = decodeTiff(encodeTiff({ width: 300, height: 300, data: noise, compression: 'lzw', rowsPerStrip: 300 }));
    expect(Array.from(ifd.data)).toEqual(Array.from(noise));
  });

  // TIFF 6.0 section 13: the stream starts with Clear (256) and ends with EOI (257), 9-bit codes.
  test('an empty LZW stream is Clear then EOI in 9-bit codes', () => {
    // 256 = 1 0000 0000, 257 = 1 0000 0001 -> bits 100000000 100000001 (+ zero padding) = 10000000 01000000 01000000
    expect(Array.from(compressLzw(new Uint8Array(0)))).toEqual([0x80, 0x40, 0x40]);
  });

  test('toRational keeps the value to 9 significant digits', () => {
    const [n, d] = toRational(2540000 / 3);
    expect(n / d).toBeCloseTo(2540000 / 3, 3);
    expect(() => toRational(0)).toThrow(/positive finite number, got 0/);
  });

  test('deflateLevel trades size for speed and still reads back', () => {
    const fast = encodeTiff({ width: W, height: H, data: samples.u16, compression: 'deflate', deflateLevel: 1 });
    expect(Array.from(decodeTiff(fast)[0].data)).toEqual(Array.from(samples.u16));
    expect(() => encodeTiff({ width: W, height: H, data: samples.u16, compression: 'deflate', deflateLevel: 0 })).toThrow(/deflateLevel .* got 0/);
  });

  test('rejects bad arguments, naming the value', () => {
    expect(() => encodeTiff({ width: 0, height: 2, data: new Uint8Array(0) })).toThrow(/width .* got 0/);
    expect(() => encodeTiff({ width: 2, height: 2, data: new Uint8Array(3) })).toThrow(/data length 3/);
    expect(() => encodeTiff({ width: 2, height: 2, data: new Int16Array(4) as unknown as Uint16Array })).toThrow(/Uint8Array/);
    expect(() => encodeTiff({ width: 1, height: 1, data: new Uint8Array(1), description: 'Å' })).toThrow(/ASCII/);
    expect(() => encodeTiff({ width: 1, height: 1, data: new Uint8Array(1), compression: 'zip' as 'lzw' })).toThrow(/'zip'/);
  });
});
