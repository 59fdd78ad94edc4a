import { describe, expect, it } from 'vitest';
import { detectSheets } from '../../src/sheets/detect';
import { syntheticImage } from '../../testing/synthetic/stacks';
import { generateOverview, scoreOverview } from '../../testing/synthetic/overviews';
import { textureImage } from '../../testing/textures';

// Synthetic clay tactoids in a polymer film with known truth (testing/synthetic/stacks.ts).
describe('pieces far apart join only when their counts agree', () => {
  it('keeps a 5-layer and a 4-layer stack 100 px apart on one line as two stacks', () => {
    // two stacks at 8 px, 120 px long, on one line with 100 px of film between their ends
    // (synthetic truth): their pieces, counts one apart, were joined into one sheet 316 px long
    // counted 5 (positions 5, 5, 5, 4, 4, 4), and the 4-layer stack was lost
    const L = 120;
    const truth = [
      { layers: 5, periodPx: 8, cx: 80, cy: 130, angleDeg: 90, lengthPx: L },
      { layers: 4, periodPx: 8, cx: 80 + L + 100, cy: 130, angleDeg: 90, lengthPx: L },
    ];
    const img = syntheticImage(160 + L + 100, 260, truth, { noise: 0.05, amorphous: 0.05, seed: 3 });
    const res = detectSheets(img);
    expect(res.sheets).toHaveLength(2);
    for (const t of truth) {
      const s = res.sheets.find((q) => Math.abs(q.centerPx[0] - t.cx) < L / 4 && Math.abs(q.centerPx[1] - t.cy) < 8);
      expect(s, `the ${t.layers}-layer stack at (${t.cx}, ${t.cy})`).toBeDefined();
      expect(s!.layers).toBe(t.layers);
      expect(s!.lengthPx).toBeLessThan(L + 2 * t.periodPx);
    }
  });
});

describe('a band that yields no stack is measured again along its own fringes', () => {
  it('finds a 9-layer stack whose candidate ridge runs 11° off its layers (dense, 2.96 px)', () => {
    // a dense field at 2.96 px (synthetic truth, testing/synthetic/overviews.ts): the candidate on
    // the 9-layer stack at (303, 329), 57 px long, runs 11° off its layers, so the fringes average
    // out across it and no comb had the evidence (missed); projected on their own direction the
    // band's fringes carry about 500 times the power, and on that axis the stack is counted 9
    const o = generateOverview('dense', 24);
    const res = detectSheets(o.image);
    const sc = scoreOverview(o.truth.stacks, res.sheets);
    const i = o.truth.stacks.findIndex((t) => t.layers === 9 && Math.abs(t.cx - 303) < 2 && Math.abs(t.cy - 329) < 2);
    expect(i, 'a true 9-layer stack at (303, 329)').toBeGreaterThanOrEqual(0);
    expect(sc.matchOf[i], 'the stack is found').toBeGreaterThanOrEqual(0);
    const s = res.sheets[sc.matchOf[i]];
    expect(s.layers, 'its count').toBe(9);
    expect(Math.abs(s.periodPx - o.truth.stacks[i].periodPx) / o.truth.stacks[i].periodPx).toBeLessThan(0.03);
    expect(sc.spurious).toBeLessThanOrEqual(1);
  });
});

describe('a turned candidate adds only stacks that refine their own period', () => {
  // Real photograph of grass (CC0; tests/fixtures/textures/SOURCES.md), bright layers: no stacks.
  // A band measured along the best of its turned directions gave a 3-layer comb at the image's
  // period (36 px long, evidence 603), a fifth sheet beside the four the search gave before.
  it('adds no sheet on a real texture without stacks', () => {
    const img = textureImage('grass');
    const res = detectSheets(img, { polarity: 'bright' });
    expect(res.sheets.filter((s) => s.layers === 3)).toHaveLength(0);
    expect(res.sheets.length).toBeLessThanOrEqual(4);
  }, 60000);
});
