// Shared fixtures for the library tests: a fresh database per test and a small synthetic image.
import 'fake-indexeddb/auto';
import { encodeTiff } from '../../testing/encode-tiff';
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { openLibrary, type LibraryDb } from '../../src/store';

let counter = 0;

/** Opens a library under a name no other test uses. */
export async function freshLibrary(): Promise<LibraryDb> {
  counter++;
  return openLibrary({ name: `test-library-${process.pid}-${counter}-${Math.random().toString(36).slice(2)}` });
}

/** A synthetic fringe image (cosine of period 8 px along x), 64 × 48, 16-bit, calibrated. */
export function fringeImage(): GreyImage {
  const w = 64;
  const h = 48;
  const data = new Float32Array(w * h);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) data[y * w + x] = 30000 + 20000 * Math.cos((2 * Math.PI * x) / 8);
  return makeGreyImage(w, h, data, {
    bitDepth: 16,
    sampleKind: 'uint',
    calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02, detail: 'typed in' },
  });
}

/** Some bytes standing in for an original file. */
export function fileBytes(n = 1000, seed = 1): Uint8Array {
  const b = new Uint8Array(n);
  let s = seed;
  for (let i = 0; i < n; i++) {
    s = (s * 1103515245 + 12345) >>> 0;
    b[i] = s >>> 24;
  }
  return b;
}

/**
 * A real 16-bit TIFF of a fringe image as `fringeImage` describes it (64 × 48), so an import's
 * check that the stored file decodes to the recorded size passes; `seed` shifts the grey values
 * so that files differ byte for byte.
 */
export function fringeFile(seed = 0): Uint8Array {
  const img = fringeImage();
  return encodeTiff({ width: img.width, height: img.height, data: Uint16Array.from(img.data, (v) => v + seed) });
}
