/**
 * The strict PNG reader: every chunk's CRC, the zlib stream's header and Adler-32, the palette
 * rules and the exact amount of image data are checked; the image data is inflated under a cap
 * and unfiltered row by row into grey pixels.
 *
 * Reference: Portable Network Graphics (PNG) Specification (W3C, 3rd edition): §5 datastream
 * structure, §7–9 scanlines, filtering and interlacing, §10 compression, §11 chunk specifications.
 */
import type { Alloc, Budget, Decoded, Fail } from './decode-common';
import { DEFLATE_MAX_RATIO, GreyWriter, pixelStorage, NM_PER_M, bytesText, checkDecompressed, checkSize, resolutionCalibration } from './decode-common';
import type { Calibration } from './grey-image';
import { ZlibDataError, crc32, inflateZlib } from './zlib';

/** Samples per pixel by colour type (PNG spec §11.2.2, Table 11.1). */
const CHANNELS: Record<number, number> = { 0: 1, 2: 3, 3: 1, 4: 2, 6: 4 };
/** Bit depths allowed for each colour type (PNG spec §11.2.2, Table 11.1). */
const ALLOWED_DEPTHS: Record<number, number[]> = { 0: [1, 2, 4, 8, 16], 2: [8, 16], 3: [1, 2, 4, 8], 4: [8, 16], 6: [8, 16] };
const COLOUR_NAMES: Record<number, string> = { 0: 'grey', 2: 'RGB', 3: 'palette', 4: 'grey + alpha', 6: 'RGBA' };
/** Adam7 passes: x start, y start, x step, y step (PNG spec §8.2). */
const ADAM7 = [
  [0, 0, 8, 8],
  [4, 0, 8, 8],
  [0, 4, 4, 8],
  [2, 0, 4, 4],
  [0, 2, 2, 4],
  [1, 0, 2, 2],
  [0, 1, 1, 2],
] as const;
/** Largest chunk length a PNG may declare (PNG spec §5.3: 2^31 − 1). */
const MAX_CHUNK_LENGTH = 2 ** 31 - 1;

interface Chunk {
  type: string;
  /** Byte offset of the chunk's length field. */
  at: number;
  /** The chunk's data (a view into the file). */
  data: Uint8Array;
}

function isLetter(c: number): boolean {
  return (c >= 65 && c <= 90) || (c >= 97 && c <= 122);
}

/**
 * Reads a PNG file into grey pixels.
 *
 * @param bytes - the whole file (signature already recognised).
 * @param budget - pixel and decompressed-byte limits.
 * @param fail - stops reading with a reason.
 * @param alloc - where the pixel array comes from.
 * @returns the decoded image and the reader's warnings.
 * Notes: 8- and 16-bit grey, grey + alpha, RGB, RGBA and 8-bit palette images, interlaced or
 * not, are read; the calibration comes from pHYs (per metre). Ancillary chunks other than pHYs
 * are checked (CRC) and skipped; none is decompressed, so no text or profile chunk can expand.
 */
