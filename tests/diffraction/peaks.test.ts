import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { snipBackground } from '../../src/diffraction/background';
import { parsePattern } from '../../src/diffraction/pattern';
import { fitPattern } from '../../src/diffraction/peaks';
import { savitzkyGolay } from '../../src/diffraction/smooth';
import { crowdedStretch, syntheticPattern } from '../../testing/synthetic/diffraction-pattern';

const FIXTURE = 'tests/fixtures/reference-data/xrd-powder_propylammonium-chloride_CuKa12_COD1516218_2theta-counts.xy';

describe('Savitzky–Golay and SNIP', () => {
  test('Savitzky–Golay 5-point quadratic weights are (−3, 12, 17, 12, −3)/35 (Savitzky & Golay 1964, Table I)', () => {
    const y = [0, 0, 0, 0, 1, 0, 0, 0, 0];
    const s = savitzkyGolay(y, { halfWindow: 2, order: 2 });
    expect(s[4]).toBeCloseTo(17 / 35, 12);
    expect(s[3]).toBeCloseTo(12 / 35, 12);
    expect(s[2]).toBeCloseTo(-3 / 35, 12);
  });
  test('a quadratic is reproduced exactly, ends included (least-squares property)', () => {
    const y = Array.from({ length: 30 }, (_, i) => 3 + 0.5 * i - 0.02 * i * i);
    const s = savitzkyGolay(y, { halfWindow: 4, order: 2 });
    for (let i = 0; i < y.length; i++) expect(s[i]).toBeCloseTo(y[i], 9);
  });
  test('SNIP recovers a smooth background under narrow peaks (synthetic truth)', () => {
    const p = syntheticPattern([{ twoThetaDeg: 20, area: 200, fwhmDeg: 0.15, eta: 0.5 }], { seed: null, rangeDeg: [10, 30], ka2Nm: null });
    const bg = snipBackground(p.y, { iterations: 30 });
    const truth = (t: number) => 200 + 2000 * Math.exp(-t / 4);
    const i = Math.round((20 - 10) / 0.02);
    expect(Math.abs(bg[i] - truth(20)) / truth(20)).toBeLessThan(0.05);
    for (let k = 0; k < bg.length; k++) expect(bg[k]).toBeLessThanOrEqual(p.y[k]);
    expect(() => snipBackground([1, 2, 3], { iterations: 0 })).toThrow(/0/);
  });
});

describe('fitPattern on synthetic Kα doublets (known truth)', () => {
  const truth = [
    { twoThetaDeg: 8.84, area: 300, fwhmDeg: 0.25, eta: 0.5 },
    { twoThetaDeg: 26.75, area: 150, fwhmDeg: 0.2, eta: 0.3 },
    { twoThetaDeg: 45.35, area: 80, fwhmDeg: 0.22, eta: 0.6 },
  ];
  const p = syntheticPattern(truth, { seed: 7 });
  const fit = fitPattern(p);
  test('every reflection is found once, Kα2 companions are not reported as peaks', () => {
    expect(fit.peaks.length).toBe(3);
    for (const q of fit.peaks) expect(q.ka2).toBe(true);
  });
  test.each(truth.map((t, i) => [i, t] as const))('peak %i: position, FWHM and area agree with the truth within 4σ', (_, t) => {
    const q = fit.peaks.find((k) => Math.abs(k.twoThetaDeg! - t.twoThetaDeg) < 0.1)!;
    expect(q).toBeDefined();
    expect(Math.abs(q.twoThetaDeg! - t.twoThetaDeg)).toBeLessThan(4 * q.twoThetaUncDeg! + 1e-4);
    expect(Math.abs(q.fwhmDeg! - t.fwhmDeg)).toBeLessThan(4 * q.fwhmUncDeg! + 0.002);
    expect(Math.abs(q.area - t.area)).toBeLessThan(4 * q.areaUnc + 0.01 * t.area);
    expect(q.twoThetaUncDeg!).toBeGreaterThan(0);
  });
});

