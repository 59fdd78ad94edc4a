// The command line opens micrograph files by position (openImageFile): the same pixels,
// calibration and warnings, or the same refusal, as decoding the file's bytes read whole, for valid
// TIFFs of several layouts, other formats, the fuzz corpus's damaged files on disk and every class
// of damaged TIFF in testing/corrupt.ts (TIFF 6.0 §2: directories and strips are found by their
// offsets); files that cannot be read are refused by name.
import { mkdtempSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, test } from 'vitest';
import { decodeImage } from '../../src/image/decode';
import { ImageFileError, openImageFile } from '../../src/cli/open-image';
import { classesOf } from '../../testing/corrupt';
import { encodeTiff } from '../../testing/encode-tiff';
import { rng } from '../../testing/random';
import { expectSameImage, outcome } from '../image/same-image';

const dir = mkdtempSync(join(tmpdir(), 'stratameter-open-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Opened from the file by position, against decodeImage of its bytes read whole (file name as given). */
function expectSameAsWhole(path: string, what: string): void {
  expectSameImage(outcome(() => decodeImage(new Uint8Array(readFileSync(path)), path)), outcome(() => openImageFile(path)), what);
}

describe('openImageFile', () => {
  test('valid TIFFs of several layouts, with their calibration: the pixels and metadata of the file read whole', () => {
    const r = rng(2021);
    let k = 0;
    for (const compression of ['none', 'lzw', 'deflate'] as const) {
      for (const rowsPerStrip of [1, 33, 500]) {
        const w = 520;
        const h = 300;
        const data = Uint16Array.from({ length: w * h }, (_, i) => Math.round(20000 + 8000 * Math.sin(i / 11) + 3000 * r()));
        const path = join(dir, `valid-${k++}.tif`);
        writeFileSync(path, encodeTiff({ width: w, height: h, data, compression, rowsPerStrip, resolution: { x: 1e7 / 0.05, unit: 'cm' } }));
        expectSameAsWhole(path, `16-bit, ${compression}, ${rowsPerStrip} rows per strip`);
        const image = openImageFile(path);
        expect(image.calibration?.nmPerPx).toBeCloseTo(0.05, 12);
      }
    }
    const f32 = Float32Array.from({ length: 128 * 96 }, () => r() * 2 - 1);
    const path = join(dir, 'float.tif');
    writeFileSync(path, encodeTiff({ width: 128, height: 96, data: f32, compression: 'deflate', rowsPerStrip: 16 }));
    expectSameAsWhole(path, '32-bit float, deflate');
  });

  test('every damaged file of the fuzz corpus (TIFF, PNG, JPEG, MRC), opened from disk: the same refusal, warning or image', () => {
    const corpus = join(__dirname, '..', 'fuzz', 'corpus');
    let n = 0;
    for (const kind of ['tiff', 'png', 'jpeg', 'mrc']) {
      for (const name of readdirSync(join(corpus, kind))) {
        expectSameAsWhole(join(corpus, kind, name), `${kind}/${name}`);
        n++;
      }
    }
    expect(n).toBeGreaterThan(50);
  });

  test('every class of damaged TIFF (truncated, offsets past the end, huge strip counts …): the same refusal as read whole', () => {
    const classes = classesOf('tiff');
    expect(classes.length).toBeGreaterThan(5);
    const r = rng(2022);
    for (const c of classes) {
      for (let k = 0; k < 2; k++) {
        const input = c.make(r);
        const path = join(dir, `${c.id.replace(/[^\w.-]/g, '_')}-${k}-${input.name}`);
        writeFileSync(path, input.bytes);
        expectSameAsWhole(path, `${c.id} #${k}`);
      }
    }
  });

  test('a file that cannot be read is refused by name: missing, a directory, an empty path', () => {
    const missing = join(dir, 'nope.tif');
    expect(() => openImageFile(missing)).toThrow(ImageFileError);
    expect(() => openImageFile(missing)).toThrow(`${missing}: no such file`);
    const sub = join(dir, 'folder.tif');
    mkdirSync(sub);
    expect(() => openImageFile(sub)).toThrow(`${sub}: is a directory`);
    expect(() => openImageFile('')).toThrow(/file must be a non-empty path, got ""/);
  });
});