export function readPng(bytes: Uint8Array, budget: Budget, fail: Fail, alloc: Alloc): Decoded {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (bytes.length < 8 + 25 + 12) fail(`truncated: ${bytes.length} bytes is too short for a PNG (signature, IHDR and IEND alone take 45)`);
  const warnings: string[] = [];

  // §5.3: each chunk is length (4), type (4), data (length), CRC (4) over type and data.
  const chunks: Chunk[] = [];
  let at = 8;
  let ended = false;
  while (at < bytes.length) {
    if (at + 12 > bytes.length) fail(`truncated: the PNG ends inside a chunk header at byte ${at} (PNG spec §5.3)`);
    const length = view.getUint32(at);
    const t = [bytes[at + 4], bytes[at + 5], bytes[at + 6], bytes[at + 7]];
    const type = String.fromCharCode(...t);
    const shown = t.every(isLetter) ? type : `0x${t.map((c) => c.toString(16).padStart(2, '0')).join('')}`;
    if (!t.every(isLetter)) fail(`invalid PNG: the chunk at byte ${at} has type ${shown}, not four letters (PNG spec §5.4): the file is damaged`);
    if (length > MAX_CHUNK_LENGTH) fail(`invalid PNG: chunk ${type} at byte ${at} declares ${length} bytes, over the 2^31 − 1 a PNG chunk may hold (PNG spec §5.3)`);
    if (at + 12 + length > bytes.length) {
      fail(`truncated: PNG chunk ${type} at byte ${at} declares ${length} bytes of data but the file ends ${bytes.length - at - 12} bytes after its header`);
    }
    const stored = view.getUint32(at + 8 + length);
    const computed = crc32(bytes, at + 4, at + 8 + length);
    if (stored !== computed) {
      fail(`damaged PNG: chunk ${type} at byte ${at} fails its CRC check (stored 0x${stored.toString(16).padStart(8, '0')}, computed 0x${computed.toString(16).padStart(8, '0')}; PNG spec §5.3)`);
    }
    chunks.push({ type, at, data: bytes.subarray(at + 8, at + 8 + length) });
    at += 12 + length;
    if (type === 'IEND') {
      ended = true;
      break;
    }
  }
  if (!ended) fail('truncated: the PNG ends before its IEND chunk');
  if (at < bytes.length) warnings.push(`${bytes.length - at} bytes after the PNG's IEND chunk were ignored`);

  // §5.6 chunk ordering and §11.2 critical chunks.
  const ihdr = chunks[0];
  if (ihdr.type !== 'IHDR') fail(`invalid PNG: the first chunk is ${ihdr.type}, not IHDR (PNG spec §5.6)`);
  if (ihdr.data.length !== 13) fail(`invalid PNG: the IHDR chunk holds ${ihdr.data.length} bytes, not 13 (PNG spec §11.2.2)`);
  const hv = new DataView(ihdr.data.buffer, ihdr.data.byteOffset, 13);
  const width = hv.getUint32(0);
  const height = hv.getUint32(4);
  const depth = ihdr.data[8];
  const colourType = ihdr.data[9];
  const compression = ihdr.data[10];
  const filterMethod = ihdr.data[11];
  const interlace = ihdr.data[12];
  if (width === 0 || height === 0 || width > MAX_CHUNK_LENGTH || height > MAX_CHUNK_LENGTH) {
    fail(`invalid image size ${width} × ${height} in the PNG IHDR chunk (each must be 1 to 2^31 − 1, PNG spec §11.2.2)`);
  }
  checkSize(width, height, budget, fail, 'PNG IHDR chunk');
  if (!(colourType in CHANNELS)) fail(`invalid PNG: colour type ${colourType} (0, 2, 3, 4 and 6 are defined, PNG spec §11.2.2)`);
  if (!ALLOWED_DEPTHS[colourType].includes(depth)) {
    fail(`invalid PNG: bit depth ${depth} is not allowed with colour type ${colourType} (${COLOUR_NAMES[colourType]}: ${ALLOWED_DEPTHS[colourType].join(', ')}; PNG spec §11.2.2)`);
  }
  if (colourType === 3 ? depth !== 8 : depth !== 8 && depth !== 16) {
    fail(`unsupported PNG: ${depth}-bit ${colourType === 3 ? 'palette indices (8-bit palettes are read)' : 'samples (8- and 16-bit are read)'}`);
  }
  if (compression !== 0) fail(`invalid PNG: compression method ${compression} (only 0 is defined, PNG spec §11.2.2)`);
  if (filterMethod !== 0) fail(`invalid PNG: filter method ${filterMethod} (only 0 is defined, PNG spec §11.2.2)`);
  if (interlace > 1) fail(`invalid PNG: interlace method ${interlace} (0 and 1 are defined, PNG spec §11.2.2)`);

  let palette: Uint8Array | null = null;
  let phys: { x: number; y: number; unit: number } | null = null;
  const idat: Uint8Array[] = [];
  let idatState: 'before' | 'in' | 'after' = 'before';
  for (let i = 1; i < chunks.length; i++) {
    const c = chunks[i];
    const where = `chunk ${c.type} at byte ${c.at}`;
    if (c.type === 'IDAT') {
      if (idatState === 'after') fail(`invalid PNG: ${where} is separated from the earlier IDAT chunks (they must be consecutive, PNG spec §5.6)`);
      idatState = 'in';
      idat.push(c.data);
      continue;
    }
    if (idatState === 'in') idatState = 'after';
    switch (c.type) {
      case 'IHDR':
        fail(`invalid PNG: a second IHDR (${where}; PNG spec §5.6)`);
        break;
      case 'PLTE':
        if (palette) fail(`invalid PNG: a second PLTE (${where}; PNG spec §5.6)`);
        if (idatState !== 'before') fail(`invalid PNG: ${where} comes after the image data (PNG spec §5.6)`);
        if (colourType === 0 || colourType === 4) fail(`invalid PNG: a grey image (colour type ${colourType}) may not have a PLTE chunk (PNG spec §11.2.3)`);
        if (c.data.length === 0 || c.data.length % 3 !== 0 || c.data.length > 768) {
          fail(`invalid PNG: the PLTE chunk holds ${c.data.length} bytes; a palette is 1 to 256 entries of 3 bytes (PNG spec §11.2.3)`);
        }
        if (colourType === 3 && c.data.length / 3 > 2 ** depth) {
          fail(`invalid PNG: the palette has ${c.data.length / 3} entries, more than ${2 ** depth} that ${depth}-bit indices can reach (PNG spec §11.2.3)`);
        }
        palette = c.data;
        break;
      case 'IEND':
        if (c.data.length !== 0) fail(`invalid PNG: the IEND chunk holds ${c.data.length} bytes, not 0 (PNG spec §11.2.5)`);
        break;
      case 'pHYs':
        if (idatState !== 'before') fail(`invalid PNG: ${where} comes after the image data (PNG spec §5.6)`);
        if (c.data.length !== 9) fail(`invalid PNG: the pHYs chunk holds ${c.data.length} bytes, not 9 (PNG spec §11.3.5.3)`);
        phys = { x: new DataView(c.data.buffer, c.data.byteOffset).getUint32(0), y: new DataView(c.data.buffer, c.data.byteOffset).getUint32(4), unit: c.data[8] };
        break;
      default:
        // Bit 5 of the first byte clear: critical; a reader must not skip an unknown critical chunk (PNG spec §5.4).
        if ((c.type.charCodeAt(0) & 0x20) === 0) {
          fail(`unsupported PNG: unknown critical chunk ${c.type} at byte ${c.at} (PNG spec §5.4)`);
        }
    }
  }
  if (colourType === 3 && !palette) fail('invalid PNG: a palette image (colour type 3) without a PLTE chunk (PNG spec §11.2.3)');
  if (colourType !== 3 && palette) warnings.push('the PNG carries a suggested palette (PLTE), which is not used for its true-colour pixels');
  if (idat.length === 0) fail('truncated: the PNG has no image data (IDAT)');

  // The exact decompressed size: every pass's rows, each with its filter byte (§7.2, §8.2).
  const channels = CHANNELS[colourType];
  const bytesPerPixel = (channels * depth) / 8;
  const passes = interlace === 1 ? ADAM7.map(([x0, y0, dx, dy]) => ({ x0, y0, dx, dy, w: Math.ceil((width - x0) / dx), h: Math.ceil((height - y0) / dy) })) : [{ x0: 0, y0: 0, dx: 1, dy: 1, w: width, h: height }];
  let rawBytes = 0;
  for (const p of passes) if (p.w > 0 && p.h > 0) rawBytes += p.h * (1 + p.w * bytesPerPixel);
  const idatBytes = idat.reduce((s, d) => s + d.length, 0);
  checkDecompressed(rawBytes, budget, fail, `the PNG image data of ${width} × ${height} ${depth}-bit ${COLOUR_NAMES[colourType]} pixels`);
  if (idatBytes * DEFLATE_MAX_RATIO < rawBytes) fail(`truncated or corrupt: ${idatBytes} bytes of image data cannot hold ${width} × ${height} pixels`);

  const spp = colourType === 3 ? 3 : channels;
  const writer = new GreyWriter(width * height, { spp, colour: spp >= 3, hasAlpha: spp === 2 || spp === 4, alphaMax: colourType === 3 ? 255 : 2 ** depth - 1, storage: pixelStorage(depth > 8 ? 16 : 8, 'uint', spp >= 3) }, alloc);
  // Row buffers: the row being filled and the previous (unfiltered) row of the same pass.
  const maxRow = Math.max(...passes.map((p) => p.w * bytesPerPixel));
  let cur = new Uint8Array(maxRow + 1);
  let prev = new Uint8Array(maxRow + 1);
  const samples16 = depth === 16 ? new Uint16Array(maxRow / 2) : null;
  const paletteRgb = colourType === 3 ? new Uint8Array(width * 3) : null;
  const paletteEntries = palette ? palette.length / 3 : 0;
  let passIndex = 0;
  let row = 0;
  let fill = 0;
  const skipEmpty = () => {
    while (passIndex < passes.length && (passes[passIndex].w === 0 || passes[passIndex].h === 0)) passIndex++;
  };
  skipEmpty();
  const finishRow = () => {
    const p = passes[passIndex];
    const rowLen = p.w * bytesPerPixel;
    const filter = cur[0];
    const bpp = Math.max(1, bytesPerPixel);
    const y = p.y0 + row * p.dy;
    // §9.2: undo the filter; prev holds the previous row of this pass (zeros for the first).
    switch (filter) {
      case 0:
        break;
      case 1:
        for (let i = 1 + bpp; i <= rowLen; i++) cur[i] = (cur[i] + cur[i - bpp]) & 255;
        break;
      case 2:
        for (let i = 1; i <= rowLen; i++) cur[i] = (cur[i] + prev[i]) & 255;
        break;
      case 3:
        for (let i = 1; i <= rowLen; i++) cur[i] = (cur[i] + (((i > bpp ? cur[i - bpp] : 0) + prev[i]) >> 1)) & 255;
        break;
      case 4:
        for (let i = 1; i <= rowLen; i++) {
          const a = i > bpp ? cur[i - bpp] : 0;
          const b = prev[i];
          const c = i > bpp ? prev[i - bpp] : 0;
          const pa = Math.abs(b - c);
          const pb = Math.abs(a - c);
          const pc = Math.abs(a + b - 2 * c);
          cur[i] = (cur[i] + (pa <= pb && pa <= pc ? a : pb <= pc ? b : c)) & 255;
        }
        break;
      default:
        fail(`corrupt PNG: image row ${y}${interlace ? ` (interlace pass ${passIndex + 1})` : ''} has filter type ${filter}; 0–4 are defined (PNG spec §9.2)`);
    }
    const start = y * width + p.x0;
    if (paletteRgb) {
      for (let x = 0; x < p.w; x++) {
        const k = cur[1 + x];
        if (k >= paletteEntries) fail(`corrupt PNG: pixel (${p.x0 + x * p.dx}, ${y}) uses palette index ${k}, but the palette has ${paletteEntries} entries (PNG spec §11.2.3)`);
        paletteRgb[3 * x] = palette![3 * k];
        paletteRgb[3 * x + 1] = palette![3 * k + 1];
        paletteRgb[3 * x + 2] = palette![3 * k + 2];
      }
      writer.write(paletteRgb, 0, p.w, start, p.dx);
    } else if (samples16) {
      const n = rowLen / 2;
      for (let i = 0; i < n; i++) samples16[i] = (cur[1 + 2 * i] << 8) | cur[2 + 2 * i];
      writer.write(samples16, 0, p.w, start, p.dx);
    } else {
      writer.write(cur.subarray(1), 0, p.w, start, p.dx);
    }
    [cur, prev] = [prev, cur];
    fill = 0;
    row++;
    if (row === p.h) {
      row = 0;
      passIndex++;
      prev.fill(0);
      skipEmpty();
    }
  };
  const sink = (piece: Uint8Array) => {
    let i = 0;
    while (i < piece.length) {
      if (passIndex >= passes.length) throw new ZlibDataError(`the compressed data holds more than the ${rawBytes} bytes the declared image needs`);
      const need = 1 + passes[passIndex].w * bytesPerPixel - fill;
      const take = Math.min(need, piece.length - i);
      cur.set(piece.subarray(i, i + take), fill);
      fill += take;
      i += take;
      if (take === need) finishRow();
    }
  };
  let produced = 0;
  try {
    produced = inflateZlib(idat, { maxBytes: rawBytes, sink });
  } catch (e) {
    if (e instanceof ZlibDataError) fail(`damaged PNG image data (IDAT, ${idatBytes} bytes): ${e.message}`);
    throw e;
  }
  if (produced < rawBytes) {
    fail(`truncated or corrupt: the PNG image data gives ${bytesText(produced)} where ${width} × ${height} pixels need ${bytesText(rawBytes)}`);
  }
  if (colourType === 3) warnings.push('palette PNG: palette colours looked up');
  const data = writer.finish(warnings);

  let calibration: Calibration | null = null;
  if (phys) {
    const unitName = phys.unit === 1 ? 'metre' : phys.unit === 0 ? 'unit 0 (aspect ratio only)' : `unit ${phys.unit} (undefined; 0 and 1 are defined, PNG spec §11.3.5.3)`;
    calibration = resolutionCalibration(phys.x, phys.y, phys.unit === 1 ? NM_PER_M : null, unitName, 'PNG pHYs chunk', warnings);
  }
  return { width, height, data, bitDepth: colourType === 3 ? 8 : depth, sampleKind: 'uint', calibration, warnings, mayBeNonFinite: false };
}
