import { describe, expect, test } from 'vitest';
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { createWorkspace, type Workspace, type WorkspacePurpose } from '../../src/image/workspace';
import { measureRegion } from '../../src/measure/measure-region';
import type { RectPx } from '../../src/measure/spectrum';
import { rng } from '../../testing/random';
import { fringeImage } from './synth';

/**
 * A workspace that fills every array it lends with garbage (NaN, or a huge negative index), so any
 * element a tool reads before writing it shows in the results; it records the purposes asked for.
 */
function poisonedWorkspace(): { workspace: Workspace; purposes: Set<WorkspacePurpose> } {
  const inner = createWorkspace();
  const purposes = new Set<WorkspacePurpose>();
  const workspace: Workspace = {
    float32: (p, n) => (purposes.add(p), inner.float32(p, n).fill(Number.NaN)),
    float64: (p, n) => (purposes.add(p), inner.float64(p, n).fill(Number.NaN)),
    int32: (p, n) => (purposes.add(p), inner.int32(p, n).fill(-0x40000000)),
    bytes: (p, n) => (purposes.add(p), inner.bytes(p, n).fill(0xa5)),
    pixels: (p, storage, n) => (purposes.add(p), storage === 'float32' ? inner.pixels(p, storage, n).fill(Number.NaN) : inner.pixels(p, storage, n).fill(0x5a5a)),
    heldBytes: () => inner.heldBytes(),
  };
  return { workspace, purposes };
}

/** A tactoid: fringes under a Gaussian envelope covering part of the region (so the spot is refitted on its support), in noise; bend > 0 curves them. */
function tactoid(size: number, seed: number, bend = 0): GreyImage {
  const r = rng(seed);
  const periodPx = 12 + 14 * r();
  const angle = Math.PI * r();
  const fx = Math.cos(angle) / periodPx;
  const fy = -Math.sin(angle) / periodPx;
  const cx = size * (0.3 + 0.4 * r());
  const cy = size * (0.3 + 0.4 * r());
  const sigma = size * (0.1 + 0.2 * r());
  const data = new Float32Array(size * size);
  for (let y = 0; y < size; y++) for (let x = 0; x < size; x++) {
    const env = Math.exp(-((x - cx) ** 2 + (y - cy) ** 2) / (2 * sigma * sigma));
    const ph = 2 * Math.PI * (fx * x + fy * y) + (bend * (x - cx) ** 2) / size;
    data[y * size + x] = 28000 + 6000 * env * Math.cos(ph) + (r() + r() + r() - 1.5) * 5000;
  }
  return makeGreyImage(size, size, data, { bitDepth: 16 });
}

/** The record without what differs from run to run by design (its id and time). */
const comparable = (m: unknown) => JSON.stringify(m, (k, v) => (k === 'id' || k === 'createdIso' ? undefined : v));

describe('buffers borrowed from a workspace give the same numbers as fresh ones', () => {
  // Common practice: reusing scratch memory must not change a result; every number of the record
  // (values, each uncertainty part, notes) is compared exactly, as text of the shortest round-trip form.
  const cases: { name: string; image: () => GreyImage; region: RectPx | null }[] = [
    { name: 'tactoid, 512² (refitted on its support)', image: () => tactoid(512, 101), region: null },
    { name: 'bent tactoid, 768²', image: () => tactoid(768, 203, 3), region: null },
    { name: 'two fringe sets, 600 × 400 (a size with factors 3 and 5)', image: () => fringeImage(600, 400, [{ periodPx: 9.3, angleDeg: 20, amplitude: 5 }, { periodPx: 14.1, angleDeg: 100, amplitude: 3 }], 4, 7), region: null },
    { name: 'fine fringes, a rectangle off the origin', image: () => fringeImage(600, 400, [{ periodPx: 6.1, angleDeg: 60, amplitude: 2 }], 6, 8), region: { x: 37, y: 21, width: 300, height: 250 } },
  ];
  test('every case, twice through one poisoned workspace, equals the run with fresh arrays', async () => {
    const { workspace, purposes } = poisonedWorkspace();
    const fresh = [];
    for (const c of cases) fresh.push(comparable(await measureRegion(c.image(), c.region, { maxSpots: 3 })));
    for (let round = 0; round < 2; round++) {
      for (const [i, c] of cases.entries()) {
        const reused = comparable(await measureRegion(c.image(), c.region, { maxSpots: 3, workspace }));
        expect(reused, `${c.name}, round ${round + 1}`).toBe(fresh[i]);
      }
    }
    // the test means something only if the analysis borrowed every scratch array it can
    for (const p of ['spectrum-power', 'spectrum-complex', 'radial-powers', 'spot-weights'] as const) expect(purposes.has(p), p).toBe(true);
    // and found spots to budget
    expect(fresh.every((f) => JSON.parse(f).periodicities.length > 0)).toBe(true);
  });
});
