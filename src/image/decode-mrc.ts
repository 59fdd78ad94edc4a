/**
 * The MRC reader: the first section of an MRC2014 file (or an older MRC file without the "MAP "
 * stamp), modes 0, 1, 2, 6 and 12, either byte order, rows turned so that row 0 is the top.
 *
 * Reference: MRC2014, Cheng et al., J. Struct. Biol. 192, 146 (2015), Table 1.
 */
import type { Alloc, Budget, Decoded, Fail } from './decode-common';
import { MAX_CALIBRATED_NM_PER_PX, MIN_CALIBRATED_NM_PER_PX, checkSize, fmt, metadataCalibration, pixelStorage } from './decode-common';
import type { Calibration, SampleKind } from './grey-image';

// ---------------------------------------------------------------------------------------------
// MRC2014: Cheng et al., J. Struct. Biol. 192, 146 (2015), Table 1

const MRC_MODES: Record<number, { bytes: number; kind: SampleKind; bits: number }> = {
  0: { bytes: 1, kind: 'int', bits: 8 },
  1: { bytes: 2, kind: 'int', bits: 16 },
  2: { bytes: 4, kind: 'float', bits: 32 },
  6: { bytes: 2, kind: 'uint', bits: 16 },
  12: { bytes: 2, kind: 'float', bits: 16 },
};

/** Byte order from the machine stamp (word 54): 0x44 0x44 or 0x44 0x41 little, 0x11 0x11 big. */
function mrcLittleEndian(bytes: Uint8Array): boolean | null {
  if (bytes.length < 216) return null;
  if (bytes[212] === 0x44) return true;
  if (bytes[212] === 0x11) return false;
  return null;
}

function plausibleMrc(view: DataView, le: boolean): boolean {
  const nx = view.getInt32(0, le);
  const ny = view.getInt32(4, le);
  const nz = view.getInt32(8, le);
  const mode = view.getInt32(12, le);
  return nx > 0 && ny > 0 && nz > 0 && nx < 1 << 24 && ny < 1 << 24 && [0, 1, 2, 3, 4, 6, 12, 101].includes(mode);
}

/** True when the first 1024 bytes read as a plausible MRC header in either byte order (files without the MRC2014 stamp). */
export function looksLikeMrcHeader(bytes: Uint8Array): boolean {
  if (bytes.length < 1024) return false;
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  return plausibleMrc(view, true) || plausibleMrc(view, false);
}

/** IEEE 754 binary16 to a number. */
function halfToFloat(h: number): number {
  const s = h & 0x8000 ? -1 : 1;
  const e = (h >> 10) & 0x1f;
  const f = h & 0x3ff;
  if (e === 0) return s * f * 2 ** -24;
  if (e === 31) return f ? NaN : s * Infinity;
  return s * (1 + f / 1024) * 2 ** (e - 15);
}

/**
 * Reads the first section of an MRC file into grey pixels.
 * @param bytes - the whole file.
 * @param budget - the pixel limit (MRC data is not compressed).
 * @param fail - stops reading with a reason.
 * @param alloc - where the pixel array comes from.
 * @returns the decoded image, calibration from the cell and grid, and the reader's warnings.
 */
export function readMrc(bytes: Uint8Array, budget: Budget, fail: Fail, alloc: Alloc): Decoded {
  if (bytes.length < 1024) fail(`truncated: ${bytes.length} bytes is shorter than the 1024-byte MRC header`);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const warnings: string[] = [];
  let le = mrcLittleEndian(bytes);
  if (le === null) {
    le = plausibleMrc(view, true) ? true : plausibleMrc(view, false) ? false : true;
    warnings.push(`MRC machine stamp 0x${bytes[212].toString(16)} 0x${bytes[213].toString(16)} is not a known byte order; read as ${le ? 'little' : 'big'}-endian from the header values`);
  }
  const word = (n: number) => view.getInt32((n - 1) * 4, le);
  const real = (n: number) => view.getFloat32((n - 1) * 4, le);
  const nx = word(1);
  const ny = word(2);
  const nz = word(3);
  const mode = word(4);
  checkSize(nx, ny, budget, fail, 'MRC header (NX, NY)');
  if (nz < 1) fail(`invalid MRC: NZ = ${nz}`);
  const m = MRC_MODES[mode];
  if (!m) {
    const what = mode === 3 || mode === 4 ? 'complex' : mode === 101 ? '4-bit' : 'unknown';
    fail(`unsupported MRC mode ${mode} (${what}); modes 0, 1, 2, 6 and 12 are read`);
  }
  const nsymbt = word(24);
  if (nsymbt < 0) fail(`invalid MRC: NSYMBT = ${nsymbt}`);
  const start = 1024 + nsymbt;
  const section = nx * ny * m.bytes;
  const needed = start + section * nz;
  if (bytes.length < needed) fail(`truncated: the MRC header declares ${nx} × ${ny} × ${nz} voxels (${needed} bytes), the file has ${bytes.length}`);
  if (nz > 1) warnings.push(`MRC stack or volume of ${nz} sections: read section 1`);

  // Data rows are stored with y increasing upwards (first row at the bottom of the displayed
  // image, common practice in EM display, from memory); flip so that row 0 is the top.
  const pixels = nx * ny;
  const data = alloc.grey(pixels, pixelStorage(m.bits, m.kind, false));
  for (let y = 0; y < ny; y++) {
    const src = start + (ny - 1 - y) * nx * m.bytes;
    const dst = y * nx;
    for (let x = 0; x < nx; x++) {
      const a = src + x * m.bytes;
      let v: number;
      switch (mode) {
        case 0: v = view.getInt8(a); break;
        case 1: v = view.getInt16(a, le); break;
        case 2: v = view.getFloat32(a, le); break;
        case 6: v = view.getUint16(a, le); break;
        default: v = halfToFloat(view.getUint16(a, le)); break;
      }
      data[dst + x] = v;
    }
  }

  // Pixel spacing = cell length / grid sampling (words 11 and 8; 12 and 9), Å → nm.
  let calibration: Calibration | null = null;
  const mx = word(8);
  const my = word(9);
  const xlen = real(11);
  const ylen = real(12);
  if (mx > 0 && xlen > 0 && Number.isFinite(xlen)) {
    const nmPerPx = (xlen / mx) / 10;
    const nmPerPxY = my > 0 && ylen > 0 && Number.isFinite(ylen) ? (ylen / my) / 10 : nmPerPx;
    if (nmPerPx > MAX_CALIBRATED_NM_PER_PX || nmPerPx < MIN_CALIBRATED_NM_PER_PX) {
      warnings.push(`not a calibration: MRC cell gives ${fmt(nmPerPx)} nm per pixel, outside 1 pm to 10 µm`);
    } else {
      calibration = metadataCalibration(
        nmPerPx,
        `MRC cell/grid (words 11/8): ${fmt(xlen)} Å / ${mx} = ${fmt(xlen / mx)} Å per pixel`,
        Math.abs(nmPerPxY - nmPerPx) > 1e-6 * nmPerPx ? nmPerPxY : undefined,
      );
      if (Math.abs(xlen / mx - 1) < 1e-6) warnings.push('MRC pixel spacing is exactly 1 Å, which some programs write when the size is unknown: check it');
    }
  }
  return { width: nx, height: ny, data, bitDepth: m.bits, sampleKind: m.kind, calibration, warnings, mayBeNonFinite: m.kind === 'float' };
}
