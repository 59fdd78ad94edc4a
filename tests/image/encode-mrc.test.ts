import { describe, expect, test } from 'vitest';
import { encodeMrc } from '../../testing/encode-mrc';

// Header layout: Cheng et al., "MRC2014", J. Struct. Biol. 192, 146 (2015), Table 1:
// 1024 bytes of 4-byte words; NX, NY, NZ, MODE = words 1-4; MX, MY, MZ = 8-10; CELLA = 11-13 (Å);
// NSYMBT = 24 (extended header bytes); MAP = 53 ("MAP "); MACHST = 54 (0x44 0x44 little-endian).
describe('encodeMrc', () => {
  test('writes the MRC2014 header words and a float32 section', () => {
    const data = new Float32Array([1.5, -2, 3, 4, 5, 6]);
    const b = encodeMrc({ width: 3, height: 2, mode: 2, data, pixelSpacingAngstrom: 2.5, extendedHeaderBytes: 16 });
    const v = new DataView(b.buffer);
    const w = (n: number) => v.getInt32((n - 1) * 4, true);
    const f = (n: number) => v.getFloat32((n - 1) * 4, true);
    expect([w(1), w(2), w(3), w(4)]).toEqual([3, 2, 1, 2]);
    expect([w(8), w(9), w(10)]).toEqual([3, 2, 1]);
    expect([f(11), f(12)]).toEqual([7.5, 5]); // xlen = 2.5 Å × MX
    expect(w(24)).toBe(16);
    expect(String.fromCharCode(...b.subarray(208, 212))).toBe('MAP ');
    expect([b[212], b[213]]).toEqual([0x44, 0x44]);
    expect(b.length).toBe(1024 + 16 + 6 * 4);
    // Rows are stored bottom row first (y upwards); the top row [1.5, -2, 3] comes second.
    expect(v.getFloat32(1024 + 16, true)).toBe(4);
    expect(v.getFloat32(1024 + 16 + 12, true)).toBe(1.5);
    expect([f(20), f(21)]).toEqual([-2, 6]); // DMIN, DMAX
  });

  test('writes big-endian files with machine stamp 0x11 0x11', () => {
    const b = encodeMrc({ width: 2, height: 1, mode: 1, data: new Int16Array([-300, 7]), bigEndian: true });
    const v = new DataView(b.buffer);
    expect(v.getInt32(0, false)).toBe(2);
    expect([b[212], b[213]]).toEqual([0x11, 0x11]);
    expect(v.getInt16(1024, false)).toBe(-300);
  });

  test('modes 0 and 6 store int8 and uint16 samples', () => {
    const b0 = encodeMrc({ width: 2, height: 1, mode: 0, data: new Int8Array([-5, 100]) });
    expect(new DataView(b0.buffer).getInt8(1024)).toBe(-5);
    const b6 = encodeMrc({ width: 1, height: 1, mode: 6, data: new Uint16Array([60000]) });
    expect(new DataView(b6.buffer).getUint16(1024, true)).toBe(60000);
  });

  test('rejects a mode that does not match the array and bad sizes', () => {
    expect(() => encodeMrc({ width: 1, height: 1, mode: 2, data: new Int16Array(1) })).toThrow(/mode 2 needs a Float32Array, got Int16Array/);
    expect(() => encodeMrc({ width: 1, height: 1, mode: 4 as 2, data: new Float32Array(1) })).toThrow(/got 4/);
    expect(() => encodeMrc({ width: 2, height: -1, mode: 2, data: new Float32Array(1) })).toThrow(/height .* got -1/);
  });
});
