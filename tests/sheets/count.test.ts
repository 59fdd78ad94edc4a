import { describe, expect, it } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';
import { combNearPeriod, secondFringeSetFills } from '../../src/sheets/count';
import { axisFrame, fitLayerComb, type AcrossProfile } from '../../src/sheets/stack-profile';
import { gauss, rng, syntheticProfile } from '../../testing/synthetic/stacks';

/** A profile across a stack of `layers` dark lines at `periodPx`, sampled every 0.5 px (synthetic truth, testing/synthetic/stacks.ts). */
function stackProfile(layers: number, periodPx: number, noise: number): AcrossProfile {
  const bins = 281;
  // syntheticProfile works in samples: a period of 2·periodPx samples is periodPx at 0.5 px per bin
  const values = syntheticProfile(bins, [{ layers, periodPx: 2 * periodPx, firstPx: 140 - (layers - 1) * periodPx }], { depth: 0.15, noise, seed: 3 });
  return { startPx: -70, binPx: 0.5, values, weights: new Float64Array(bins).fill(10), lengthPx: 100 };
}

describe('combNearPeriod', () => {
  it('fits a thick stack whose period the image read 4 % high, which the comb at that period miscounts and calls faint', () => {
    // 20 layers at 2.7 px; the image's period 2.81 px (+4 %: the periodograms read a few per cent
    // high near the 2.5 px limit, bench:sheets B) puts the last line 0.8 period out of phase
    const p = stackProfile(20, 2.7, 0.05);
    const band = { fromPx: -27, toPx: 27 };
    const atEstimate = fitLayerComb(p, 2.81, band, { countReach: 3 })!;
    expect(atEstimate.layers === 20 && atEstimate.evidence >= 60).toBe(false);
    const near = combNearPeriod(p, band, 2.81)!;
    expect(near.fit.layers).toBe(20);
    expect(Math.abs(near.periodPx - 2.7) / 2.7).toBeLessThan(0.01);
    expect(near.fit.evidence).toBeGreaterThanOrEqual(60);
  });
  it('finds nothing on a profile without a stack (noise only)', () => {
    const p = stackProfile(0, 2.7, 0.05);
    expect(combNearPeriod(p, { fromPx: -27, toPx: 27 }, 2.81)).toBeNull();
  });
  it('rejects bad arguments by name', () => {
    const p = stackProfile(5, 4, 0.01);
    expect(() => combNearPeriod(p, { fromPx: -10, toPx: 10 }, NaN)).toThrow(/periodPx/);
    expect(() => combNearPeriod(p, { fromPx: -10, toPx: 10 }, 4, { stepsRel: [0.7] })).toThrow(/stepsRel/);
  });
});

describe('fitLayerComb', () => {
  it('gives the same fit on a profile whose level is large (its residual sum does not cancel against the level)', () => {
    // summed frames: the stack's contrast sits on a level of 10⁶ counts; the model has a constant
    // term, so the comb's residual sums must not depend on the level (common practice: least
    // squares on centred data, Golub & Van Loan, Matrix Computations, §5.3); before, 8·10⁻⁷ apart
    const p = stackProfile(9, 4, 1e-5);
    const low: AcrossProfile = { ...p, values: Float64Array.from(p.values, (v) => 3e4 * v) };
    const high: AcrossProfile = { ...p, values: Float64Array.from(p.values, (v) => 3e4 * v + 1e6) };
    const band = { fromPx: -18, toPx: 18 };
    const a = fitLayerComb(low, 4, band)!;
    const b = fitLayerComb(high, 4, band)!;
    expect(a.layers).toBe(9);
    expect(b.layers).toBe(9);
    expect(Math.abs(a.rss / b.rss - 1)).toBeLessThan(1e-9);
    expect(Math.abs(a.rssFewer / b.rssFewer - 1)).toBeLessThan(1e-9);
  });
  it('fits one narrow line in a band read as two periods wide with its own line width (monolayer in film texture)', () => {
    // one dark line, σ 1.2 px (0.27 of the 4.5 px period), depth 0.3 on a background of 1 with a
    // film-texture bump beside it and noise 0.01 (synthetic truth; as a monolayer of seed 19's thin
    // overview, bench:sheets B): its band, 7.6 px wide, is read as two layers, and the line width
    // chosen for two lines (2.2 px) was kept for one, whose misfit left it evidence 25 of 1000 or more
    const r = rng(5);
    const bins = 97;
    const values = new Float64Array(bins);
    for (let i = 0; i < bins; i++) {
      const u = -24 + 0.5 * i;
      values[i] = 1 - 0.3 * Math.exp(-0.5 * (u / 1.2) ** 2) + 0.03 * Math.exp(-0.5 * ((u + 9) / 2.5) ** 2) - 0.02 * Math.exp(-0.5 * ((u - 7) / 2.5) ** 2) + 0.01 * gauss(r);
    }
    const p: AcrossProfile = { startPx: -24, binPx: 0.5, values, weights: new Float64Array(bins).fill(1), lengthPx: 130 };
    const f = fitLayerComb(p, 4.5, { fromPx: -3.8, toPx: 3.8 }, { countReach: 3 })!;
    expect(f.layers).toBe(1);
    expect(Math.abs(f.lineSigmaPx - 1.2)).toBeLessThan(0.25);
    expect(Math.abs(f.depth - 0.3) / 0.3).toBeLessThan(0.1);
  });
});

