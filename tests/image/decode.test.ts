import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { encode as encodePng } from 'fast-png';
import { Image, decode as decodeRaster, encode as encodeRaster } from 'image-js';
import { encodeTiff, encodeTiffPages } from '../../testing/encode-tiff';
import { encodeMrc } from '../../testing/encode-mrc';
import { decodeImage, detectFormat, ImageReadError, LUMA_BT709 } from '../../src/image/decode';
import { PackBitsDataError, packBitsDecode } from '../../src/image/packbits';
import { addPngPhys, greyJpeg, lcg, renumberTiffTag, setMrcWord, setTiffTag, tiffToBigEndian } from './fixtures';
import { withIhdr } from '../../testing/png';

const W = 48;
const H = 32;
const rnd = lcg(7);
const u8 = Uint8Array.from({ length: W * H }, () => Math.floor(rnd() * 256));
const u16 = Uint16Array.from({ length: W * H }, () => Math.floor(rnd() * 65536));
const f32 = Float32Array.from({ length: W * H }, () => (rnd() - 0.5) * 1e4);

/** fast-png's encode with one channel unless told otherwise (its default is 4). */
const png = (o: Parameters<typeof encodePng>[0]) => encodePng({ channels: 1, ...o });

function expectReadError(fn: () => unknown, reason: RegExp, fileName = 'x') {
  let error: unknown;
  try {
    fn();
  } catch (e) {
    error = e;
  }
  expect(error).toBeInstanceOf(ImageReadError);
  expect((error as Error).message.startsWith(`${fileName}: `)).toBe(true);
  expect((error as Error).message).toMatch(reason);
}

describe('format detection from content', () => {
  // Signatures: TIFF 6.0 section 2 ("II" 42); PNG spec section 5.2; JPEG SOI FF D8 (ITU-T T.81
  // annex B); MRC2014 "MAP " at byte 208 (Cheng et al., J. Struct. Biol. 192, 146, 2015).
  test('recognises each signature', () => {
    expect(detectFormat(encodeTiff({ width: 2, height: 2, data: new Uint8Array(4) }))).toBe('tiff');
    expect(detectFormat(png({ width: 2, height: 2, data: new Uint8Array(4) }))).toBe('png');
    expect(detectFormat(Uint8Array.from([0xff, 0xd8, 0xff, 0xe0]))).toBe('jpeg');
    expect(detectFormat(encodeMrc({ width: 2, height: 2, mode: 2, data: new Float32Array(4) }))).toBe('mrc');
    expect(detectFormat(new TextEncoder().encode('hello world, not an image'))).toBeNull();
  });
  test('a PNG named .tif decodes as PNG with a warning', () => {
    const img = decodeImage(png({ width: W, height: H, data: u8 }), 'film.tif');
    expect(Array.from(img.data)).toEqual(Array.from(u8));
    expect(img.warnings.join()).toMatch(/content is PNG but the extension says TIFF/);
  });
  test('a TIFF with an unknown extension decodes with a warning', () => {
    const img = decodeImage(encodeTiff({ width: W, height: H, data: u8 }), 'scan.dat');
    expect(img.width).toBe(W);
    expect(img.warnings.join()).toMatch(/not an image extension; the content is TIFF/);
  });
  test('unknown content under an unknown extension is an error', () => {
    expectReadError(() => decodeImage(new TextEncoder().encode('x'.repeat(2000)), 'notes.txt'), /unknown or unsupported format/, 'notes.txt');
  });
  test('unknown content under a known extension is an error naming the format', () => {
    expectReadError(() => decodeImage(new Uint8Array(2000).fill(7), 'a.tif'), /not a TIFF file/, 'a.tif');
  });
  test('an empty file is an error', () => {
    expectReadError(() => decodeImage(new Uint8Array(0), 'empty.png'), /the file is empty/, 'empty.png');
  });
});