describe('fitPattern on the measured propylammonium chloride pattern (SOURCES.md §2)', () => {
  const p = parsePattern(readFileSync(FIXTURE, 'utf8'));
  test('001 fitted near 11.94–11.98° 2θ; 002 and 003 found near 24.0° and 36.4°', { timeout: 60000 }, () => {
    const fit = fitPattern(p);
    const near = (t: number) => fit.peaks.find((k) => Math.abs(k.twoThetaDeg! - t) < 0.15);
    // calculated Kα1 positions 11.941, 24.015, 36.366° from c = 7.40545 Å (SOURCES.md §2); the raw
    // maxima sit 0.02–0.07° higher (zero offset)
    const p001 = near(11.96)!;
    expect(p001.twoThetaDeg!).toBeGreaterThan(11.94);
    expect(p001.twoThetaDeg!).toBeLessThan(11.98);
    expect(Math.abs(p001.dNm - 0.740545) / 0.740545).toBeLessThan(0.005);
    expect(near(24.04)).toBeDefined();
    expect(near(36.42)).toBeDefined();
    expect(p001.ka2).toBe(true);
  });
});

describe('Scherrer crystallite size', () => {
  test('computed case: K 0.9, λ 0.15406 nm, 2θ 30°, β 0.5° → D = 0.9·0.15406/(0.5·π/180·cos 15°) = 16.45 nm (computed)', async () => {
    const { scherrerSize } = await import('../../src/diffraction/scherrer');
    const r = scherrerSize(0.5, 30, 0.15406);
    expect(r.sizeNm!).toBeCloseTo(16.45, 2);
    expect(r.method).toMatch(/K = 0.9/);
  });
  test('instrument correction: Gaussian quadratic √(0.5² − 0.3²) = 0.4°, Lorentzian linear 0.2° (Warren 1969 rules, from memory)', async () => {
    const { scherrerSize } = await import('../../src/diffraction/scherrer');
    expect(scherrerSize(0.5, 30, 0.15406, { instrumentFwhmDeg: 0.3 }).sampleFwhmDeg).toBeCloseTo(0.4, 12);
    const l = scherrerSize(0.5, 30, 0.15406, { instrumentFwhmDeg: 0.3, correction: 'lorentzian' });
    expect(l.sampleFwhmDeg).toBeCloseTo(0.2, 12);
    expect(l.sizeNm!).toBeCloseTo(16.45 * 2.5, 1);
    const none = scherrerSize(0.3, 30, 0.15406, { instrumentFwhmDeg: 0.3 });
    expect(none.sizeNm).toBeNull();
    expect(none.warnings.join()).toMatch(/not resolvable/);
    expect(() => scherrerSize(0.3, 30, 0.15406, { k: -1 })).toThrow(/-1/);
  });
  test('a synthetic 0.25° doublet at 8.84° gives K λ/(β cos θ) back through the fit (synthetic truth)', async () => {
    const { scherrerSize } = await import('../../src/diffraction/scherrer');
    const p = syntheticPattern([{ twoThetaDeg: 8.84, area: 300, fwhmDeg: 0.25, eta: 0.5 }], { seed: 3, rangeDeg: [4, 14] });
    const q = fitPattern(p).peaks[0];
    const trueSize = scherrerSize(0.25, 8.84, p.wavelengthNm!).sizeNm!;
    const got = scherrerSize(q.fwhmDeg!, q.twoThetaDeg!, p.wavelengthNm!, { fwhmUncDeg: q.fwhmUncDeg! });
    expect(Math.abs(got.sizeNm! - trueSize)).toBeLessThan(4 * got.sizeUncNm! + 0.5);
  });
  test('Caglioti instrument function reproduces an exact U, V, W (Caglioti et al. 1958 form)', async () => {
    const { instrumentFunction } = await import('../../src/diffraction/scherrer');
    const f = (tt: number) => {
      const t = Math.tan((tt * Math.PI) / 360);
      return Math.sqrt(0.004 * t * t - 0.002 * t + 0.003);
    };
    const inst = instrumentFunction([20, 40, 60, 80].map((t) => ({ twoThetaDeg: t, fwhmDeg: f(t) })));
    expect(inst.u).toBeCloseTo(0.004, 8);
    expect(inst.fwhmAt(50)).toBeCloseTo(f(50), 8);
  });
});

