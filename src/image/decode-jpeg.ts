/**
 * The JPEG reader: every marker segment is walked and checked first (frame, tables, scans and
 * the tables each scan uses), the decoder's memory is estimated from the frame header and held
 * to the budget, and only then does jpeg-js decode the entropy-coded data.
 *
 * Reference: ITU-T T.81 (1992) | ISO/IEC 10918-1, annex B (syntax: B.1 markers, B.2.2 frame
 * header, B.2.3 scan header, B.2.4 tables) and annex G (progressive scans).
 */
import { decode as decodeJpegData } from 'jpeg-js';
import type { Alloc, Budget, Decoded, Fail } from './decode-common';
import { GreyWriter, bytesText, checkDecompressed, checkSize } from './decode-common';

interface FrameComponent {
  id: number;
  h: number;
  v: number;
  tq: number;
}

interface Frame {
  marker: number;
  precision: number;
  height: number;
  width: number;
  components: FrameComponent[];
}

/** What the marker walk found. */
interface JpegLayout {
  frame: Frame;
  /** Byte offset where the first scan's entropy-coded data starts. */
  scanAt: number;
  /** Bytes after the end-of-image marker. */
  trailing: number;
}

const hex = (m: number) => `0x${m.toString(16).toUpperCase().padStart(2, '0')}`;

/**
 * Walks a JPEG's markers from SOI to EOI and checks what the decoder will rely on.
 * @param bytes - the file.
 * @param fail - stops reading with a reason.
 * @returns the frame, where the entropy-coded data starts, and trailing bytes after EOI.
 */