describe('TIFF', () => {
  for (const compression of ['none', 'lzw', 'deflate', 'packbits'] as const) {
    test(`8-bit, 16-bit and float32 samples are read exactly, compression ${compression}`, () => {
      for (const [data, bitDepth, kind] of [[u8, 8, 'uint'], [u16, 16, 'uint'], [f32, 32, 'float']] as const) {
        const img = decodeImage(encodeTiff({ width: W, height: H, data, compression, rowsPerStrip: 5 }), 'a.tif');
        expect([img.width, img.height, img.bitDepth, img.sampleKind]).toEqual([W, H, bitDepth, kind]);
        expect(Array.from(img.data)).toEqual(Array.from(data));
        expect(img.min).toBe(Math.min(...data));
        expect(img.max).toBe(Math.max(...data));
        expect(img.calibration).toBeNull();
        expect(img.warnings).toEqual([]);
      }
    });
  }

  // TIFF 6.0 section 2: "MM" files store every number big-endian.
  test('big-endian ("MM") files are read, through both decoding paths', () => {
    for (const [data, size] of [[u8, 1], [u16, 2], [f32, 4]] as const) {
      const be = tiffToBigEndian(encodeTiff({ width: W, height: H, data, rowsPerStrip: 7, resolution: { x: 4e7, unit: 'cm' } }), size);
      expect([be[0], be[1]]).toEqual([0x4d, 0x4d]);
      const img = decodeImage(be, 'be.tif');
      expect(Array.from(img.data)).toEqual(Array.from(data));
      expect(img.calibration?.nmPerPx).toBeCloseTo(0.25, 9);
    }
    // PhotometricInterpretation 0 routes the file to the tiff package (big-endian value at bytes 8–9).
    const be = tiffToBigEndian(encodeTiff({ width: W, height: H, data: u16 }), 2);
    const v = new DataView(be.buffer);
    const ifd = v.getUint32(4, false);
    for (let i = 0; i < v.getUint16(ifd, false); i++) {
      if (v.getUint16(ifd + 2 + i * 12, false) === 262) v.setUint16(ifd + 2 + i * 12 + 8, 0, false);
    }
    expect(Array.from(decodeImage(be, 'be.tif').data)).toEqual(Array.from(u16, (x) => 65535 - x));
  });

  // TIFF 6.0 section 19: SampleFormat 2 = two's complement signed integer.
  test('signed 16-bit samples are read as signed', () => {
    const raw = Uint16Array.from([0, 1, 0xffff, 0x8000]); // 0, 1, -1, -32768
    const bytes = setTiffTag(encodeTiff({ width: 2, height: 2, data: raw }), 339, 2);
    const img = decodeImage(bytes, 's.tif');
    expect(Array.from(img.data)).toEqual([0, 1, -1, -32768]);
    expect(img.sampleKind).toBe('int');
  });

  // TIFF 6.0 section 3: PhotometricInterpretation 0 = WhiteIsZero (0 is white).
  test('WhiteIsZero is inverted so that larger is brighter', () => {
    const bytes = setTiffTag(encodeTiff({ width: W, height: H, data: u8, compression: 'lzw' }), 262, 0);
    const img = decodeImage(bytes, 'w.tif');
    expect(Array.from(img.data)).toEqual(Array.from(u8, (v) => 255 - v));
    expect(img.warnings.join()).toMatch(/WhiteIsZero/);
  });

  // ITU-R BT.709 luma: Y = 0.2126 R + 0.7152 G + 0.0722 B (Rec. BT.709-6, item 3.2).
  test('RGB is converted to grey with the BT.709 weights and a warning', () => {
    expect(LUMA_BT709.r + LUMA_BT709.g + LUMA_BT709.b).toBeCloseTo(1, 12);
    const rgb = Uint8Array.from([255, 0, 0, 0, 255, 0, 0, 0, 255, 10, 20, 30]);
    const img = decodeImage(encodeTiff({ width: 2, height: 2, data: rgb, samplesPerPixel: 3 }), 'c.tif');
    expect(img.data[0]).toBeCloseTo(0.2126 * 255, 4);
    expect(img.data[1]).toBeCloseTo(0.7152 * 255, 4);
    expect(img.data[2]).toBeCloseTo(0.0722 * 255, 4);
    expect(img.data[3]).toBeCloseTo(0.2126 * 10 + 0.7152 * 20 + 0.0722 * 30, 4);
    expect(img.warnings.join()).toMatch(/ITU-R BT.709/);
  });

  test('RGBA with R = G = B keeps the values and reports transparent pixels', () => {
    const rgba = Uint16Array.from([100, 100, 100, 65535, 7, 7, 7, 0]);
    const img = decodeImage(encodeTiff({ width: 2, height: 1, data: rgba, samplesPerPixel: 4 }), 'c.tif');
    expect(Array.from(img.data)).toEqual([100, 7]);
    expect(img.warnings.join()).toMatch(/R = G = B/);
    expect(img.warnings.join()).toMatch(/alpha channel ignored \(1 pixels/);
  });

  test('a grey file with extra samples gives the first sample of each pixel', () => {
    // 3 samples per pixel under PhotometricInterpretation 1 (BlackIsZero): grey plus 2 extra.
    const bytes = setTiffTag(encodeTiff({ width: 2, height: 1, data: Uint8Array.from([10, 1, 2, 20, 3, 4]), samplesPerPixel: 3 }), 262, 1);
    const img = decodeImage(bytes, 'x.tif');
    expect(Array.from(img.data)).toEqual([10, 20]);
    expect(img.warnings.join()).toMatch(/3 samples per pixel: read the first/);
  });

  test('a multi-page file gives page 1 and a warning', () => {
    const bytes = encodeTiffPages([
      { width: W, height: H, data: u8 },
      { width: 4, height: 4, data: new Uint8Array(16) },
      { width: 4, height: 4, data: new Uint8Array(16) },
    ]);
    const img = decodeImage(bytes, 'stack.tif');
    expect(Array.from(img.data)).toEqual(Array.from(u8));
    expect(img.warnings).toContain('multi-page TIFF: read page 1 of 3');
  });

  test('a broken or looping page chain still gives page 1, with a warning', () => {
    const bytes = encodeTiffPages([{ width: 4, height: 4, data: new Uint8Array(16).fill(5) }, { width: 4, height: 4, data: new Uint8Array(16) }]);
    const v = new DataView(bytes.buffer);
    const ifd = v.getUint32(4, true);
    const next = ifd + 2 + v.getUint16(ifd, true) * 12; // TIFF 6.0 section 2: next-IFD offset after the entries
    for (const pointer of [bytes.length + 100, ifd]) {
      v.setUint32(next, pointer, true);
      const img = decodeImage(bytes, 'chain.tif');
      expect(img.data[0]).toBe(5);
      expect(img.warnings.join()).toMatch(/page chain is broken after page 1/);
    }
  });

  // 1 inch = 25.4 mm exactly (international yard and pound agreement, 1959).
  test('XResolution per cm and per inch become nm per pixel', () => {
    const perCm = decodeImage(encodeTiff({ width: W, height: H, data: u8, resolution: { x: 4e7, unit: 'cm' } }), 'a.tif');
    expect(perCm.calibration).toMatchObject({ nmPerPx: 0.25, source: 'metadata', relUncertainty: 0.05 });
    expect(perCm.calibration?.detail).toMatch(/XResolution/);
    expect(perCm.calibration?.nmPerPxY).toBeUndefined();
    const perInch = decodeImage(encodeTiff({ width: W, height: H, data: u8, resolution: { x: 25.4e6, unit: 'inch' } }), 'a.tif');
    expect(perInch.calibration?.nmPerPx).toBeCloseTo(1, 9);
  });

  test('different X and Y resolution give nmPerPxY', () => {
    const img = decodeImage(encodeTiff({ width: W, height: H, data: u8, resolution: { x: 1e7, y: 5e6, unit: 'cm' } }), 'a.tif');
    expect(img.calibration?.nmPerPx).toBeCloseTo(1, 9);
    expect(img.calibration?.nmPerPxY).toBeCloseTo(2, 9);
  });

  // TIFF 6.0 section 8: ResolutionUnit defaults to 2 (inch) when absent.
  test('a missing ResolutionUnit means inch', () => {
    // Written with unit cm, then tag 296 renumbered to a private tag (65000) so that it is absent:
    // 2.54e7 pixels per inch is 1 nm per pixel (per cm it would be 0.39 nm).
    const bytes = renumberTiffTag(encodeTiff({ width: 2, height: 2, data: new Uint8Array(4), resolution: { x: 2.54e7, unit: 'cm' } }), 296, 65000);
    expect(decodeImage(bytes, 'a.tif').calibration?.nmPerPx).toBeCloseTo(1, 9);
  });

  // With ResolutionUnit 1 ('none', TIFF 6.0 §8) the resolution has no unit of its own; scientific image
  // editors then state it as a line 'unit=…' of the ImageDescription (common practice of such files)
  test('ResolutionUnit none with the image description stating unit=nm, micron or \\u00B5m: the pixel size in that unit', () => {
    const withUnit = (unit: string, pxPerUnit: number) =>
      decodeImage(encodeTiff({ width: 4, height: 4, data: new Uint8Array(16), resolution: { x: pxPerUnit, unit: 'none' }, description: `ImageJ=1.54f\nunit=${unit}\nmin=0.0\n` }), 'a.tif');
    const nm = withUnit('nm', 4);
    expect(nm.calibration?.nmPerPx).toBeCloseTo(0.25, 12);
    expect(nm.calibration?.source).toBe('metadata');
    expect(nm.calibration?.detail).toMatch(/unit 'nm' of the image description/);
    expect(withUnit('micron', 20).calibration?.nmPerPx).toBeCloseTo(50, 9);
    expect(withUnit('\\u00B5m', 20).calibration?.nmPerPx).toBeCloseTo(50, 9);
    expect(withUnit('A', 2).calibration?.nmPerPx).toBeCloseTo(0.05, 12);
    // no length unit: not a calibration, as before
    const px = withUnit('pixel', 1);
    expect(px.calibration).toBeNull();
    expect(px.warnings.join()).toMatch(/no absolute unit/);
    // a unit in the description never overrides a ResolutionUnit of inch or cm
    const cm = decodeImage(encodeTiff({ width: 4, height: 4, data: new Uint8Array(16), resolution: { x: 1e7, unit: 'cm' }, description: 'unit=nm\n' }), 'a.tif');
    expect(cm.calibration?.nmPerPx).toBeCloseTo(1, 9);
  });

  describe('resolution values that are not a calibration', () => {
    const cases: [string, { x: number; unit: 'none' | 'inch' | 'cm' }, RegExp][] = [
      ['unit none', { x: 4e7, unit: 'none' }, /no absolute unit/],
      ['72 dpi', { x: 72, unit: 'inch' }, /72 dpi/],
      ['96 dpi', { x: 96, unit: 'inch' }, /96 dpi/],
      ['150 dpi', { x: 150, unit: 'inch' }, /150 dpi/],
      ['300 dpi', { x: 300, unit: 'inch' }, /300 dpi/],
      ['600 dpi', { x: 600, unit: 'inch' }, /600 dpi/],
      ['100 dpi', { x: 100, unit: 'inch' }, /100 dpi/],
      ['1200 dpi', { x: 1200, unit: 'inch' }, /1200 dpi/],
      // 72 dpi = 72 / 2.54 = 28.35 px/cm; 300 dpi = 118.11 px/cm (common practice: editors round them).
      ['28.35 px/cm', { x: 28.35, unit: 'cm' }, /72 dpi/],
      ['118.11 px/cm', { x: 118.11, unit: 'cm' }, /300 dpi/],
      ['pixels of 2 mm', { x: 5, unit: 'cm' }, /outside 1 pm to 10 µm/],
    ];
    for (const [name, resolution, why] of cases) {
      test(name, () => {
        const img = decodeImage(encodeTiff({ width: 4, height: 4, data: new Uint8Array(16), resolution }), 'a.tif');
        expect(img.calibration).toBeNull();
        expect(img.warnings.join()).toMatch(/^not a calibration: /);
        expect(img.warnings.join()).toMatch(why);
      });
    }
    test('pixels of 10 µm and below are a calibration, above are not', () => {
      // 1001 px/cm = 9.99 µm per pixel; 999 px/cm = 10.01 µm per pixel (1 cm = 1e7 nm).
      const at = (x: number) => decodeImage(encodeTiff({ width: 4, height: 4, data: new Uint8Array(16), resolution: { x, unit: 'cm' } }), 'a.tif');
      expect(at(1001).calibration?.nmPerPx).toBeCloseTo(1e7 / 1001, 6);
      expect(at(999).calibration).toBeNull();
      expect(at(999).warnings.join()).toMatch(/outside 1 pm to 10 µm/);
    });
  });

  test('NaN and infinite pixels are rejected by default, naming the count', () => {
    const data = f32.slice();
    data[3] = NaN;
    data[10] = Infinity;
    data[11] = -Infinity;
    const bytes = encodeTiff({ width: W, height: H, data });
    expectReadError(() => decodeImage(bytes, 'nan.tif', { nonFinite: 'reject' }), /3 of 1536 pixels are NaN or infinite/, 'nan.tif');
  });

  test("by default (nonFinite 'replace') they are set to the median of the finite pixels, with a warning", () => {
    const data = Float32Array.from([1, 2, NaN, 4, 100, Infinity]);
    const img = decodeImage(encodeTiff({ width: 3, height: 2, data }), 'nan.tif');
    expect(Array.from(img.data)).toEqual([1, 2, 3, 4, 100, 3]); // median of 1, 2, 4, 100 is 3
    expect(img.warnings.join()).toMatch(/2 NaN or infinite pixels were replaced by the median/);
  });

  // TIFF 6.0 §19: SampleFormat 1 and 2 are unsigned and signed integers of the BitsPerSample given
  test('32-bit unsigned and signed integer samples are read, held as float (exact to 2²⁴, a warning beyond)', () => {
    const u32 = Uint32Array.from(u16, (v, i) => v * 200 + i);
    const img = decodeImage(encodeTiff({ width: W, height: H, data: u32, compression: 'lzw' }), 'counts.tif');
    expect([img.bitDepth, img.sampleKind]).toEqual([32, 'uint']);
    expect(Array.from(img.data)).toEqual(Array.from(u32));
    expect(img.warnings).toEqual([]);
    const i32 = Int32Array.from(u16, (v, i) => (i % 2 ? -v : v) - 1000);
    const signed = decodeImage(encodeTiff({ width: W, height: H, data: i32, compression: 'packbits' }), 'signed.tif');
    expect([signed.bitDepth, signed.sampleKind]).toEqual([32, 'int']);
    expect(Array.from(signed.data)).toEqual(Array.from(i32));
    const big = decodeImage(encodeTiff({ width: 2, height: 2, data: Uint32Array.from([1, 2, 3, 16777217]) }), 'big.tif');
    expect(big.warnings.join()).toMatch(/beyond 16 777 216 \(2²⁴\) are held as 32-bit float/);
  });

  test('PackBits (TIFF 6.0 §9): the published example decodes, damaged runs are refused', () => {
    // Apple's published example of packed data, FE AA 02 80 00 2A FD AA 03 80 00 2A 22 F7 AA (Apple
    // Technical Note TN1023, as quoted in the encyclopedia article on PackBits); its 24 unpacked bytes
    // worked by hand from the header rules of TIFF 6.0 §9
    const packed = Uint8Array.from([0xfe, 0xaa, 0x02, 0x80, 0x00, 0x2a, 0xfd, 0xaa, 0x03, 0x80, 0x00, 0x2a, 0x22, 0xf7, 0xaa]);
    const unpacked = [0xaa, 0xaa, 0xaa, 0x80, 0x00, 0x2a, 0xaa, 0xaa, 0xaa, 0xaa, 0x80, 0x00, 0x2a, 0x22, ...new Array(10).fill(0xaa)];
    const pieces: number[] = [];
    expect(packBitsDecode(packed, 1000, (p) => pieces.push(...p))).toBe(unpacked.length);
    expect(pieces).toEqual(unpacked);
    expect(() => packBitsDecode(Uint8Array.from([5, 1, 2]), 100, () => {})).toThrow(PackBitsDataError);
    expect(() => packBitsDecode(Uint8Array.from([0xfd]), 100, () => {})).toThrow(/has no byte to repeat/);
    const g = encodeTiff({ width: W, height: H, data: u8, compression: 'packbits', rowsPerStrip: H });
    expect(() => decodeImage(g.subarray(0, g.length - 20), 'cut.tif')).toThrow(ImageReadError);
  });

  test('unsupported sample types and compressions are clear errors', () => {
    const f = encodeTiff({ width: 4, height: 4, data: new Float32Array(16) });
    expectReadError(() => decodeImage(setTiffTag(f, 258, 64), 'a.tif'), /64-bit float samples/, 'a.tif');
    const g = encodeTiff({ width: 4, height: 4, data: new Uint8Array(16) });
    expectReadError(() => decodeImage(setTiffTag(g, 258, 1), 'a.tif'), /1-bit integer samples/, 'a.tif');
    expectReadError(() => decodeImage(setTiffTag(g, 259, 7), 'a.tif'), /compression 7 \(JPEG\)/, 'a.tif');
    expectReadError(() => decodeImage(setTiffTag(g, 262, 3), 'a.tif'), /palette colour/, 'a.tif');
  });

  test('zero and huge declared sizes are refused from the header', () => {
    const g = encodeTiff({ width: 4, height: 4, data: new Uint8Array(16) });
    expectReadError(() => decodeImage(setTiffTag(g, 256, 0), 'a.tif'), /invalid image size 0 × 4/, 'a.tif');
    // 100000² pixels would need 40 GB as floats: refused before any allocation.
    const huge = setTiffTag(setTiffTag(g, 256, 100000), 257, 100000);
    expectReadError(() => decodeImage(huge, 'a.tif'), /10000000000 pixels is over the memory budget of 268435456/, 'a.tif');
    expectReadError(() => decodeImage(g, 'a.tif', { maxPixels: 15 }), /over the memory budget of 15 pixels/, 'a.tif');
  });

  test('a truncated file is refused, whatever the compression', () => {
    for (const compression of ['none', 'lzw', 'deflate', 'packbits'] as const) {
      const bytes = encodeTiff({ width: W, height: H, data: u16, compression, rowsPerStrip: H });
      for (const keep of [5, 100, bytes.length - 200, bytes.length - 1]) {
        expect(() => decodeImage(bytes.subarray(0, keep), 'cut.tif')).toThrow(ImageReadError);
      }
    }
  });
});

describe('PNG', () => {
  test('8- and 16-bit grey are read exactly', () => {
    const a = decodeImage(png({ width: W, height: H, data: u8 }), 'a.png');
    expect([a.bitDepth, a.sampleKind]).toEqual([8, 'uint']);
    expect(Array.from(a.data)).toEqual(Array.from(u8));
    const b = decodeImage(png({ width: W, height: H, data: u16, depth: 16 }), 'b.png');
    expect(b.bitDepth).toBe(16);
    expect(Array.from(b.data)).toEqual(Array.from(u16));
  });

  // PNG specification section 8.2: Adam7 interlacing (IHDR interlace method 1).
  test('an Adam7-interlaced 16-bit PNG is read exactly', () => {
    const data = Uint16Array.from({ length: 37 * 23 }, (_, i) => i * 31);
    const bytes = encodePng({ width: 37, height: 23, data, depth: 16, channels: 1 }, { interlace: 'Adam7' });
    expect(bytes[28]).toBe(1);
    expect(Array.from(decodeImage(bytes, 'i.png').data)).toEqual(Array.from(data));
  });

  test('grey + alpha, RGB, RGBA and palette give grey', () => {
    const ga = decodeImage(png({ width: 2, height: 1, channels: 2, data: Uint8Array.from([9, 255, 200, 255]) }), 'a.png');
    expect(Array.from(ga.data)).toEqual([9, 200]);
    const rgb = decodeImage(png({ width: 2, height: 1, channels: 3, data: Uint8Array.from([255, 0, 0, 50, 50, 50]) }), 'a.png');
    expect(rgb.data[0]).toBeCloseTo(0.2126 * 255, 4); // BT.709 weight of R
    expect(rgb.data[1]).toBeCloseTo(50, 4);
    const rgba = decodeImage(png({ width: 1, height: 1, channels: 4, depth: 16, data: Uint16Array.from([0, 1000, 0, 65535]) }), 'a.png');
    expect(rgba.data[0]).toBeCloseTo(0.7152 * 1000, 3); // BT.709 weight of G
    expect(rgba.bitDepth).toBe(16);
    const pal = decodeImage(
      png({ width: 3, height: 1, channels: 1, depth: 8, data: Uint8Array.from([0, 1, 1]), palette: [[10, 10, 10], [240, 240, 240]] }),
      'p.png',
    );
    expect(Array.from(pal.data)).toEqual([10, 240, 240]);
    expect(pal.warnings.join()).toMatch(/palette/);
  });

  // PNG specification section 11.3.5.3: pHYs = pixels per unit X, Y (uint32), unit 1 = metre.
  test('pHYs in pixels per metre becomes nm per pixel', () => {
    const withPhys = addPngPhys(png({ width: W, height: H, data: u8 }), 2e9, 2e9, 1); // 0.5 nm per pixel
    const img = decodeImage(withPhys, 'a.png');
    expect(img.calibration).toMatchObject({ nmPerPx: 0.5, source: 'metadata', relUncertainty: 0.05 });
    expect(img.calibration?.detail).toMatch(/pHYs/);
  });

  test('pHYs at 72 dpi (2835 px/m) or with unit 0 is not a calibration', () => {
    const dpi = decodeImage(addPngPhys(png({ width: 2, height: 2, data: new Uint8Array(4) }), 2835, 2835, 1), 'a.png');
    expect(dpi.calibration).toBeNull();
    expect(dpi.warnings.join()).toMatch(/not a calibration: .*72 dpi/);
    const unknown = decodeImage(addPngPhys(png({ width: 2, height: 2, data: new Uint8Array(4) }), 5e9, 5e9, 0), 'a.png');
    expect(unknown.calibration).toBeNull();
    expect(unknown.warnings.join()).toMatch(/not a calibration: .*no absolute unit/);
  });

  test('unsupported bit depths, oversize and truncation are errors', () => {
    expectReadError(() => decodeImage(png({ width: 8, height: 1, depth: 1, data: Uint8Array.from([0b10101010]) }), 'a.png'), /1-bit samples/, 'a.png');
    const file = png({ width: W, height: H, data: u8 });
    expectReadError(() => decodeImage(file, 'a.png', { maxPixels: 1000 }), /48 × 32 = 1536 pixels is over the memory budget of 1000/, 'a.png');
    for (const keep of [10, 40, file.length - 30, file.length - 4]) {
      expectReadError(() => decodeImage(file.subarray(0, keep), 'a.png'), /truncated/, 'a.png');
    }
    // IHDR width 0 with its CRC recomputed (PNG spec §11.2.2: width must be at least 1)
    expectReadError(() => decodeImage(withIhdr(file, { width: 0 }), 'a.png'), /invalid image size 0 × 32/, 'a.png');
  });

  // Open reference data, tests/fixtures/reference-data/SOURCES.md §1: 256² RGBA, R = G = B.
  test('the real HAADF-STEM thumbnail decodes to 256 × 256 grey', () => {
    const bytes = new Uint8Array(readFileSync(new URL('../fixtures/reference-data/stem-haadf_AlMgSi-alloy_Al-001-matrix_thumbnail256.png', import.meta.url)));
    const img = decodeImage(bytes, 'stem.png');
    expect([img.width, img.height, img.bitDepth]).toEqual([256, 256, 8]);
    expect(img.warnings.join()).toMatch(/R = G = B/);
    expect(img.max).toBeGreaterThan(img.min);
    // Its pHYs says 3937 px/m = 100.0 dpi, a plotting default, not the specimen pixel size.
    expect(img.calibration).toBeNull();
    expect(img.warnings.join()).toMatch(/not a calibration: PNG pHYs chunk is 3937 pixels per metre \(100 dpi\)/);
    // R = G = B: the grey values are the red channel itself (image-js reads the same file as RGBA).
    const rgba = decodeRaster(bytes);
    const raw = rgba.getRawImage().data;
    for (let i = 0; i < 256 * 256; i += 97) {
      expect(raw[i * 4]).toBe(raw[i * 4 + 1]);
      expect(raw[i * 4]).toBe(raw[i * 4 + 2]);
      expect(img.data[i]).toBe(raw[i * 4]);
    }
  });
});

describe('JPEG', () => {
  function jpegOf(values: (x: number, y: number) => number, w: number, h: number): Uint8Array {
    const img = new Image(w, h, { colorModel: 'GREY' });
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) img.setValue(x, y, 0, values(x, y));
    return encodeRaster(img, { format: 'jpeg', encoderOptions: { quality: 95 } });
  }
  test('an 8-bit JPEG of grey content is read close to its values', () => {
    const bytes = jpegOf((x) => 40 + 4 * x, 40, 24);
    const img = decodeImage(bytes, 'a.jpg');
    expect([img.width, img.height, img.bitDepth]).toEqual([40, 24, 8]);
    // Lossy: allow a few grey levels (quality 95; common practice).
    expect(Math.abs(img.data[10] - 80)).toBeLessThan(6);
    expect(img.warnings.join()).toMatch(/lossy/);
  });
  // A grey JPEG of flat blocks, built from T.81: value = 128 + DC / 8 with unit quantisers.
  test('a greyscale (one-component) JPEG is read', () => {
    const dc = [256, 0, 256, 0, 256, 256]; // 3 × 2 blocks: 160 128 160 / 128 160 160
    const img = decodeImage(greyJpeg(3, 2, dc), 'g.jpg');
    expect([img.width, img.height, img.bitDepth]).toEqual([24, 16, 8]);
    const expected = dc.map((v) => 128 + v / 8);
    for (let by = 0; by < 2; by++) {
      for (let bx = 0; bx < 3; bx++) {
        for (const [x, y] of [[0, 0], [7, 7], [3, 4]]) {
          expect(Math.abs(img.data[(by * 8 + y) * 24 + bx * 8 + x] - expected[by * 3 + bx])).toBeLessThanOrEqual(1);
        }
      }
    }
    expect(img.warnings.join()).not.toMatch(/colour/);
  });
  test('truncated and oversized JPEGs are errors', () => {
    const bytes = jpegOf(() => 128, 64, 64);
    expectReadError(() => decodeImage(bytes.subarray(0, bytes.length - 100), 'a.jpg'), /truncated/, 'a.jpg');
    expectReadError(() => decodeImage(bytes.subarray(0, 30), 'a.jpg'), /truncated/, 'a.jpg');
    expectReadError(() => decodeImage(bytes, 'a.jpg', { maxPixels: 4095 }), /64 × 64 = 4096 pixels is over/, 'a.jpg');
  });
});

