import { describe, expect, test } from 'vitest';
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { encodeTiff } from '../../testing/encode-tiff';
import { decodeImage } from '../../src/image/decode';
import { measureRegion } from '../../src/measure/measure-region';
import { lineProfile } from '../../src/measure/profile';
import { detectSheets } from '../../src/sheets/detect';
import { sheetsAlongLine } from '../../src/sheets/line';
import { findScaleBar } from '../../src/calibration/scale-bar';

// Extreme but valid images through every measuring function: each gives a result with only
// finite numbers (null where a value does not exist), or an error that says what is wrong.
// Never an error from the engine itself (a property of undefined, an array length, the stack).
const ENGINE_MESSAGES = /Cannot read|Cannot set|undefined|is not a function|is not iterable|Invalid array length|Invalid typed array length|Maximum call stack|out of memory|out of bounds|Array buffer allocation/i;

const CAL = { nmPerPx: 0.05, source: 'manual' as const, relUncertainty: 0.02, detail: 'typed in' };

function image(w: number, h: number, f: (x: number, y: number) => number): GreyImage {
  const d = new Float32Array(w * h);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) d[y * w + x] = Math.round(f(x, y));
  return makeGreyImage(w, h, d, { bitDepth: 16, sampleKind: 'uint', calibration: CAL });
}

const fringes = (x: number, y: number) => 30000 + 20000 * Math.cos((2 * Math.PI * (x + 0.3 * y)) / 7);
const CASES: [string, () => GreyImage][] = [
  ['1 × 1', () => image(1, 1, () => 1000)],
  ['1 × 64 (one column)', () => image(1, 64, (_x, y) => fringes(y, 0))],
  ['64 × 1 (one row)', () => image(64, 1, (x) => fringes(x, 0))],
  ['2 × 2', () => image(2, 2, (x, y) => x + y)],
  ['constant 128 × 128', () => image(128, 128, () => 1234)],
  ['constant zero 64 × 64', () => image(64, 64, () => 0)],
  ['16384 × 32 fringes (wide, within the budget)', () => image(16384, 32, fringes)],
  ['half saturated at 65535', () => image(128, 128, (x, y) => (x < 64 ? 65535 : Math.min(65535, fringes(x, y))))],
  ['fully saturated 96 × 96', () => image(96, 96, () => 65535)],
  ['two values only (binary) 64 × 64', () => image(64, 64, (x) => (x % 7 < 3 ? 0 : 65535))],
];

/** Every non-finite number in a result, by path; `allowed` names documented NaN fields. */
function nonFinite(v: unknown, path = '', allowed: RegExp | null = null, out: string[] = []): string[] {
  if (typeof v === 'number') {
    if (!Number.isFinite(v) && !(allowed && allowed.test(path))) out.push(`${path} = ${v}`);
  } else if (ArrayBuffer.isView(v) && !(v instanceof DataView)) {
    const a = v as unknown as ArrayLike<number>;
    for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i]) && !(allowed && allowed.test(path))) { out.push(`${path}[${i}] = ${a[i]}`); break; }
  } else if (Array.isArray(v)) v.forEach((x, i) => nonFinite(x, `${path}[${i}]`, allowed, out));
  else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) nonFinite(x, `${path}.${k}`, allowed, out);
  return out;
}

/** Runs `f`; a result must be finite throughout, an error must be the function's own. Returns what happened. */
async function check(what: string, f: () => unknown, allowed: RegExp | null = null): Promise<string> {
  let result: unknown;
  try {
    result = await f();
  } catch (e) {
    expect(e, `${what}: threw a non-Error`).toBeInstanceOf(Error);
    const msg = (e as Error).message;
    expect(msg.length, `${what}: empty message`).toBeGreaterThan(0);
    expect(msg, `${what}: an engine error from deep inside`).not.toMatch(ENGINE_MESSAGES);
    return `error: ${msg.slice(0, 80)}`;
  }
  expect(nonFinite(result, what, allowed), `${what}: non-finite numbers in the result`).toEqual([]);
  return result === null ? 'null' : 'result';
}

describe('extreme but valid images', () => {
  for (const [name, make] of CASES) {
    test(name, async () => {
      const img = make();
      const log: string[] = [];
      // decode: the same pixels written as a 16-bit TIFF (TIFF 6.0) and read back.
      const file = encodeTiff({ width: img.width, height: img.height, data: Uint16Array.from(img.data), resolution: { x: 2e8, unit: 'cm' } });
      log.push(`decode ${await check('decode', () => decodeImage(file, 'extreme.tif'))}`);
      const back = decodeImage(file, 'extreme.tif');
      expect(Array.from(back.data.subarray(0, 64))).toEqual(Array.from(img.data.subarray(0, 64)));
      log.push(`measureRegion ${await check('measureRegion', () => measureRegion(img, null))}`);
      // Along the longer side, through the middle.
      const across = img.width >= img.height;
      const mid = Math.floor(((across ? img.height : img.width) - 1) / 2);
      const [x0, y0, x1, y1] = across ? [0, mid, img.width - 1, mid] : [mid, 0, mid, img.height - 1];
      // A one-pixel-wide profile has no spread across it: its standard error is NaN by definition (documented).
      log.push(`lineProfile ${await check('lineProfile', () => lineProfile(img, x0, y0, x1, y1), /standardError/)}`);
      log.push(`detectSheets ${await check('detectSheets', () => detectSheets(img))}`);
      log.push(`sheetsAlongLine ${await check('sheetsAlongLine', () => sheetsAlongLine(img, x0, y0, x1, y1, { widthPx: 1 }), /standardError/)}`);
      log.push(`findScaleBar ${await check('findScaleBar', () => findScaleBar(img))}`);
      console.log(`${name}: ${log.join('; ')}`);
    });
  }

  test('a constant image has no periodicity and no sheets (nothing invented from flat data)', async () => {
    const img = image(128, 128, () => 1234);
    const m = await measureRegion(img, null);
    expect(m.periodicities).toEqual([]);
    expect(findScaleBar(img)).toBeNull();
  });
});