/**
 * A 320 × 200 image of a band along x (centre row 100) of `layers` fringes at `periodPx`, with a
 * second fringe set at `crossDeg` between the normals, over the columns [from, to) (synthetic;
 * cosine fringes of contrast 0.2 and 0.15 on a level of 1, Gaussian noise σ 0.05).
 */
function crossedBand(periodPx: number, layers: number, crossDeg: number | null, from = 0, to = 320) {
  const w = 320;
  const h = 200;
  const data = new Float32Array(w * h);
  const r = rng(11);
  const half = (layers * periodPx) / 2;
  const th = ((crossDeg ?? 0) * Math.PI) / 180;
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const u = y - 100;
      let v = 1 + 0.05 * gauss(r);
      if (Math.abs(u) <= half) {
        v += 0.2 * Math.cos((2 * Math.PI * u) / periodPx);
        // the second set's normal at crossDeg from the band's normal (the y axis)
        if (crossDeg !== null && x >= from && x < to) v += 0.15 * Math.cos((2 * Math.PI * (u * Math.cos(th) + x * Math.sin(th))) / periodPx);
      }
      data[y * w + x] = v;
    }
  }
  const frame = axisFrame([[10, 100], [310, 100]]);
  return { image: makeGreyImage(w, h, data), frame, halfWidth: 0.35 * 2 * half };
}

describe('secondFringeSetFills', () => {
  // across-fringe power of the band's own fringes in the straight test's units (per sample 0.5 px
  // apart): the Hann-windowed periodogram's peak of a cosine of amplitude A over n samples is
  // (A·n/4)², so per sample A²·n/16, with A 0.2 and n = 160 samples across the 80 px band (an
  // estimate of its scale; the second set, amplitude 0.15, must carry a fifth of it)
  const acrossPower = 0.2 ** 2 * ((2 * 10 * 8) / 16);
  it('finds a second set at 60° that fills the band, which a straight average across the band washes out', () => {
    const b = crossedBand(8, 10, 60);
    // the angle is measured from the frame's normal, which points along +y or −y
    const inFrame = (deg: number) => (b.frame.normals[0][1] > 0 ? deg : 180 - deg);
    const set = secondFringeSetFills(b.image, b.frame, 0, b.halfWidth, 8, acrossPower);
    expect(set).not.toBeNull();
    expect(Math.abs(set!.crossingDeg - inFrame(60))).toBeLessThan(3);
    // along the axis the second set's period is d / sin φ
    expect(Math.abs(set!.alongPeriodPx * Math.sin((set!.crossingDeg * Math.PI) / 180) - 8)).toBeLessThan(0.4);
    const mirrored = crossedBand(8, 10, 125);
    const set2 = secondFringeSetFills(mirrored.image, mirrored.frame, 0, mirrored.halfWidth, 8, acrossPower);
    expect(Math.abs(set2!.crossingDeg - inFrame(125))).toBeLessThan(3);
  });
  it('finds none on a stack alone, nor on a stack crossed by another over a third of its length', () => {
    const alone = crossedBand(8, 10, null);
    expect(secondFringeSetFills(alone.image, alone.frame, 0, alone.halfWidth, 8, acrossPower)).toBeNull();
    const crossed = crossedBand(8, 10, 60, 120, 200);
    expect(secondFringeSetFills(crossed.image, crossed.frame, 0, crossed.halfWidth, 8, acrossPower)).toBeNull();
  });
  it('rejects bad arguments by name', () => {
    const b = crossedBand(8, 4, null);
    expect(() => secondFringeSetFills(b.image, b.frame, 0, 0, 8, acrossPower)).toThrow(/halfWidth/);
    expect(() => secondFringeSetFills(b.image, b.frame, 0, 10, NaN, acrossPower)).toThrow(/periodPx/);
    expect(() => secondFringeSetFills(b.image, b.frame, NaN, 10, 8, acrossPower)).toThrow(/centre/);
    expect(() => secondFringeSetFills(b.image, b.frame, 0, 10, 8, -1)).toThrow(/acrossPower/);
  });
});