describe('fitPattern keeps only real peaks (synthetic truth)', () => {
  test('a broad amorphous halo is background: no peak on it, the halo is reported (common practice: a polymer halo near 20° 2θ)', () => {
    const p = syntheticPattern([{ twoThetaDeg: 7.07, area: 1500, fwhmDeg: 0.9, eta: 0.5 }], { rangeDeg: [3, 40], halos: [{ centerDeg: 19.6, fwhmDeg: 8.5, height: 400 }], seed: 11 });
    const fit = fitPattern(p);
    expect(fit.peaks.filter((q) => Math.abs(q.twoThetaDeg! - 19.6) < 8).length).toBe(0);
    expect(fit.halos.length).toBeGreaterThan(0);
    expect(Math.abs(fit.halos[0].position - 19.6)).toBeLessThan(1.5);
    expect(fit.peaks.length).toBe(1);
  });
  test('pure counting noise gives a false peak in at most a few of 40 patterns (stated rate 1 %; binomial, common practice)', () => {
    let falsePatterns = 0;
    for (let seed = 1; seed <= 40; seed++) {
      const fit = fitPattern(syntheticPattern([], { rangeDeg: [10, 50], seed }));
      if (fit.peaks.length > 0) falsePatterns++;
      expect(fit.test.statement).toMatch(/false-alarm probability 1\.0 %/);
    }
    // with a true rate of 1 %, P(≥ 3 of 40) ≈ 0.8 %
    expect(falsePatterns).toBeLessThan(3);
  });
  test('a weak line (5 % area) 0.35° beside a strong one is found, fitted in the same group', () => {
    const truth = [
      { twoThetaDeg: 38.2, area: 2000, fwhmDeg: 0.2, eta: 0.5 },
      { twoThetaDeg: 38.55, area: 100, fwhmDeg: 0.2, eta: 0.5 },
    ];
    const fit = fitPattern(syntheticPattern(truth, { rangeDeg: [30, 46], ka2Nm: null, background: { a: 100, b: 0, c: 1 }, seed: 3 }));
    const weak = fit.peaks.find((q) => Math.abs(q.twoThetaDeg! - 38.55) < 0.05);
    const strong = fit.peaks.find((q) => Math.abs(q.twoThetaDeg! - 38.2) < 0.05);
    expect(weak).toBeDefined();
    expect(strong).toBeDefined();
    expect(weak!.group).toBe(strong!.group);
    expect(fit.peaks.length).toBe(2);
  });
  test('an asymmetric (hk) band of turbostratic layers is a band, not a peak (Warren, Phys. Rev. 59, 693, 1941)', () => {
    const bandAt = 19.76; // d = 0.449 nm, the (02,11) band of smectites (common practice)
    const p = syntheticPattern([{ twoThetaDeg: 7.07, area: 600, fwhmDeg: 1, eta: 0.5 }, { twoThetaDeg: bandAt, area: 700, fwhmDeg: 1, eta: 0, kind: 'band', bandLaNm: 8 }], { rangeDeg: [3, 45], seed: 4 });
    const fit = fitPattern(p);
    const band = fit.peaks.find((q) => q.kind === 'band');
    expect(band).toBeDefined();
    expect(band!.twoThetaDeg!).toBeGreaterThan(bandAt - 1);
    expect(band!.twoThetaDeg!).toBeLessThan(bandAt + 2);
    expect(band!.asymmetry).toBeGreaterThanOrEqual(2);
    expect(fit.peaks.find((q) => Math.abs(q.twoThetaDeg! - 7.07) < 0.2)!.kind).toBe('peak');
  });
});

