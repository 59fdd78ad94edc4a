import { describe, expect, test } from 'vitest';
import { simplifyPolyline } from '../../src/sheets/polyline';

/** Distance from a point to a segment (plane geometry, common practice). */
function toSegment(p: [number, number], a: [number, number], b: [number, number]): number {
  const dx = b[0] - a[0];
  const dy = b[1] - a[1];
  const len2 = dx * dx + dy * dy;
  const t = len2 > 0 ? Math.max(0, Math.min(1, ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2)) : 0;
  return Math.hypot(p[0] - a[0] - t * dx, p[1] - a[1] - t * dy);
}

// The definition of the method (Ramer 1972; Douglas & Peucker 1973): every dropped point lies
// within the tolerance of the kept polyline, the ends are kept, and a point farther than the
// tolerance from the chord of its stretch is kept.
describe('simplifyPolyline (Ramer–Douglas–Peucker)', () => {
  test('a straight axis sampled every pixel keeps its two ends', () => {
    const line = Array.from({ length: 400 }, (_, i) => [10 + 0.8 * i, 20 + 0.6 * i] as [number, number]);
    expect(simplifyPolyline(line, 0.1)).toEqual([line[0], line[399]]);
  });
  test('a right angle keeps its corner; a 0.3 px bump is dropped at 0.5 px and kept at 0.2 px', () => {
    const l: [number, number][] = [[0, 0], [5, 0], [10, 0], [10, 5], [10, 10]];
    expect(simplifyPolyline(l, 0.5)).toEqual([[0, 0], [10, 0], [10, 10]]);
    const bump: [number, number][] = [[0, 0], [5, 0.3], [10, 0]];
    expect(simplifyPolyline(bump, 0.5)).toEqual([[0, 0], [10, 0]]);
    expect(simplifyPolyline(bump, 0.2)).toEqual(bump);
  });
  test('a bent stack (an arc of radius 300 px over 90°, every px): every dropped point within the tolerance, far fewer points', () => {
    const arc = Array.from({ length: 472 }, (_, i) => { const a = (i / 471) * (Math.PI / 2); return [300 * Math.cos(a), 300 * Math.sin(a)] as [number, number]; });
    for (const tol of [0.05, 0.25, 1]) {
      const kept = simplifyPolyline(arc, tol);
      // a chord of an arc of radius R deviates from it by its sagitta R(1 − cos(θ/2)): at 0.05 px about 23 chords
      expect(kept.length).toBeLessThan(arc.length / 5);
      for (const p of arc) {
        const d = Math.min(...kept.slice(0, -1).map((a, k) => toSegment(p, a, kept[k + 1])));
        expect(d).toBeLessThanOrEqual(tol + 1e-9);
      }
    }
  });
  test('bad arguments are refused, naming the value', () => {
    expect(() => simplifyPolyline([[0, 0], [1, 1]], -1)).toThrow(/tolerancePx must be a finite number ≥ 0, got -1/);
    expect(() => simplifyPolyline([[0, 0], [NaN, 1], [2, 2]], 1)).toThrow(/point 1 \(NaN, 1\) is not finite/);
    expect(simplifyPolyline([[3, 4]], 1)).toEqual([[3, 4]]);
  });
});

describe('a sheet report keeps the outline its shape needs', () => {
  test('a straight stack 400 px long and 20 px thick: the search outline (800 points) becomes its four corners', async () => {
    const { sheetFromAuto, OUTLINE_TOLERANCE_PX } = await import('../../src/sheets/record');
    const side = (off: number) => Array.from({ length: 400 }, (_, i) => [100 + i, 200 + off] as [number, number]);
    const outline = [...side(-10), ...side(10).reverse()];
    const u = { statisticalPx: 0.1, localVariationPx: 0, methodPx: 0 };
    const r = sheetFromAuto({
      id: 's1', status: 'auto', layers: 4, thicknessPx: 20, uThicknessPx: u, edgeToEdgePx: 20, periodPx: 5, uPeriodPx: u, periodSource: 'image',
      angleDeg: 90, centerPx: [300, 200], axisPx: side(0), outlinePx: outline, lengthPx: 399, confidence: 1, evidence: 100, positions: [], notes: [],
    } as Parameters<typeof sheetFromAuto>[0]);
    expect(r.outlinePx).toEqual([[100, 190], [499, 190], [499, 210], [100, 210]]);
    expect(OUTLINE_TOLERANCE_PX).toBeLessThanOrEqual(0.5);
  });
});
