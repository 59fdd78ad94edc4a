import { describe, expect, it } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';
import { domainMap } from '../../src/sheets/domains';
import { axialDifferenceDeg } from '../../src/sheets/structure-tensor';
import { gauss, rng } from '../../testing/synthetic/stacks';

// Two lamellar grains with known truth (algorithm test): left half period 8 px, normal 20°;
// right half period 11 px, normal 110°; white noise.
function twoGrains(noise: number): ReturnType<typeof makeGreyImage> {
  const w = 256;
  const h = 192;
  const r = rng(5);
  const data = new Float32Array(w * h);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const [p, a] = x < 128 ? [8, 20] : [11, 110];
      const th = (a * Math.PI) / 180;
      data[y * w + x] = Math.cos((2 * Math.PI * (x * Math.cos(th) - y * Math.sin(th))) / p) + noise * gauss(r);
    }
  }
  return makeGreyImage(w, h, data, { calibration: { nmPerPx: 0.5, source: 'manual', relUncertainty: 0.02, detail: 'test' } });
}

describe('domainMap', () => {
  it('separates two grains by period and orientation', () => {
    const m = domainMap(twoGrains(0.5), { tileSizePx: 48, stepPx: 24 });
    const big = m.domains.filter((d) => d.tiles >= 4);
    expect(big).toHaveLength(2);
    const left = big.find((d) => d.centerPx[0] < 128)!;
    const right = big.find((d) => d.centerPx[0] > 128)!;
    expect(left.periodPx).toBeCloseTo(8, 1);
    expect(right.periodPx).toBeCloseTo(11, 1);
    expect(axialDifferenceDeg(left.angleDeg, 20)).toBeLessThan(2);
    expect(axialDifferenceDeg(right.angleDeg, 110)).toBeLessThan(2);
    expect(left.periodNm!).toBeCloseTo(left.periodPx * 0.5, 9);
    expect(left.areaNm2!).toBeCloseTo(left.areaPx * 0.25, 9);
    expect(m.labels.length).toBe(m.columns * m.rows);
  });
  it('marks pure noise as not periodic', () => {
    const r = rng(9);
    const d = new Float32Array(128 * 128).map(() => gauss(r));
    const m = domainMap(makeGreyImage(128, 128, d));
    expect(m.domains).toEqual([]);
    expect(Array.from(m.labels).every((l) => l === -1)).toBe(true);
  });
  it('rejects bad tiles by name', () => {
    const img = makeGreyImage(32, 32, new Float32Array(1024));
    expect(() => domainMap(img, { tileSizePx: 64 })).toThrow(/tileSizePx/);
  });
});

describe('domainMap on the demo lamellar mesophase', () => {
  it('recovers the recorded period and grain directions', async () => {
    // truth recorded by the demo generator in demo-data/index.json (synthetic, known truth)
    const { readFileSync } = await import('node:fs');
    const { decodeImage } = await import('../../src/image/decode');
    const entries = JSON.parse(readFileSync('demo-data/index.json', 'utf8')) as { file: string; truth: { periodPx: number; grains: { normalAngleDeg: number }[] } }[];
    const demo = entries.find((e) => e.file === 'lamellar-mesophase.png')!;
    const img = decodeImage(new Uint8Array(readFileSync(`demo-data/${demo.file}`)), demo.file);
    const m = domainMap(img);
    const big = m.domains.filter((d) => d.tiles >= 20);
    expect(big.length).toBeGreaterThanOrEqual(4);
    for (const d of big) {
      expect(Math.abs(d.periodPx - demo.truth.periodPx) / demo.truth.periodPx).toBeLessThan(0.02);
      const nearest = Math.min(...demo.truth.grains.map((g) => axialDifferenceDeg(g.normalAngleDeg, d.angleDeg)));
      expect(nearest).toBeLessThan(8);
    }
  });
});