describe('a basal line on the tail of an (hk) band (synthetic truth)', () => {
  // a smectite of d001 1.25 nm (one water layer, reference-values §3): 003 at d 0.4167 nm lies 1.5° above
  // the (02,11) band's sharp low-angle edge at d 0.449 nm (common practice). Fitted alone the two read as
  // one broad symmetric line, or as two bands (the band's tail under the line makes it look asymmetric)
  test.each([1, 2, 3, 4, 5, 6, 7, 8])('seed %i: the 003 is a line of its own, near its place, and the band no line', (seed) => {
    const tt003 = 21.307;
    const p = syntheticPattern([{ twoThetaDeg: 7.066, area: 600, fwhmDeg: 1, eta: 0.9 }, { twoThetaDeg: 14.159, area: 72, fwhmDeg: 1, eta: 0.9 }, { twoThetaDeg: 19.76, area: 720, fwhmDeg: 1, eta: 0, kind: 'band', bandLaNm: 8 }, { twoThetaDeg: tt003, area: 108, fwhmDeg: 1.03, eta: 0.9 }], { rangeDeg: [3, 45], seed });
    const fit = fitPattern(p);
    // nothing fitted between the band's edge and the line is reported as a line
    expect(fit.peaks.filter((q) => q.kind === 'peak' && q.twoThetaDeg! > 19 && q.twoThetaDeg! < tt003 - 0.3)).toHaveLength(0);
    const line = fit.peaks.filter((q) => q.kind === 'peak' && Math.abs(q.twoThetaDeg! - tt003) < 0.3);
    expect(line, fit.peaks.map((q) => `${q.kind} ${q.twoThetaDeg!.toFixed(2)}`).join(', ')).toHaveLength(1);
  });
});

describe('the width trend of a pattern with few strong lines (seeded synthetic truth)', () => {
  // the benchmark's fcc metal at low counts (testing/synthetic/xrd-scenarios.ts, seed 7): three strong
  // lines set the trend. Held at their median width, the trend made the 422 at 137.46° (FWHM 0.84°,
  // size broadening grows as 1/cos θ) look twice too broad, and it was cut into two lines at the trend's
  // width; the size-and-strain form w² = a + b·tan²θ fitted to the three follows it (Caglioti et al.,
  // Nucl. Instrum. 3, 223, 1958, its U and W terms)
  test('two Lorentzian-like lines 0.28° apart fitted as one flat-topped Gaussian are tried as two, and found (the benchmark\'s tetragonal pattern with a zero shift, seed 7: 322 and 400)', async () => {
    const { diffractionScenarios } = await import('../../testing/synthetic/xrd-scenarios');
    const sc = diffractionScenarios(7).find((s) => s.name === 'tetragonal, zero shift +0.04°')!;
    const fit = fitPattern(parsePattern(sc.text));
    for (const tt of [58.647, 58.927]) {
      const near = fit.peaks.filter((p) => Math.abs(p.twoThetaDeg! - sc.zeroShiftDeg - tt) < 0.3 * 0.218 + 0.02);
      expect(near.map((p) => p.twoThetaDeg!.toFixed(3)), `line at ${tt}°`).toHaveLength(1);
    }
  }, 120000);
  test('a broad high-angle line is one line', async () => {
    const { diffractionScenarios } = await import('../../testing/synthetic/xrd-scenarios');
    const sc = diffractionScenarios(7).find((s) => s.name === 'strong noise, fcc')!;
    const fit = fitPattern(parsePattern(sc.text));
    const near = fit.peaks.filter((p) => Math.abs(p.twoThetaDeg! - 137.46) < 0.6);
    expect(near.map((p) => p.twoThetaDeg!.toFixed(2))).toHaveLength(1);
  }, 120000);
});

describe('fitPattern in a crowded stretch (synthetic truth)', () => {
  // 12 overlapping lines 0.4° apart (FWHM 0.12°) and a weak one (0.3 × the typical area) between
  // two of them: more than the 8 members fitted together, so the stretch is fitted in windows with
  // the neighbouring windows' lines held fixed (common practice in whole-pattern profile fitting)
  test.each([1, 2, 3])('seed %i: every line found, the weak one too, nothing spurious', (seed) => {
    const { peaks, weakDeg } = crowdedStretch({ seed });
    const p = syntheticPattern(peaks, { rangeDeg: [27, 38], ka2Nm: null, background: { a: 100, b: 0, c: 1 }, seed });
    const fit = fitPattern(p);
    const near = (t: number) => fit.peaks.filter((q) => Math.abs(q.twoThetaDeg! - t) < 0.05);
    for (const t of peaks) expect(near(t.twoThetaDeg), `line at ${t.twoThetaDeg.toFixed(2)}°`).toHaveLength(1);
    expect(near(weakDeg)).toHaveLength(1);
    expect(fit.peaks).toHaveLength(peaks.length);
  });
});

