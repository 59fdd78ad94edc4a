// Shared by the tests that open an image two ways (by position, and from its bytes held whole):
// what each way gave, and the check that both gave the same image or the same refusal.
import { expect } from 'vitest';
import type { GreyImage } from '../../src/image/grey-image';

/** What opening an image gave: the image, or the refusal's name and message. */
export type Outcome = { image: GreyImage } | { error: string };

/** Runs an opener and keeps its image or its refusal. */
export function outcome(run: () => GreyImage): Outcome {
  try {
    return { image: run() };
  } catch (e) {
    return { error: `${(e as Error).name}: ${(e as Error).message}` };
  }
}

/** Both refused alike, or both gave the same size, type, calibration, warnings and pixels (bit for bit). */
export function expectSameImage(a: Outcome, b: Outcome, what: string): void {
  if ('error' in a || 'error' in b) {
    expect(b, what).toEqual(a);
    return;
  }
  const x = a.image;
  const y = b.image;
  expect([y.width, y.height, y.bitDepth, y.sampleKind], what).toEqual([x.width, x.height, x.bitDepth, x.sampleKind]);
  expect(y.calibration, what).toEqual(x.calibration);
  expect(y.warnings, what).toEqual(x.warnings);
  expect(Buffer.from(y.data.buffer, y.data.byteOffset, y.data.byteLength).equals(Buffer.from(x.data.buffer, x.data.byteOffset, x.data.byteLength)), `${what}: pixels`).toBe(true);
}
