import { describe, expect, it } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';
import { detectSheets, sheetStatistics } from '../../src/sheets/detect';
import { sheetsAlongLine } from '../../src/sheets/line';
import { axialDifferenceDeg, recursiveGaussian, structureTensor } from '../../src/sheets/structure-tensor';
import { syntheticImage } from './synthetic';

// Synthetic clay tactoids in a polymer film with known truth (algorithm tests).
const truth = [
  { layers: 5, periodPx: 8, cx: 100, cy: 100, angleDeg: 90, lengthPx: 120 },
  { layers: 2, periodPx: 8, cx: 300, cy: 120, angleDeg: 30, lengthPx: 100 },
  { layers: 9, periodPx: 8, cx: 150, cy: 300, angleDeg: 150, lengthPx: 140, curvature: 0.004 },
  { layers: 3, periodPx: 8, cx: 320, cy: 320, angleDeg: 0, lengthPx: 100 },
];

describe('structureTensor', () => {
  it('gives the layer-normal angle in the screen convention and high coherence on fringes', () => {
    // fringes with normal at 30° CCW from +x on screen: intensity cos(2π (x cos30 − y sin30)/p), y = row
    const w = 64;
    const data = new Float32Array(w * w);
    const th = (30 * Math.PI) / 180;
    for (let y = 0; y < w; y++) for (let x = 0; x < w; x++) data[y * w + x] = Math.cos((2 * Math.PI * (x * Math.cos(th) - y * Math.sin(th))) / 8);
    const f = structureTensor(makeGreyImage(w, w, data), { integrationSigmaPx: 6 });
    const i = 32 * w + 32;
    expect(axialDifferenceDeg(f.angleDeg[i], 30)).toBeLessThan(0.5);
    expect(f.coherence[i]).toBeGreaterThan(0.95);
  });
  it('recursive Gaussian: unit gain and the variance of a Gaussian of that σ', () => {
    // Young & van Vliet (1995): the impulse response approximates a Gaussian of standard deviation σ
    for (const sigma of [2, 6, 12]) {
      const w = 201;
      const img = new Float32Array(w * w);
      img[100 * w + 100] = 1;
      const out = recursiveGaussian(img, w, w, sigma);
      let sum = 0;
      let varX = 0;
      for (let y = 0; y < w; y++) for (let x = 0; x < w; x++) { sum += out[y * w + x]; varX += out[y * w + x] * (x - 100) ** 2; }
      expect(sum).toBeCloseTo(1, 3);
      expect(Math.abs(Math.sqrt(varX / sum) - sigma) / sigma).toBeLessThan(0.03);
      expect(out[100 * w + 100 - 5]).toBeCloseTo(out[100 * w + 105], 4);
    }
  });
  it('axial differences wrap at 180°', () => {
    expect(axialDifferenceDeg(179, 1)).toBeCloseTo(2, 12);
    expect(axialDifferenceDeg(90, 0)).toBeCloseTo(90, 12);
  });
});

describe('sheetsAlongLine', () => {
  it('measures a 5-layer sheet across a drawn line, in nm with the calibration', () => {
    const img = syntheticImage(200, 200, [{ layers: 5, periodPx: 8, cx: 100, cy: 100, angleDeg: 90, lengthPx: 120 }], { noise: 0.05, seed: 4 });
    img.calibration = { nmPerPx: 0.125, source: 'manual', relUncertainty: 0.02, detail: 'test' };
    // vertical line from bottom to top: the normal points up on screen (90°)
    const r = sheetsAlongLine(img, 100, 160, 100, 40, { widthPx: 15 });
    expect(r.angleDeg).toBeCloseTo(90, 9);
    expect(r.sheets.map((s) => s.layers)).toEqual([5]);
    const s = r.sheets[0];
    expect(Math.abs(s.thicknessPx - 40)).toBeLessThan(4);
    expect(s.thicknessNm!).toBeCloseTo(s.thicknessPx * 0.125, 9);
    expect(Math.abs(s.centerXY[1] - 100)).toBeLessThan(1);
  });
});

describe('detectSheets', () => {
  const img = syntheticImage(420, 420, truth, { noise: 0.05, amorphous: 0.05, seed: 2 });
  const r = detectSheets(img);
  it('finds every sheet with the right layer count, thickness, angle and centre', () => {
    expect(r.sheets).toHaveLength(truth.length);
    for (const t of truth) {
      const s = r.sheets.find((q) => Math.hypot(q.centerPx[0] - t.cx, q.centerPx[1] - t.cy) < 10);
      expect(s, `sheet at ${t.cx},${t.cy}`).toBeDefined();
      expect(s!.layers).toBe(t.layers);
      expect(Math.abs(s!.thicknessPx - t.layers * t.periodPx)).toBeLessThan(t.periodPx / 2);
      expect(axialDifferenceDeg(s!.angleDeg, t.angleDeg)).toBeLessThan(5);
      expect(s!.status).toBe('auto');
      expect(s!.outlinePx.length).toBeGreaterThanOrEqual(4);
      expect(s!.thicknessNm).toBeNull();
    }
  });
  it('finds nothing in an amorphous image', () => {
    for (const seed of [3, 4]) {
      const am = syntheticImage(300, 300, [], { noise: 0.05, amorphous: 0.05, seed });
      expect(detectSheets(am).sheets).toEqual([]);
    }
  });
  it('skips the exclusion box', () => {
    const ex = detectSheets(img, { exclude: [250, 250, 170, 170] });
    expect(ex.sheets.some((s) => s.centerPx[0] > 250 && s.centerPx[1] > 250)).toBe(false);
    expect(ex.sheets.length).toBe(truth.length - 1);
  });
  it('statistics leave out rejected sheets', () => {
    const sheets = r.sheets.map((s, i) => ({ ...s, status: i === 0 ? ('rejected' as const) : ('accepted' as const) }));
    const st = sheetStatistics(sheets, { acceptedOnly: true });
    expect(st.n).toBe(truth.length - 1);
    expect(st.thicknessNm).toBeNull();
    expect(st.layers!.n).toBe(truth.length - 1);
  });
  it('rejects bad options by name', () => {
    expect(() => detectSheets(img, { coherenceThreshold: 2 })).toThrow(/coherenceThreshold/);
    expect(() => detectSheets(img, { exclude: [0, 0, -1, 5] })).toThrow(/exclude/);
  });
});