describe('MRC2014', () => {
  // Header words: Cheng et al., J. Struct. Biol. 192, 146 (2015), Table 1.
  const f = Float32Array.from({ length: 6 * 4 }, (_, i) => i - 3.5);
  test('modes 0, 1, 2 and 6 are read with their sample types', () => {
    const i8 = Int8Array.from({ length: 24 }, (_, i) => i * 10 - 120);
    const i16 = Int16Array.from({ length: 24 }, (_, i) => i * 1000 - 12000);
    const u16m = Uint16Array.from({ length: 24 }, (_, i) => i * 2000);
    for (const [mode, data, bits, kind] of [[0, i8, 8, 'int'], [1, i16, 16, 'int'], [2, f, 32, 'float'], [6, u16m, 16, 'uint']] as const) {
      const img = decodeImage(encodeMrc({ width: 6, height: 4, mode, data } as Parameters<typeof encodeMrc>[0]), 'a.mrc');
      expect([img.width, img.height, img.bitDepth, img.sampleKind]).toEqual([6, 4, bits, kind]);
      expect(Array.from(img.data)).toEqual(Array.from(data));
    }
  });

  test('mode 12 (IEEE half float) is read', () => {
    // binary16: 0x3C00 = 1, 0xC000 = -2, 0x3555 ≈ 0.33325, 0x0001 = 2^-24 (IEEE 754-2008).
    const bytes = encodeMrc({ width: 4, height: 1, mode: 1, data: Int16Array.from([0x3c00, 0xc000 - 0x10000, 0x3555, 1]) });
    const img = decodeImage(setMrcWord(bytes, 4, 12), 'h.mrc');
    expect(img.data[0]).toBe(1);
    expect(img.data[1]).toBe(-2);
    expect(img.data[2]).toBeCloseTo(0.33325, 5);
    expect(img.data[3]).toBe(2 ** -24);
    expect([img.bitDepth, img.sampleKind]).toEqual([16, 'float']);
  });

  test('pixel spacing = xlen / MX in Å, given in nm', () => {
    const img = decodeImage(encodeMrc({ width: 6, height: 4, mode: 2, data: f, pixelSpacingAngstrom: 2.5 }), 'a.mrc');
    expect(img.calibration).toMatchObject({ source: 'metadata', relUncertainty: 0.05 });
    expect(img.calibration?.nmPerPx).toBeCloseTo(0.25, 6);
    expect(img.calibration?.detail).toMatch(/MRC cell/);
    const aniso = decodeImage(encodeMrc({ width: 6, height: 4, mode: 2, data: f, pixelSpacingAngstrom: 2, pixelSpacingYAngstrom: 3 }), 'a.mrc');
    expect(aniso.calibration?.nmPerPxY).toBeCloseTo(0.3, 6);
    expect(decodeImage(encodeMrc({ width: 6, height: 4, mode: 2, data: f }), 'a.mrc').calibration).toBeNull();
  });

  test('big-endian files (machine stamp 0x11 0x11) and the extended header are handled', () => {
    const img = decodeImage(encodeMrc({ width: 6, height: 4, mode: 2, data: f, bigEndian: true, extendedHeaderBytes: 128, pixelSpacingAngstrom: 1.5 }), 'be.mrc');
    expect(Array.from(img.data)).toEqual(Array.from(f));
    expect(img.calibration?.nmPerPx).toBeCloseTo(0.15, 6);
  });

  test('a stack gives its first section with a warning', () => {
    const stack = Float32Array.from({ length: 6 * 4 * 3 }, (_, i) => Math.floor(i / 24));
    const img = decodeImage(encodeMrc({ width: 6, height: 4, depth: 3, mode: 2, data: stack }), 's.mrcs');
    expect(Array.from(img.data)).toEqual(new Array(24).fill(0));
    expect(img.warnings.join()).toMatch(/3 sections: read section 1/);
  });

  test('an older file without "MAP " is read under an MRC extension, with a warning', () => {
    const bytes = encodeMrc({ width: 6, height: 4, mode: 2, data: f });
    bytes.fill(0, 208, 216);
    const img = decodeImage(bytes, 'old.mrc');
    expect(Array.from(img.data)).toEqual(Array.from(f));
    expect(img.warnings.join()).toMatch(/no MRC2014 "MAP " signature/);
  });

  test('complex, unknown and 4-bit modes, bad sizes and truncation are errors', () => {
    const bytes = encodeMrc({ width: 6, height: 4, mode: 2, data: f });
    expectReadError(() => decodeImage(setMrcWord(bytes, 4, 4), 'a.mrc'), /mode 4 \(complex\)/, 'a.mrc');
    expectReadError(() => decodeImage(setMrcWord(bytes, 4, 3), 'a.mrc'), /mode 3 \(complex\)/, 'a.mrc');
    expectReadError(() => decodeImage(setMrcWord(bytes, 4, 101), 'a.mrc'), /mode 101 \(4-bit\)/, 'a.mrc');
    expectReadError(() => decodeImage(setMrcWord(bytes, 4, 7), 'a.mrc'), /mode 7 \(unknown\)/, 'a.mrc');
    expectReadError(() => decodeImage(setMrcWord(bytes, 1, -6), 'a.mrc'), /invalid image size -6 × 4/, 'a.mrc');
    expectReadError(() => decodeImage(setMrcWord(setMrcWord(bytes, 1, 1 << 20), 2, 1 << 20), 'a.mrc'), /over the memory budget/, 'a.mrc');
    expectReadError(() => decodeImage(bytes.subarray(0, bytes.length - 1), 'a.mrc'), /truncated: the MRC header declares 6 × 4 × 1/, 'a.mrc');
    expectReadError(() => decodeImage(bytes.subarray(0, 500), 'a.mrc'), /truncated/, 'a.mrc');
    expectReadError(() => decodeImage(setMrcWord(bytes, 3, 2), 'a.mrc'), /truncated/, 'a.mrc');
  });

  test('NaN in a float map is replaced by default, and rejected on request', () => {
    const d = f.slice();
    d[0] = NaN;
    const bytes = encodeMrc({ width: 6, height: 4, mode: 2, data: d });
    expect(decodeImage(bytes, 'n.mrc').warnings.join()).toMatch(/1 NaN or infinite pixels were replaced/);
    expectReadError(() => decodeImage(bytes, 'n.mrc', { nonFinite: 'reject' }), /1 of 24 pixels are NaN/, 'n.mrc');
  });
});

