/**
 * A small MRC2014 writer for test fixtures, demo data and benchmarks.
 *
 * Reference: Cheng et al., "MRC2014: Extensions to the MRC format header for electron
 * cryo-microscopy and tomography", J. Struct. Biol. 192, 146–150 (2015).
 */

/** MRC data modes written here: 0 int8, 1 int16, 2 float32, 6 uint16. */
export type MrcMode = 0 | 1 | 2 | 6;

export interface EncodeMrcOptions {
  /** Columns (NX). */
  width: number;
  /** Rows (NY). */
  height: number;
  /** Sections (NZ); default 1. */
  depth?: number;
  /** Data mode; must match the array type (0 Int8Array, 1 Int16Array, 2 Float32Array, 6 Uint16Array). */
  mode: MrcMode;
  /**
   * Voxels, x fastest, then rows from the top of the image as shown, then sections; length
   * width × height × depth. The file stores rows with y upwards (first stored row at the bottom
   * of the displayed image), so rows are written in reverse order; decodeImage flips them back.
   */
  data: Int8Array | Int16Array | Float32Array | Uint16Array;
  /** Pixel spacing in Å along x; the cell is written as xlen = spacing × MX with MX = NX. Default 0 (unset). */
  pixelSpacingAngstrom?: number;
  /** Pixel spacing in Å along y; default the x spacing. */
  pixelSpacingYAngstrom?: number;
  /** Byte order of the file; default little-endian (machine stamp 0x44 0x44). */
  bigEndian?: boolean;
  /** Bytes of extended header (NSYMBT) to reserve after the 1024-byte header, filled with zeros; default 0. */
  extendedHeaderBytes?: number;
  /** Text labels, at most 10, each up to 80 ASCII characters. */
  labels?: string[];
}

const MODE_ARRAY: Record<MrcMode, string> = { 0: 'Int8Array', 1: 'Int16Array', 2: 'Float32Array', 6: 'Uint16Array' };

/**
 * Writes an MRC2014 file: 1024-byte header, optional extended header, then the voxels.
 *
 * @param options - the map and its header values, see {@link EncodeMrcOptions}.
 * @returns the file's bytes.
 *
 * Notes: MAPC/MAPR/MAPS = 1, 2, 3; cell angles 90°; DMIN/DMAX/DMEAN/RMS from the data;
 * EXTTYP blank; NVERSION 20140. Reference: Cheng et al., J. Struct. Biol. 192, 146 (2015).
 */
export function encodeMrc(options: EncodeMrcOptions): Uint8Array {
  const { width, height, mode, data } = options;
  const depth = options.depth ?? 1;
  for (const [name, v] of [['width', width], ['height', height], ['depth', depth]] as const) {
    if (!Number.isInteger(v) || v < 1) throw new RangeError(`${name} must be a positive integer, got ${v}`);
  }
  if (!(mode in MODE_ARRAY)) throw new RangeError(`mode must be 0, 1, 2 or 6, got ${mode}`);
  if (data?.constructor?.name !== MODE_ARRAY[mode]) {
    throw new TypeError(`mode ${mode} needs a ${MODE_ARRAY[mode]}, got ${data?.constructor?.name}`);
  }
  if (data.length !== width * height * depth) {
    throw new RangeError(`data length ${data.length} does not match ${width} × ${height} × ${depth} = ${width * height * depth}`);
  }
  const ext = options.extendedHeaderBytes ?? 0;
  if (!Number.isInteger(ext) || ext < 0) throw new RangeError(`extendedHeaderBytes must be a non-negative integer, got ${ext}`);
  const sx = options.pixelSpacingAngstrom ?? 0;
  const sy = options.pixelSpacingYAngstrom ?? sx;
  if (!(sx >= 0) || !(sy >= 0) || !Number.isFinite(sx) || !Number.isFinite(sy)) {
    throw new RangeError(`pixel spacing must be a non-negative finite number of Å, got ${sx}, ${sy}`);
  }
  const labels = options.labels ?? [];
  if (labels.length > 10) throw new RangeError(`at most 10 labels, got ${labels.length}`);

  const le = !options.bigEndian;
  const bytesPer = data.BYTES_PER_ELEMENT;
  const out = new Uint8Array(1024 + ext + data.length * bytesPer);
  const v = new DataView(out.buffer);
  const i32 = (word: number, x: number) => v.setInt32((word - 1) * 4, x, le);
  const f32 = (word: number, x: number) => v.setFloat32((word - 1) * 4, x, le);

  let min = Infinity;
  let max = -Infinity;
  let sum = 0;
  for (let i = 0; i < data.length; i++) {
    const x = data[i];
    if (x < min) min = x;
    if (x > max) max = x;
    sum += x;
  }
  const mean = sum / data.length;
  let ss = 0;
  for (let i = 0; i < data.length; i++) ss += (data[i] - mean) ** 2;

  // Word numbers (1-based) as in the MRC2014 header table (Cheng et al. 2015, Table 1).
  i32(1, width); // NX
  i32(2, height); // NY
  i32(3, depth); // NZ
  i32(4, mode); // MODE
  i32(8, width); // MX
  i32(9, height); // MY
  i32(10, depth); // MZ
  f32(11, sx * width); // CELLA xlen, Å
  f32(12, sy * height); // ylen
  f32(13, sx * depth); // zlen
  f32(14, 90);
  f32(15, 90);
  f32(16, 90); // CELLB
  i32(17, 1);
  i32(18, 2);
  i32(19, 3); // MAPC, MAPR, MAPS
  f32(20, min); // DMIN
  f32(21, max); // DMAX
  f32(22, mean); // DMEAN
  i32(23, depth > 1 ? 401 : 0); // ISPG: 0 image stack / single image, 401 volume stack
  i32(24, ext); // NSYMBT
  i32(29, 20140); // NVERSION
  out.set([0x4d, 0x41, 0x50, 0x20], 208); // MAP 'MAP '
  out.set(le ? [0x44, 0x44, 0x00, 0x00] : [0x11, 0x11, 0x00, 0x00], 212); // MACHST
  f32(55, Math.sqrt(ss / data.length)); // RMS
  i32(56, labels.length); // NLABL
  labels.forEach((text, n) => {
    if (text.length > 80) throw new RangeError(`label ${n} is longer than 80 characters (${text.length})`);
    for (let i = 0; i < 80; i++) {
      const c = i < text.length ? text.charCodeAt(i) : 0x20;
      if (c > 127) throw new RangeError(`label ${n} must be ASCII, found character code ${c}`);
      out[224 + n * 80 + i] = c;
    }
  });

  let at = 1024 + ext;
  for (let i = 0; i < data.length; i++, at += bytesPer) {
    const z = Math.floor(i / (width * height));
    const yStored = Math.floor(i / width) % height;
    const x = data[z * width * height + (height - 1 - yStored) * width + (i % width)];
    if (mode === 0) v.setInt8(at, x);
    else if (mode === 1) v.setInt16(at, x, le);
    else if (mode === 6) v.setUint16(at, x, le);
    else v.setFloat32(at, x, le);
  }
  return out;
}
