/**
 * Grey pixels are kept in the file's own integer type where every value fits (8- and 16-bit grey
 * files), so a 16-bit image takes half the memory of float32 pixels; the grey values are the same
 * numbers, so every measurement is the same, bit for bit.
 */
import { describe, expect, test } from 'vitest';
import { decodeImage } from '../../src/image/decode';
import { makeGreyImage, newPixels, storageOf } from '../../src/image/grey-image';
import { cropImage } from '../../src/image/crop';
import { createWorkspace } from '../../src/image/workspace';
import { analyseRegion } from '../../src/measure/measure-region';
import { encodeTiff } from '../../testing/encode-tiff';
import { encodeMrc } from '../../testing/encode-mrc';
import { greyPng } from '../../testing/png';
import { rng } from '../../testing/random';

/** Lattice fringes of period 9.3 px with noise, as 16-bit counts. */
function fringes16(size: number, seed: number): Uint16Array {
  const r = rng(seed);
  const data = new Uint16Array(size * size);
  for (let y = 0; y < size; y++) {
    for (let x = 0; x < size; x++) data[y * size + x] = Math.round(20000 + 3000 * Math.cos((2 * Math.PI * (0.8 * x + 0.6 * y)) / 9.3) + 2500 * (r() - 0.5));
  }
  return data;
}

describe('pixel storage', () => {
  test('a 16-bit grey TIFF keeps its pixels as 16-bit integers, the same values', () => {
    const data = fringes16(64, 1);
    const img = decodeImage(encodeTiff({ width: 64, height: 64, data }), 'a.tif');
    expect(img.data).toBeInstanceOf(Uint16Array);
    expect(Array.from(img.data)).toEqual(Array.from(data));
    expect([img.min, img.max]).toEqual([Math.min(...data), Math.max(...data)]);
  });

  test('8-bit grey (TIFF, PNG) as bytes; RGB and float as float32', () => {
    const grey = Uint8Array.from({ length: 32 * 16 }, (_, i) => (i * 7) & 255);
    expect(decodeImage(encodeTiff({ width: 32, height: 16, data: grey }), 'g.tif').data).toBeInstanceOf(Uint8Array);
    expect(decodeImage(greyPng(32, 16, grey), 'g.png').data).toBeInstanceOf(Uint8Array);
    const rgb = Uint8Array.from({ length: 32 * 16 * 3 }, (_, i) => (i * 13) & 255);
    const colour = decodeImage(encodeTiff({ width: 32, height: 16, data: rgb, samplesPerPixel: 3 }), 'c.tif');
    expect(colour.data).toBeInstanceOf(Float32Array); // luma is a weighted sum, not an integer
    const f = Float32Array.from({ length: 32 * 16 }, (_, i) => i / 7);
    expect(decodeImage(encodeTiff({ width: 32, height: 16, data: f }), 'f.tif').data).toBeInstanceOf(Float32Array);
  });

  test('MRC: int8 and int16 as signed 16-bit, uint16 as unsigned, float as float32', () => {
    const n = 16 * 8;
    const cases = [
      { mode: 0 as const, data: Int8Array.from({ length: n }, (_, i) => (i % 256) - 128), kind: Int16Array },
      { mode: 1 as const, data: Int16Array.from({ length: n }, (_, i) => i * 500 - 30000), kind: Int16Array },
      { mode: 6 as const, data: Uint16Array.from({ length: n }, (_, i) => i * 500), kind: Uint16Array },
      { mode: 2 as const, data: Float32Array.from({ length: n }, (_, i) => i / 3), kind: Float32Array },
    ];
    for (const c of cases) {
      const img = decodeImage(encodeMrc({ width: 16, height: 8, mode: c.mode, data: c.data }), 'm.mrc');
      expect(img.data).toBeInstanceOf(c.kind);
      // MRC rows are stored bottom first; the reader turns them: compare as a set of values
      expect(Array.from(img.data).sort((a, b) => a - b)).toEqual(Array.from(c.data, Number).sort((a, b) => a - b));
    }
  });

  test('a workspace lends pixel arrays of every storage from one buffer', () => {
    const ws = createWorkspace();
    const a = ws.pixels('decode-grey', 'uint16', 100);
    const b = ws.pixels('decode-grey', 'float32', 50);
    expect(a).toBeInstanceOf(Uint16Array);
    expect(b).toBeInstanceOf(Float32Array);
    expect(a.buffer).toBe(b.buffer);
    expect(() => ws.pixels('decode-grey', 'int32' as never, 4)).toThrow(/uint8, uint16, int16 or float32/);
    expect(() => newPixels('float64' as never, 4)).toThrow(/got float64/);
  });

  test('a crop keeps the storage', () => {
    const img = makeGreyImage(64, 64, fringes16(64, 2));
    const c = cropImage(img, { x: 3, y: 5, width: 20, height: 10 });
    expect(storageOf(c.data)).toBe('uint16');
    expect(c.data[0]).toBe(img.data[5 * 64 + 3]);
  });

  test('the record of a region is the same, bit for bit, from 16-bit and from float32 pixels', async () => {
    const data = fringes16(256, 3);
    const asU16 = makeGreyImage(256, 256, data, { bitDepth: 16, sampleKind: 'uint' });
    const asF32 = makeGreyImage(256, 256, Float32Array.from(data), { bitDepth: 16, sampleKind: 'uint' });
    const region = { x: 20, y: 30, width: 200, height: 180 };
    const a = await analyseRegion(asU16, region, { alpha: 0.001 });
    const b = await analyseRegion(asF32, region, { alpha: 0.001 });
    expect(a.measurement.periodicities.length).toBeGreaterThan(0);
    const numbers = (m: typeof a.measurement) => JSON.stringify({ ...m, id: '', createdIso: '' });
    expect(numbers(a.measurement)).toBe(numbers(b.measurement));
  });
});
