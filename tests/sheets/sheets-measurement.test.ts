import { describe, expect, it } from 'vitest';
import { detectSheets } from '../../src/sheets/detect';
import { sheetsAlongLine } from '../../src/sheets/line';
import { autoSheetsMeasurement, lineSheetsMeasurement } from '../../src/sheets/record';
import { syntheticImage } from '../../testing/synthetic/stacks';
import { expressPeriod } from '../../src/measure/measurement';

// Synthetic 4-layer sheet, period 8 px, calibrated at 0.25 nm/px ± 2 % (known truth).
const img = syntheticImage(200, 200, [{ layers: 4, periodPx: 8, cx: 100, cy: 100, angleDeg: 0, lengthPx: 120 }], { noise: 0.03, seed: 3 });
const cal = { nmPerPx: 0.25, source: 'manual' as const, relUncertainty: 0.02, detail: 'test' };
img.calibration = cal;

describe('sheet measurements as records', () => {
  it('line record: one periodicity per sheet, nm uncertainty includes the calibration', () => {
    const line = { x0: 40, y0: 100, x1: 160, y1: 100, widthPx: 9 };
    const r = sheetsAlongLine(img, line.x0, line.y0, line.x1, line.y1, { widthPx: 9 });
    const m = lineSheetsMeasurement(r, line, { id: 'm1', imageId: null, fileName: 'a.tif', calibration: cal });
    expect(m.tool).toBe('sheets-line');
    expect(m.region).toEqual({ kind: 'line', ...line });
    expect(m.periodicities).toHaveLength(1);
    const p = m.periodicities[0];
    const b = expressPeriod(p, m.calibration, 1);
    expect(b.value).toBeCloseTo(p.periodPx * 0.25, 12);
    // combined standard uncertainty ≥ the calibration part alone (GUM: root sum of squares)
    expect(b.combined).toBeGreaterThanOrEqual(b.value * 0.02 - 1e-12);
    const sheets = (m.detail as { sheets: { layers: number }[] }).sheets;
    expect(sheets[0].layers).toBe(4);
    expect(JSON.parse(JSON.stringify(m))).toEqual(m);
  });
  it('automatic record keeps status and outline', () => {
    const m = autoSheetsMeasurement(detectSheets(img), { id: 'm2', imageId: 'img-1', fileName: 'a.tif', calibration: cal });
    expect(m.tool).toBe('sheets-auto');
    const s = (m.detail as { sheets: { status: string; outlinePx: unknown[]; layers: number }[] }).sheets;
    expect(s).toHaveLength(1);
    expect(s[0].status).toBe('auto');
    expect(s[0].layers).toBe(4);
    expect(s[0].outlinePx.length).toBeGreaterThan(2);
  });
  it('rejects a context without id', () => {
    expect(() => autoSheetsMeasurement({ sheets: [], rejected: [], periods: [], candidates: 0, message: 'no stacks found', settings: {} }, { id: '', imageId: null, fileName: 'x', calibration: null })).toThrow(/ctx.id/);
  });
});