describe('fitPattern with lines of two breadths (synthetic truth)', () => {
  // six sharp lines (FWHM 0.15°, the width trend) and one broad line (FWHM 0.95°, a clay order of a
  // few-nm stack) well clear of them: a broad line taken for two narrow ones at the trend's width
  // would leave most of its area to the background (common practice: a split conserves intensity)
  test.each([1, 2, 3, 4, 5, 6])('seed %i: the broad line is one line with its own breadth', (seed) => {
    const narrow = [16, 22, 28, 36, 42, 48].map((t) => ({ twoThetaDeg: t, area: 250, fwhmDeg: 0.15, eta: 0.9 }));
    const p = syntheticPattern([...narrow, { twoThetaDeg: 31.8, area: 120, fwhmDeg: 0.95, eta: 1 }], { rangeDeg: [12, 52], ka2Nm: null, seed });
    const fit = fitPattern(p);
    const near = fit.peaks.filter((q) => Math.abs(q.twoThetaDeg! - 31.8) < 1.2);
    expect(near).toHaveLength(1);
    expect(near[0].fwhmDeg!).toBeGreaterThan(0.6);
    expect(Math.abs(near[0].area / 120 - 1)).toBeLessThan(0.4);
  });
  // weak Lorentzian lines (a tenth of the strong ones' area) between strong ones of the same shape:
  // free, a weak line's η is barely determined and wanders, taking its width (and its size) along
  test('weak lines of the strong lines\' shape keep a measured width, within 35 % of the drawn one', () => {
    let measured = 0;
    const errs: number[] = [];
    for (let seed = 1; seed <= 8; seed++) {
      const strong = [16, 24, 32, 40, 48].map((t) => ({ twoThetaDeg: t, area: 300, fwhmDeg: 0.2, eta: 0.95 }));
      const weak = [20, 28, 36, 44].map((t) => ({ twoThetaDeg: t, area: 25, fwhmDeg: 0.2, eta: 0.95 }));
      const fit = fitPattern(syntheticPattern([...strong, ...weak], { rangeDeg: [12, 52], ka2Nm: null, seed }));
      for (const w of weak) {
        const q = fit.peaks.find((k) => Math.abs(k.twoThetaDeg! - w.twoThetaDeg) < 0.08);
        if (!q || !(q.fwhmUncDeg! > 0)) continue;
        measured++;
        errs.push(Math.abs(q.fwhmDeg! / 0.2 - 1));
      }
    }
    expect(measured).toBeGreaterThanOrEqual(30); // of 32
    expect(Math.max(...errs)).toBeLessThan(0.35);
  });
});

describe('fitPattern on a crowded two-phase pattern (seeded synthetic truth)', () => {
  // the benchmark's hexagonal + tetragonal mixture (testing/synthetic/xrd-scenarios.ts, seed 1), many
  // lines overlapping: with the residual searched at the group's typical width alone (no broader
  // matched filters) a line at 70.7° was fitted that matches no drawn line
  test('every fitted peak lies within half its FWHM of a drawn line', async () => {
    const { diffractionScenarios } = await import('../../testing/synthetic/xrd-scenarios');
    const sc = diffractionScenarios(1).find((s) => s.name === 'two phases: hexagonal + tetragonal')!;
    const fit = fitPattern(parsePattern(sc.text));
    const stray = fit.peaks.filter((p) => !sc.peaks.some((t) => Math.abs(p.twoThetaDeg! - sc.zeroShiftDeg - t.twoThetaDeg) < Math.max(0.5 * p.fwhmDeg!, 0.3 * t.fwhmDeg + 0.02)));
    expect(stray.map((p) => p.twoThetaDeg!.toFixed(3))).toEqual([]);
  }, 120000);
});

