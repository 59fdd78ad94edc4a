import { describe, expect, test } from 'vitest';
import { zlibSync } from 'fflate';
import { Image, encode as encodeRaster } from 'image-js';
import { decodeImage, ImageReadError } from '../../src/image/decode';
import { buildTiff, entryOffset, firstIfdOffset } from '../../testing/tiff';
import { greyPng, ihdr, pngFromScanlines, readChunks, writePng, type PngChunk } from '../../testing/png';

// The strict readers: damage that a checksum, a count or a rule of the format reveals is refused
// with a message naming the file and the place, never read as if the file were whole.

function readError(fn: () => unknown): ImageReadError {
  try {
    fn();
  } catch (e) {
    if (e instanceof ImageReadError) return e;
    throw e;
  }
  throw new Error('no error');
}

const W = 24;
const H = 10;
const pixels = Uint8Array.from({ length: W * H }, (_, i) => (i * 37) & 255);
const good = greyPng(W, H, pixels);

describe('PNG checksums and structure', () => {
  test('the valid file reads exactly', () => {
    expect(Array.from(decodeImage(good, 'a.png').data)).toEqual(Array.from(pixels));
  });

  test('a chunk whose CRC does not match is refused, naming the chunk (PNG spec §5.3)', () => {
    const chunks = readChunks(good);
    for (let i = 0; i < chunks.length; i++) {
      const e = readError(() => decodeImage(writePng(chunks, { wrongCrc: i }), 'crc.png'));
      expect(e.message).toMatch(new RegExp(`^crc\\.png: damaged PNG: chunk ${chunks[i].type} at byte \\d+ fails its CRC check`));
    }
    // One flipped bit in the image data, CRC left as it was: the CRC catches it.
    const flipped = good.slice();
    flipped[readChunks(good)[0].data.length + 8 + 12 + 8 + 5] ^= 4;
    expect(readError(() => decodeImage(flipped, 'f.png')).message).toMatch(/chunk IDAT .* fails its CRC check/);
  });

  test('image data whose Adler-32 does not match is refused (RFC 1950 §2.2)', () => {
    const chunks = readChunks(good);
    const idat = chunks.find((c) => c.type === 'IDAT')!;
    const z = idat.data.slice();
    z[z.length - 1] ^= 1; // the last byte of the Adler-32, CRC recomputed by writePng
    const bad = writePng(chunks.map((c) => (c === idat ? { type: 'IDAT', data: z } : c)));
    expect(readError(() => decodeImage(bad, 'adler.png')).message).toMatch(/^adler\.png: damaged PNG image data \(IDAT, \d+ bytes\): the Adler-32 checksum .* differs/);
  });

  test('a file two bytes short is an error, not missing pixels set to 0', () => {
    for (const cut of [1, 2, 12, 13]) {
      expect(readError(() => decodeImage(good.subarray(0, good.length - cut), 'short.png')).message).toMatch(/truncated/);
    }
  });

  test('a valid zlib stream with too few or too many scanlines is refused (PNG spec §7.2)', () => {
    const row = (y: number) => Uint8Array.from([0, ...pixels.subarray(y * W, (y + 1) * W)]);
    const rows = (n: number) => {
      const out = new Uint8Array(n * (W + 1));
      for (let y = 0; y < n; y++) out.set(row(y % H), y * (W + 1));
      return out;
    };
    expect(readError(() => decodeImage(pngFromScanlines(W, H, 8, 0, rows(H).subarray(0, H * (W + 1) - 2)), 's.png')).message).toMatch(/image data gives \d+ bytes where 24 × 10 pixels need 250 bytes/);
    expect(readError(() => decodeImage(pngFromScanlines(W, H, 8, 0, rows(H + 1)), 'l.png')).message).toMatch(/holds more than the 250 bytes the declared image needs/);
  });

  test('an undefined filter type is refused with its row (PNG spec §9.2)', () => {
    const raw = new Uint8Array(H * (W + 1));
    raw[3 * (W + 1)] = 5;
    expect(readError(() => decodeImage(pngFromScanlines(W, H, 8, 0, raw), 'f.png')).message).toMatch(/image row 3 has filter type 5/);
  });

  test('palette rules: required for colour type 3, refused for grey, indices inside it (PNG spec §11.2.3)', () => {
    const raw = new Uint8Array(2 * 3).fill(0);
    raw[2] = 1; // row 0: filter 0, indices 0, 1
    const plte = (n: number): PngChunk => ({ type: 'PLTE', data: Uint8Array.from({ length: 3 * n }, (_, i) => i * 10) });
    expect(readError(() => decodeImage(pngFromScanlines(2, 2, 8, 3, raw), 'p.png')).message).toMatch(/palette image \(colour type 3\) without a PLTE chunk/);
    expect(decodeImage(pngFromScanlines(2, 2, 8, 3, raw, [plte(2)]), 'p.png').data[1]).toBeCloseTo(0.2126 * 30 + 0.7152 * 40 + 0.0722 * 50, 3);
    expect(readError(() => decodeImage(pngFromScanlines(2, 2, 8, 3, raw, [plte(1)]), 'p.png')).message).toMatch(/uses palette index 1, but the palette has 1 entries/);
    expect(readError(() => decodeImage(pngFromScanlines(2, 2, 8, 0, raw, [plte(2)]), 'g.png')).message).toMatch(/grey image \(colour type 0\) may not have a PLTE chunk/);
    const odd: PngChunk = { type: 'PLTE', data: new Uint8Array(7) };
    expect(readError(() => decodeImage(pngFromScanlines(2, 2, 8, 3, raw, [odd]), 'p.png')).message).toMatch(/PLTE chunk holds 7 bytes/);
  });

  test('chunk order and unknown chunks (PNG spec §5.4, §5.6)', () => {
    const chunks = readChunks(good);
    const iend = chunks[chunks.length - 1];
    const idat = chunks.find((c) => c.type === 'IDAT')!;
    const half = [idat.data.subarray(0, 10), idat.data.subarray(10)];
    const split = writePng([chunks[0], { type: 'IDAT', data: half[0] }, { type: 'tEXt', data: new TextEncoder().encode('a\0b') }, { type: 'IDAT', data: half[1] }, iend]);
    expect(readError(() => decodeImage(split, 'o.png')).message).toMatch(/separated from the earlier IDAT chunks/);
    const together = writePng([chunks[0], { type: 'IDAT', data: half[0] }, { type: 'IDAT', data: half[1] }, iend]);
    expect(Array.from(decodeImage(together, 'ok.png').data)).toEqual(Array.from(pixels));
    const critical = writePng([chunks[0], { type: 'ABCD', data: new Uint8Array(3) }, idat, iend]);
    expect(readError(() => decodeImage(critical, 'c.png')).message).toMatch(/unknown critical chunk ABCD/);
    const ancillary = writePng([chunks[0], { type: 'abCd', data: new Uint8Array(3) }, idat, iend]);
    expect(decodeImage(ancillary, 'a.png').width).toBe(W);
    const trailing = new Uint8Array(good.length + 5);
    trailing.set(good);
    expect(decodeImage(trailing, 't.png').warnings.join()).toMatch(/5 bytes after the PNG's IEND chunk were ignored/);
  });

  test('a zlib header asking for a preset dictionary is refused (PNG spec §10.1)', () => {
    const chunks = readChunks(good);
    const z = chunks.find((c) => c.type === 'IDAT')!.data.slice();
    z[1] = 0x20 | (31 - ((z[0] * 256 + 0x20) % 31)); // FDICT set, check bits valid
    const bad = writePng(chunks.map((c) => (c.type === 'IDAT' ? { type: 'IDAT', data: z } : c)));
    expect(readError(() => decodeImage(bad, 'd.png')).message).toMatch(/preset dictionary/);
  });
});

describe('budgets: refused from the header with the declared size and the limit', () => {
  test('image data that would inflate past the decompressed-bytes budget', () => {
    // 2000 × 2000 grey zeros: 4,002,000 bytes of scanlines in a few kB of IDAT.
    const bomb = pngFromScanlines(2000, 2000, 8, 0, new Uint8Array(2000 * 2001));
    expect(bomb.length).toBeLessThan(20000);
    const e = readError(() => decodeImage(bomb, 'bomb.png', { maxDecompressedBytes: 1_000_000 }));
    expect(e.message).toBe('bomb.png: the PNG image data of 2000 × 2000 8-bit grey pixels would decompress to 4002000 bytes (3.8 MiB), over the limit of 1000000 bytes');
    expect(decodeImage(bomb, 'bomb.png').width).toBe(2000); // within the default budget it reads
  });

  test('a compressed colour-profile chunk is never decompressed', () => {
    const chunks = readChunks(good);
    const profile = new Uint8Array(64 * 2 ** 20); // 64 MiB of zeros, about 64 kB compressed
    const iccp: PngChunk = { type: 'iCCP', data: new Uint8Array([...new TextEncoder().encode('p'), 0, 0, ...zlibSync(profile)]) };
    const file = writePng([chunks[0], iccp, ...chunks.slice(1)]);
    const before = process.memoryUsage().arrayBuffers;
    expect(decodeImage(file, 'icc.png').width).toBe(W);
    expect(process.memoryUsage().arrayBuffers - before).toBeLessThan(16 * 2 ** 20);
  });

  test('TIFF Deflate strips that would inflate past the budget', () => {
    const data = new Uint16Array(512 * 512);
    const file = buildTiff({ width: 512, height: 512, bits: 16, data, compression: 8, predictor: 2, rowsPerStrip: 64 });
    const e = readError(() => decodeImage(file, 'z.tif', { maxDecompressedBytes: 100_000 }));
    expect(e.message).toBe("z.tif: the TIFF's 8 Deflate-compressed strips of 512 × 512 pixels would decompress to 524288 bytes, over the limit of 100000 bytes");
  });

  test('a JPEG whose decoder would need more than the budget', () => {
    const img = new Image(640, 480, { colorModel: 'GREY' });
    const e = readError(() => decodeImage(encodeRaster(img, { format: 'jpeg' }), 'j.jpg', { maxDecompressedBytes: 1_000_000 }));
    expect(e.message).toMatch(/^j\.jpg: the 640 × 480 JPEG \(\d components?, with the decoder's working memory\) would decompress to \d+ bytes \(\d+\.\d MiB\), over the limit of 1000000 bytes$/);
  });
});

describe('TIFF tags, strips and tiles', () => {
  const w = 37;
  const h = 21;
  const u16 = Uint16Array.from({ length: w * h }, (_, i) => (i * 977) & 0xffff);
  const f32 = Float32Array.from({ length: w * h }, (_, i) => Math.sin(i / 7) * 1e3);

  test('tiles, predictors 2 and 3, LZW and Deflate, both byte orders read exactly (TIFF 6.0 §14, §15; TN3)', () => {
    for (const compression of [1, 5, 8] as const) {
      for (const bigEndian of [false, true]) {
        const tile = buildTiff({ width: w, height: h, bits: 16, data: u16, compression, predictor: compression === 1 ? 1 : 2, tile: { width: 16, length: 16 }, bigEndian });
        expect(Array.from(decodeImage(tile, 't.tif').data)).toEqual(Array.from(u16));
        const strips = buildTiff({ width: w, height: h, bits: 32, data: f32, compression, predictor: compression === 1 ? 1 : 3, rowsPerStrip: 4, bigEndian });
        expect(Array.from(decodeImage(strips, 's.tif').data)).toEqual(Array.from(f32));
      }
    }
    const rgb = Uint8Array.from({ length: w * h * 3 }, (_, i) => (i * 13) & 255);
    const img = decodeImage(buildTiff({ width: w, height: h, spp: 3, bits: 8, data: rgb, compression: 8, predictor: 2, tile: { width: 16, length: 16 } }), 'rgb.tif');
    expect(img.data[5]).toBeCloseTo(0.2126 * rgb[15] + 0.7152 * rgb[16] + 0.0722 * rgb[17], 3);
  });

  test('predictor values other than 1, 2, 3 are refused (TIFF 6.0 §14)', () => {
    for (const p of [0, 4, 65535]) {
      const file = buildTiff({ width: w, height: h, bits: 16, data: u16, compression: 5, tags: [{ tag: 317, type: 3, values: [p] }] });
      expect(readError(() => decodeImage(file, 'p.tif')).message).toBe(`p.tif: invalid TIFF: Predictor ${p} (1, 2 and 3 are defined, TIFF 6.0 §14)`);
    }
    const floatDiff = buildTiff({ width: w, height: h, bits: 32, data: f32, compression: 8, tags: [{ tag: 317, type: 3, values: [2] }] });
    expect(readError(() => decodeImage(floatDiff, 'p.tif')).message).toMatch(/Predictor 2 .* on float samples/);
  });

  test('byte counts and offsets must match the strips the image needs (TIFF 6.0 §8)', () => {
    const file = buildTiff({ width: w, height: h, bits: 16, data: u16, rowsPerStrip: 5 });
    const fewer = buildTiff({ width: w, height: h, bits: 16, data: u16, rowsPerStrip: 5, tags: [{ tag: 279, type: 4, values: [370, 370] }] });
    expect(readError(() => decodeImage(fewer, 'c.tif')).message).toMatch(/2 strip byte counts for 5 strip offsets/);
    const more = buildTiff({ width: w, height: h, bits: 16, data: u16, rowsPerStrip: 5, tags: [{ tag: 278, type: 4, values: [11] }] });
    expect(readError(() => decodeImage(more, 'c.tif')).message).toMatch(/5 strip offsets where 21 rows in strips of 11 need 2/);
    expect(decodeImage(file, 'ok.tif').width).toBe(w);
  });

  test('absurd tile sizes are refused at once, before any tile is decoded (TIFF 6.0 §15)', () => {
    const base = { width: w, height: h, bits: 16 as const, data: u16, compression: 8 as const, tile: { width: 16, length: 16 } };
    for (const [tw, tl] of [[2 ** 32 - 1, 16], [2 ** 31, 1], [16, 2 ** 32 - 1]]) {
      const file = buildTiff({ ...base, tags: [{ tag: 322, type: 4, values: [tw] }, { tag: 323, type: 4, values: [tl] }] });
      const e = readError(() => decodeImage(file, 'tile.tif'));
      expect(e.message).toMatch(new RegExp(`tiles of ${tw} × ${tl} pixels .* are far larger than the 37 × 21 image|tile offsets where`));
    }
    const wrongCount = buildTiff({ ...base, tags: [{ tag: 322, type: 4, values: [32] }] });
    expect(readError(() => decodeImage(wrongCount, 't.tif')).message).toMatch(/6 tile offsets where the 37 × 21 image in 32 × 16 tiles needs 4/);
  });

  test('a tag of the wrong type or count is refused, naming it (TIFF 6.0 §2, §8)', () => {
    const ascii = buildTiff({ width: w, height: h, bits: 8, data: u16, tags: [{ tag: 256, type: 2, values: [51, 55, 0] }] });
    expect(readError(() => decodeImage(ascii, 'a.tif')).message).toMatch(/tag 256 \(ImageWidth\) has type ASCII; SHORT or LONG expected/);
    const two = buildTiff({ width: w, height: h, bits: 8, data: u16, tags: [{ tag: 259, type: 3, values: [1, 1] }] });
    expect(readError(() => decodeImage(two, 'a.tif')).message).toMatch(/tag 259 \(Compression\) holds 2 values; 1 expected/);
  });

  test('a self-referencing Exif or SubIFD directory is a warning, never a stack overflow', () => {
    for (const tag of [34665, 330]) {
      const file = buildTiff({ width: w, height: h, bits: 16, data: u16, tags: [{ tag, type: 4, values: [0] }] });
      new DataView(file.buffer).setUint32(entryOffset(file, tag) + 8, firstIfdOffset(file), true); // points at the main directory
      const img = decodeImage(file, 'loop.tif');
      expect(Array.from(img.data)).toEqual(Array.from(u16));
      expect(img.warnings.join()).toMatch(/points back to the directory at byte \d+, already read \(a loop\)/);
    }
  });

  test('damaged compressed strips name the strip and the byte range', () => {
    const file = buildTiff({ width: w, height: h, bits: 16, data: u16, compression: 8, rowsPerStrip: 7 });
    const off = new DataView(file.buffer).getUint32(entryOffset(file, 273) + 8, true);
    const first = new DataView(file.buffer).getUint32(off, true);
    const bad = file.slice();
    bad[first + 8] ^= 0x55;
    expect(readError(() => decodeImage(bad, 'd.tif')).message).toMatch(/^d\.tif: damaged TIFF data in strip 0 \(bytes \d+–\d+, Deflate\): /);
  });
});

describe('JPEG tables', () => {
  test('a scan that uses a Huffman table the file does not define is refused by name (T.81 B.2.3)', () => {
    const img = new Image(16, 16, { colorModel: 'GREY' });
    const file = encodeRaster(img, { format: 'jpeg' });
    // Renumber every DHT table id to 3: the scan still asks for table 0.
    const bad = file.slice();
    for (let at = 2; at < bad.length - 4; ) {
      const marker = bad[at + 1];
      const len = (bad[at + 2] << 8) | bad[at + 3];
      if (marker === 0xda) break;
      if (marker === 0xc4) {
        let p = at + 4;
        while (p < at + 2 + len) {
          bad[p] = (bad[p] & 0xf0) | 3;
          let n = 0;
          for (let i = 1; i <= 16; i++) n += bad[p + i];
          p += 17 + n;
        }
      }
      at += 2 + len;
    }
    expect(readError(() => decodeImage(bad, 'h.jpg')).message).toMatch(/^h\.jpg: corrupt JPEG: the scan at byte \d+ uses DC Huffman table 0, which the file does not define$/);
  });
});

describe('the same checks hold with an IHDR whose fields changed', () => {
  test('IHDR rules (PNG spec §11.2.2)', () => {
    const chunks = readChunks(good);
    const withHeader = (d: Uint8Array) => writePng([{ type: 'IHDR', data: d }, ...chunks.slice(1)]);
    expect(readError(() => decodeImage(withHeader(ihdr(W, H, 3, 0)), 'b.png')).message).toMatch(/bit depth 3 is not allowed with colour type 0/);
    expect(readError(() => decodeImage(withHeader(ihdr(W, H, 8, 5)), 'b.png')).message).toMatch(/colour type 5/);
    const d = ihdr(W, H, 8, 0);
    d[10] = 1;
    expect(readError(() => decodeImage(withHeader(d), 'b.png')).message).toMatch(/compression method 1/);
  });
});