describe('small files that declare large images', () => {
  // Deflate expands at most about 1032:1 (RFC 1951: a 258-byte match from a code of 2 bits or
  // more); a JPEG needs at least one bit per 8 × 8 block (ITU-T T.81: each block codes its DC).
  test('a PNG whose IHDR was enlarged is refused before decoding', () => {
    const file = png({ width: 16, height: 16, data: new Uint8Array(256) });
    const big = withIhdr(file, { width: 10000, height: 10000 }); // CRC recomputed, so only the size is wrong
    expectReadError(() => decodeImage(big, 'a.png'), /cannot hold 10000 × 10000 pixels/, 'a.png');
  });
  test('a Deflate TIFF whose size tags were enlarged is refused before decoding', () => {
    const file = encodeTiff({ width: 16, height: 16, data: new Uint8Array(256), compression: 'deflate' });
    const big = setTiffTag(setTiffTag(setTiffTag(file, 256, 10000), 257, 10000), 278, 10000);
    expectReadError(() => decodeImage(big, 'a.tif'), /Deflate data cannot hold 100000000 bytes/, 'a.tif');
  });
  test('a JPEG whose frame header was enlarged is refused before decoding', () => {
    const img = new Image(16, 16, { colorModel: 'GREY' });
    const file = encodeRaster(img, { format: 'jpeg' });
    let sof = 2;
    while (!(file[sof] === 0xff && file[sof + 1] === 0xc0)) sof += 2 + ((file[sof + 2] << 8) | file[sof + 3]);
    const big = file.slice();
    big.set([0x27, 0x10, 0x27, 0x10], sof + 5); // height, width = 10000
    expectReadError(() => decodeImage(big, 'a.jpg'), /cannot hold 10000 × 10000 pixels/, 'a.jpg');
  });
});

describe('argument checks', () => {
  test('bad options name the value', () => {
    const file = png({ width: 2, height: 2, data: new Uint8Array(4) });
    expect(() => decodeImage(file, 'a.png', { maxPixels: 0 })).toThrow(/maxPixels .* got 0/);
    expect(() => decodeImage(file, 'a.png', { nonFinite: 'zero' as 'reject' })).toThrow(/got 'zero'/);
  });
});