function walkMarkers(bytes: Uint8Array, fail: Fail): JpegLayout {
  const n = bytes.length;
  const u16 = (at: number) => (bytes[at] << 8) | bytes[at + 1];
  let frame: Frame | null = null;
  const quant = new Set<number>();
  const huffman = [new Set<number>(), new Set<number>()]; // DC (class 0), AC (class 1)
  let scanAt = -1;
  let at = 2;
  for (;;) {
    if (at >= n) fail('truncated: the JPEG has no end-of-image marker');
    if (bytes[at] !== 0xff) fail(`corrupt JPEG: no marker at byte ${at} (T.81 B.1.1.2)`);
    while (at < n && bytes[at] === 0xff) at++; // fill bytes (T.81 B.1.1.2)
    if (at >= n) fail('truncated: the JPEG has no end-of-image marker');
    const marker = bytes[at];
    const m = at - 1; // position of this marker's 0xFF
    at++;
    if (marker === 0xd9) {
      if (scanAt < 0) fail('truncated: the JPEG ends before its image data (SOS)');
      return { frame: frame!, scanAt, trailing: n - at };
    }
    if (marker === 0xd8) fail(`corrupt JPEG: a second start-of-image marker at byte ${m}`);
    if (marker === 0x01 || (marker >= 0xd0 && marker <= 0xd7) || marker === 0x00) continue; // standalone (T.81 Table B.1)
    if (at + 2 > n) fail(`truncated: the JPEG ends inside the marker ${hex(marker)} at byte ${m}`);
    const len = u16(at);
    if (len < 2) fail(`corrupt JPEG: segment ${hex(marker)} at byte ${m} has length ${len}`);
    if (at + len > n) fail(`truncated: JPEG segment at byte ${m} runs past the end of the file`);
    const seg = at + 2; // first byte after the length
    const end = at + len;
    if (marker >= 0xc0 && marker <= 0xcf && marker !== 0xc4 && marker !== 0xc8 && marker !== 0xcc) {
      // B.2.2 frame header
      if (frame) fail(`unsupported JPEG: a second frame header at byte ${m} (hierarchical JPEG)`);
      if (len < 8) fail('corrupt JPEG: short frame header');
      const nf = bytes[seg + 5];
      frame = { marker, precision: bytes[seg], height: u16(seg + 1), width: u16(seg + 3), components: [] };
      if (len !== 8 + 3 * nf) fail(`corrupt JPEG: the frame header at byte ${m} has length ${len} for ${nf} components (8 + 3 × ${nf} expected, T.81 B.2.2)`);
      for (let i = 0; i < nf; i++) {
        const c = seg + 6 + 3 * i;
        const comp = { id: bytes[c], h: bytes[c + 1] >> 4, v: bytes[c + 1] & 15, tq: bytes[c + 2] };
        if (comp.h < 1 || comp.h > 4 || comp.v < 1 || comp.v > 4) fail(`corrupt JPEG: component ${comp.id} has sampling factors ${comp.h} × ${comp.v} (1 to 4 each, T.81 B.2.2)`);
        if (comp.tq > 3) fail(`corrupt JPEG: component ${comp.id} uses quantisation table ${comp.tq} (0 to 3, T.81 B.2.2)`);
        if (frame.components.some((x) => x.id === comp.id)) fail(`corrupt JPEG: component id ${comp.id} appears twice in the frame header`);
        frame.components.push(comp);
      }
    } else if (marker === 0xc4) {
      // B.2.4.2 Huffman tables
      let p = seg;
      while (p < end) {
        const tc = bytes[p] >> 4;
        const th = bytes[p] & 15;
        if (tc > 1 || th > 3) fail(`corrupt JPEG: Huffman table class ${tc} id ${th} at byte ${p} (class 0 or 1, id 0 to 3; T.81 B.2.4.2)`);
        if (p + 17 > end) fail(`corrupt JPEG: the Huffman table segment at byte ${m} is cut short`);
        let count = 0;
        for (let i = 1; i <= 16; i++) count += bytes[p + i];
        if (count > 256) fail(`corrupt JPEG: Huffman table ${tc === 0 ? 'DC' : 'AC'} ${th} declares ${count} codes (at most 256)`);
        if (p + 17 + count > end) fail(`corrupt JPEG: the Huffman table segment at byte ${m} is cut short`);
        huffman[tc].add(th);
        p += 17 + count;
      }
    } else if (marker === 0xdb) {
      // B.2.4.1 quantisation tables
      let p = seg;
      while (p < end) {
        const pq = bytes[p] >> 4;
        const tq = bytes[p] & 15;
        if (pq > 1 || tq > 3) fail(`corrupt JPEG: quantisation table precision ${pq} id ${tq} at byte ${p} (T.81 B.2.4.1)`);
        const size = 1 + 64 * (pq + 1);
        if (p + size > end) fail(`corrupt JPEG: the quantisation table segment at byte ${m} is cut short`);
        quant.add(tq);
        p += size;
      }
    } else if (marker === 0xda) {
      // B.2.3 scan header
      if (!frame) fail('corrupt JPEG: image data (SOS) before the frame header (SOF)');
      const ns = bytes[seg];
      if (ns < 1 || ns > 4 || len !== 6 + 2 * ns) fail(`corrupt JPEG: the scan header at byte ${m} has ${ns} components and length ${len} (T.81 B.2.3)`);
      const ss = bytes[seg + 1 + 2 * ns];
      const ah = bytes[seg + 3 + 2 * ns] >> 4;
      const progressive = frame.marker === 0xc2;
      for (const c of frame.components) {
        if (!quant.has(c.tq)) fail(`corrupt JPEG: component ${c.id} uses quantisation table ${c.tq}, which the file does not define before its image data`);
      }
      for (let i = 0; i < ns; i++) {
        const cs = bytes[seg + 1 + 2 * i];
        const td = bytes[seg + 2 + 2 * i] >> 4;
        const ta = bytes[seg + 2 + 2 * i] & 15;
        if (!frame.components.some((c) => c.id === cs)) fail(`corrupt JPEG: the scan at byte ${m} names component ${cs}, which the frame does not have`);
        const needsDc = progressive ? ss === 0 && ah === 0 : true;
        const needsAc = progressive ? ss > 0 : true;
        if (needsDc && !huffman[0].has(td)) fail(`corrupt JPEG: the scan at byte ${m} uses DC Huffman table ${td}, which the file does not define`);
        if (needsAc && !huffman[1].has(ta)) fail(`corrupt JPEG: the scan at byte ${m} uses AC Huffman table ${ta}, which the file does not define`);
      }
      if (scanAt < 0) scanAt = end;
      // Skip the entropy-coded data: a marker is FF followed by anything but 00 or RSTn (B.1.1.5).
      let p = end;
      while (p + 1 < n && !(bytes[p] === 0xff && bytes[p + 1] !== 0 && !(bytes[p + 1] >= 0xd0 && bytes[p + 1] <= 0xd7) && bytes[p + 1] !== 0xff)) p++;
      if (p + 1 >= n) fail('truncated: the JPEG has no end-of-image marker');
      at = p;
      continue;
    }
    at = end;
  }
}

/**
 * Reads a JPEG file into grey pixels.
 *
 * @param bytes - the whole file (signature already recognised).
 * @param budget - pixel and decoder-memory limits.
 * @param fail - stops reading with a reason.
 * @param alloc - where the pixel array comes from.
 * @returns the decoded image and the reader's warnings (always the note that JPEG is lossy).
 * Notes: baseline, extended and progressive Huffman JPEG with 8-bit samples and 1 or 3
 * components. Metadata (Exif) is not read.
 */