describe('fitPattern with sharp lines on an (hk) band\'s tail (seeded synthetic truth)', () => {
  // the benchmark's smectite + hexagonal phase on a halo (testing/synthetic/xrd-scenarios.ts, seed 13):
  // the (02,11) band near 62° with the hexagonal lines on its high-angle tail up to the range's end.
  // The last pass's background, taken with nearly all of 60–70° masked by peak cores, rose above
  // the data there; on it the window's fit lost every line's significance at once, gave its lines
  // up one by one and narrow pieces took the band's place (3 stray peaks, 3 lines lost)
  test('the lines on the tail are found and at most one fitted peak matches no drawn line', async () => {
    const { diffractionScenarios } = await import('../../testing/synthetic/xrd-scenarios');
    const sc = diffractionScenarios(13).find((s) => s.name === 'smectite + quartz-like hexagonal on halo')!;
    const fit = fitPattern(parsePattern(sc.text));
    const matches = (p: (typeof fit.peaks)[number], t: (typeof sc.peaks)[number]) =>
      t.kind === 'band' ? Math.abs(p.twoThetaDeg! - t.twoThetaDeg - 0.3) < 1 : Math.abs(p.twoThetaDeg! - t.twoThetaDeg) < Math.max(0.5 * p.fwhmDeg!, 0.3 * t.fwhmDeg + 0.02);
    const stray = fit.peaks.filter((p) => !sc.peaks.some((t) => matches(p, t)));
    expect(stray.length, `stray: ${stray.map((p) => p.twoThetaDeg!.toFixed(2)).join(', ')}`).toBeLessThanOrEqual(1);
    const tail = sc.peaks.filter((t) => t.findable && t.kind !== 'band' && t.twoThetaDeg > 63);
    expect(tail.length).toBeGreaterThanOrEqual(3);
    for (const t of tail) expect(fit.peaks.filter((p) => Math.abs(p.twoThetaDeg! - t.twoThetaDeg) < 0.3 * t.fwhmDeg + 0.02), `line at ${t.twoThetaDeg.toFixed(2)}°`).toHaveLength(1);
  }, 120000);
});

describe('fitPattern under a long crowded stretch of Lorentzian-like lines (seeded synthetic truth)', () => {
  // 16–17 lines of η 0.94 and FWHM 0.18° (Kα1 + Kα2), 0.55–0.9° apart over 12°, on a flat
  // background of 150 counts: between such lines the data never come down to the background, and
  // the lines' Lorentzian tails and the background trade off. Three passes left the background up to
  // 87 counts (7 σ of a point) high under the stretch, which took the tails with it: η down to 0.49,
  // the median 0.84 (the drawn 0.94), the FWHM too large and the Scherrer size too small.
  test('the background under the stretch within 3 σ of a point and the strong lines\' median η within 0.06 of the drawn one, on six seeds', async () => {
    const { seededRandom } = await import('../../testing/synthetic/diffraction-pattern');
    const etas: number[] = [];
    for (const seed of [1, 2, 3, 4, 5, 6]) {
      const rnd = seededRandom(seed * 17);
      const lines: Array<{ twoThetaDeg: number; area: number; fwhmDeg: number; eta: number }> = [];
      for (let t = 40; t < 52; t += 0.55 + 0.35 * rnd()) lines.push({ twoThetaDeg: t, area: 60 + 180 * rnd(), fwhmDeg: 0.18, eta: 0.94 });
      const p = syntheticPattern(lines, { rangeDeg: [30, 62], background: { a: 150, b: 0, c: 1 }, seed });
      const fit = fitPattern(p);
      let worst = 0;
      for (let i = 0; i < p.x.length; i++) if (p.x[i] > 41 && p.x[i] < 51) worst = Math.max(worst, Math.abs(fit.background[i] - 150));
      expect(worst, `seed ${seed}: background error under the stretch, counts`).toBeLessThan(3 * Math.sqrt(150));
      for (const l of lines) {
        const q = fit.peaks.find((k) => Math.abs(k.twoThetaDeg! - l.twoThetaDeg) < 0.05);
        if (q && l.area > 120) etas.push(q.eta);
      }
    }
    etas.sort((a, b) => a - b);
    expect(etas.length).toBeGreaterThan(30);
    expect(Math.abs(etas[etas.length >> 1] - 0.94)).toBeLessThan(0.06);
  }, 240000);
});
