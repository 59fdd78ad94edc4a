import { describe, expect, it } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';
import { fringeRegionAxes } from '../../src/sheets/fringe-regions';
import { axialDifferenceDeg } from '../../src/sheets/structure-tensor';
import { gaussian, rng } from '../../testing/random';

const DEG = Math.PI / 180;

interface Band { cx: number; cy: number; directionDeg: number; lengthPx: number; layers: number; periodPx: number }

/**
 * Phase-contrast stacks: cosine fringes across bands that do not darken the film (the case that
 * scale-space ridges miss), on white noise of the given standard deviation (fringe amplitude 1).
 */
function fringeImage(size: number, bands: Band[], noiseSd: number, seed: number) {
  const g = gaussian(rng(seed));
  const data = new Float32Array(size * size);
  for (let y = 0; y < size; y++) {
    for (let x = 0; x < size; x++) {
      let v = 100 + noiseSd * g();
      for (const b of bands) {
        const tx = Math.cos(b.directionDeg * DEG);
        const ty = -Math.sin(b.directionDeg * DEG);
        const s = (x - b.cx) * tx + (y - b.cy) * ty;
        const u = -(x - b.cx) * ty + (y - b.cy) * tx;
        if (Math.abs(s) <= b.lengthPx / 2 && Math.abs(u) <= (b.layers * b.periodPx) / 2) v -= Math.cos((2 * Math.PI * (u + (b.layers * b.periodPx) / 2 - b.periodPx / 2)) / b.periodPx);
      }
      data[y * size + x] = v;
    }
  }
  return makeGreyImage(size, size, data);
}

function directionOf(points: [number, number][]): number {
  const a = points[0];
  const b = points[points.length - 1];
  return (((Math.atan2(-(b[1] - a[1]), b[0] - a[0]) / DEG) % 180) + 180) % 180;
}

/** Distance of a point from a band's centre line, px. */
function offAxis(p: [number, number], b: Band): number {
  const tx = Math.cos(b.directionDeg * DEG);
  const ty = -Math.sin(b.directionDeg * DEG);
  return Math.abs(-(p[0] - b.cx) * ty + (p[1] - b.cy) * tx);
}

describe('fringeRegionAxes (candidates from coherent fringe energy)', () => {
  it('traces a faint fringe stack that does not darken the film along its length and centre line', () => {
    // common practice: a band of 6 fringes, amplitude 1 against noise sd 2 per px
    const band: Band = { cx: 130, cy: 120, directionDeg: 28, lengthPx: 160, layers: 6, periodPx: 5 };
    const axes = fringeRegionAxes(fringeImage(256, [band], 2, 7), 5);
    expect(axes.length).toBeGreaterThan(0);
    const a = axes[0];
    expect(axialDifferenceDeg(directionOf(a.points), band.directionDeg)).toBeLessThan(3);
    for (const p of a.points) expect(offAxis(p, band)).toBeLessThan(3);
    expect(a.lengthPx).toBeGreaterThan(0.7 * band.lengthPx);
    expect(a.lengthPx).toBeLessThan(1.15 * band.lengthPx);
    // the first width guess of a survey spans the band
    expect(2.45 * a.scalePx).toBeGreaterThan(0.7 * band.layers * band.periodPx);
  });

  it('keeps two crossing stacks apart, each with its own direction', () => {
    const bands: Band[] = [
      { cx: 128, cy: 128, directionDeg: 10, lengthPx: 180, layers: 5, periodPx: 6 },
      { cx: 128, cy: 128, directionDeg: 100, lengthPx: 180, layers: 5, periodPx: 6 },
    ];
    const axes = fringeRegionAxes(fringeImage(256, bands, 1.5, 11), 6);
    for (const b of bands) {
      const along = axes.filter((a) => axialDifferenceDeg(directionOf(a.points), b.directionDeg) < 5 && a.lengthPx > 50);
      expect(along.length).toBeGreaterThan(0);
    }
    // no region runs across both (a direction between them)
    for (const a of axes.filter((q) => q.lengthPx > 50)) {
      const d = Math.min(axialDifferenceDeg(directionOf(a.points), 10), axialDifferenceDeg(directionOf(a.points), 100));
      expect(d).toBeLessThan(10);
    }
  });

  it('finds no long region in white noise', () => {
    const axes = fringeRegionAxes(fringeImage(256, [], 2.5, 3), 5);
    expect(axes.filter((a) => a.lengthPx > 40)).toEqual([]);
  });

  it('rejects a period below the countable limit and a bad tolerance', () => {
    const img = fringeImage(64, [], 1, 1);
    expect(() => fringeRegionAxes(img, 2)).toThrow(/periodPx must be ≥ 2.5/);
    expect(() => fringeRegionAxes(img, 5, { maxTurnDeg: 95 })).toThrow(/maxTurnDeg/);
  });
});