export function readJpeg(bytes: Uint8Array, budget: Budget, fail: Fail, alloc: Alloc): Decoded {
  const { frame, scanAt, trailing } = walkMarkers(bytes, fail);
  if (!frame) fail('truncated: the JPEG ends before its frame header (SOF)');
  if (frame.height === 0) fail('unsupported JPEG: height defined later by a DNL marker');
  checkSize(frame.width, frame.height, budget, fail, 'JPEG frame header');
  if (frame.marker !== 0xc0 && frame.marker !== 0xc1 && frame.marker !== 0xc2) {
    fail(`unsupported JPEG: frame type SOF${frame.marker - 0xc0} (baseline and progressive Huffman JPEG are read)`);
  }
  if (frame.precision !== 8) fail(`unsupported JPEG: ${frame.precision}-bit samples (8-bit is read)`);
  const nc = frame.components.length;
  if (nc !== 1 && nc !== 3) fail(`unsupported JPEG: ${nc} colour components`);
  // Each 8 × 8 block needs at least one bit of entropy-coded data (its DC difference code).
  const blocks = Math.ceil(frame.width / 8) * Math.ceil(frame.height / 8);
  if ((bytes.length - scanAt) * 8 < blocks) fail(`truncated or corrupt: ${bytes.length - scanAt} bytes of image data cannot hold ${frame.width} × ${frame.height} pixels`);

  // The decoder's memory, as jpeg-js allocates it: an Int32Array(64) per block of every
  // component (256 bytes plus about 192 of object overhead), a line buffer per component, and
  // 3 bytes per pixel of output.
  const maxH = Math.max(...frame.components.map((c) => c.h));
  const maxV = Math.max(...frame.components.map((c) => c.v));
  const mcusPerLine = Math.ceil(frame.width / 8 / maxH);
  const mcusPerColumn = Math.ceil(frame.height / 8 / maxV);
  let estimate = 3 * frame.width * frame.height;
  for (const c of frame.components) {
    const compBlocks = mcusPerLine * c.h * mcusPerColumn * c.v;
    estimate += compBlocks * (256 + 192) + compBlocks * 64;
  }
  checkDecompressed(estimate, budget, fail, `the ${frame.width} × ${frame.height} JPEG (${nc} component${nc > 1 ? 's' : ''}, with the decoder's working memory)`);

  let rgb: Uint8Array;
  try {
    const out = decodeJpegData(bytes, {
      useTArray: true,
      formatAsRGBA: false,
      maxResolutionInMP: Number.POSITIVE_INFINITY,
      maxMemoryUsageInMB: Math.ceil(budget.maxDecompressedBytes / 2 ** 20),
    });
    if (out.width !== frame.width || out.height !== frame.height) fail('corrupt JPEG: decoded size differs from the header');
    rgb = out.data;
  } catch (e) {
    const msg = e instanceof Error ? e.message : String(e);
    if (/maxMemoryUsageInMB/.test(msg)) fail(`decoding the ${frame.width} × ${frame.height} JPEG needs more than the limit of ${bytesText(budget.maxDecompressedBytes)}`);
    if (/Huffman|huffman|marker|encoding/.test(msg)) {
      throw new ImageDataError('the JPEG\'s compressed image data is damaged (an invalid code or an unexpected marker inside the scan) and cannot be decoded', e);
    }
    throw new ImageDataError('the JPEG\'s compressed image data is damaged and cannot be decoded', e);
  }
  const warnings: string[] = [];
  if (trailing > 0) warnings.push(`${trailing} bytes after the JPEG's end-of-image marker were ignored`);
  const pixels = frame.width * frame.height;
  const writer = new GreyWriter(pixels, { spp: 3, colour: nc === 3, hasAlpha: false, alphaMax: NaN, storage: 'uint8' }, alloc);
  writer.write(rgb, 0, pixels, 0, 1);
  const data = writer.finish(warnings);
  warnings.push('JPEG is lossy: compression artefacts (8 × 8 blocks) add a spurious 8-pixel periodicity');
  return { width: frame.width, height: frame.height, data, bitDepth: 8, sampleKind: 'uint', calibration: null, warnings, mayBeNonFinite: false };
}

/** The decoder stopped on damaged data; the message is in the user's terms, the decoder's own words are the cause. */
export class ImageDataError extends Error {
  override name = 'ImageDataError';
  constructor(message: string, cause: unknown) {
    super(message, { cause });
  }
}
