import { describe, expect, test } from 'vitest';
import { analysePattern } from '../../src/diffraction/analyse';
import { parsePattern } from '../../src/diffraction/pattern';
import { pseudoVoigt } from '../../src/diffraction/peaks';
import { seededRandom } from '../../testing/synthetic/diffraction-pattern';

/** A SAXS-like pattern in q (nm⁻¹) with a σ column: Gaussian noise of known σ (synthetic truth). */
function saxs(qs: number[], areas: number[], fwhmInvNm: number, seed: number): string {
  const rnd = seededRandom(seed);
  const rows: string[] = ['# q (nm^-1)  I  sigma'];
  for (let q = 0.3; q <= 6; q += 0.005) {
    let v = 50 + 400 * Math.exp(-q / 0.4);
    qs.forEach((c, i) => (v += areas[i] * pseudoVoigt(q - c, fwhmInvNm, 0.3)));
    const sigma = Math.sqrt(v);
    const g = Math.sqrt(-2 * Math.log(Math.max(rnd(), 1e-300))) * Math.cos(2 * Math.PI * rnd());
    rows.push(`${q.toFixed(4)} ${(v + sigma * g).toFixed(3)} ${sigma.toFixed(3)}`);
  }
  return rows.join('\n');
}

describe('analysePattern on q data (synthetic truth)', () => {
  test('a lamellar mesophase, period 4 nm: q₁ = 2π/4, orders 1–3, size D = 2πK/Δq', { timeout: 60000 }, () => {
    const q1 = (2 * Math.PI) / 4;
    const fwhm = 0.06;
    const a = analysePattern(parsePattern(saxs([q1, 2 * q1, 3 * q1], [60, 15, 6], fwhm, 11)));
    const lam = a.series.find((s) => s.kind === 'lamellar')!;
    expect(lam.members.map((m) => m.index)).toEqual(['001', '002', '003']);
    expect(Math.abs(lam.cellNm - 4)).toBeLessThan(4 * lam.cellUncNm + 0.002);
    const first = a.peaks.find((p) => Math.abs(p.qInvNm - q1) < 0.02)!;
    expect(first.twoThetaDeg).toBeNull(); // no wavelength given
    // D = 2πK/Δq = 2π·0.9/0.06 = 94.2 nm (computed)
    expect(Math.abs(first.crystalliteNm! - 94.25) / 94.25).toBeLessThan(0.1);
    expect(a.sizeMethod).toMatch(/2πK\/Δq/);
  });
  test('a 2D-hexagonal mesophase, d₁₀ = 8 nm: q ratios 1 : √3 : 2 : √7 and a₀ = 2·d₁₀/√3 (Hamley Table 1.1)', { timeout: 60000 }, () => {
    const q10 = (2 * Math.PI) / 8;
    const qs = [1, 3, 4, 7].map((n) => q10 * Math.sqrt(n));
    const a = analysePattern(parsePattern(saxs(qs, [80, 20, 12, 6], 0.03, 5)));
    const hex = a.series.find((s) => s.kind === 'hexagonal')!;
    expect(hex.members.map((m) => m.index)).toEqual(['10', '11', '20', '21']);
    expect(Math.abs(hex.cellNm - (2 * 8) / Math.sqrt(3)) / hex.cellNm).toBeLessThan(0.002);
  });
});

describe('analysePattern withholds sizes it cannot support', () => {
  test('every peak without a size has a FWHM at its bound or uncertain by more than half, and is noted (seeded synthetic clay pattern, a very weak 004 placed by the user)', async () => {
    const { syntheticPattern } = await import('../../testing/synthetic/diffraction-pattern');
    const { dToTwoTheta } = await import('../../src/diffraction/bragg');
    const cu = 0.154059292;
    const fw = (size: number, tt: number) => ((0.9 * cu) / (size * Math.cos((tt * Math.PI) / 360)) * 180) / Math.PI;
    const peaks = [1, 2, 3, 4].map((l, i) => {
      const tt = dToTwoTheta(1.25 / l, cu);
      return { twoThetaDeg: tt, area: [600, 80, 120, 8][i], fwhmDeg: fw(8, tt), eta: 0.6 };
    });
    const a = analysePattern(syntheticPattern(peaks, { rangeDeg: [3, 40], stepDeg: 0.02, background: { a: 300, b: 3000, c: 3, slope: -2 }, seed: 5 }), { positions: peaks.map((p) => p.twoThetaDeg) });
    const without = a.peaks.filter((p) => p.crystalliteNm === null);
    for (const p of without) expect(p.atBound.includes('fwhm') || p.fwhmUncInvNm > 0.5 * p.fwhmInvNm).toBe(true);
    for (const p of a.peaks.filter((q) => q.crystalliteNm !== null)) expect(p.fwhmUncInvNm).toBeLessThanOrEqual(0.5 * p.fwhmInvNm);
    expect(without.length).toBeGreaterThan(0); // the user-placed, very weak 004 (area 8) has no size
    expect(a.notes.join()).toMatch(/too poorly determined/);
    // the strong 001 keeps its size: 8 nm within 10 % (synthetic truth)
    const p001 = a.peaks.find((p) => Math.abs(p.twoThetaDeg! - 7.07) < 0.1)!;
    expect(Math.abs(p001.crystalliteNm! - 8) / 8).toBeLessThan(0.1);
  });
});

describe('analysePattern on the measured propylammonium chloride pattern (SOURCES.md §2)', () => {
  test('indexed as primitive tetragonal with the published cell (COD 1516218: a = 0.626428 nm, c = 0.740545 nm) within 0.05 %; d within twice its full budget of the published cell', async () => {
    const { readFileSync } = await import('node:fs');
    const { qOf } = await import('../../src/diffraction/lattice');
    const p = parsePattern(readFileSync('tests/fixtures/reference-data/xrd-powder_propylammonium-chloride_CuKa12_COD1516218_2theta-counts.xy', 'utf8'));
    const a = analysePattern(p);
    const ph = a.indexing.phases[0];
    expect(ph.kind).toBe('tetragonal-P');
    expect(Math.abs(ph.aNm / 0.626428 - 1)).toBeLessThan(5e-4);
    expect(Math.abs(ph.cNm / 0.740545 - 1)).toBeLessThan(5e-4);
    expect(ph.lines.length).toBeGreaterThanOrEqual(30);
    expect(ph.figureOfMerit.fN).toBeGreaterThan(20);
    // every indexed d against the published cell: within 2u of the budget (fit, profile, zero shift, wavelength)
    let inside = 0;
    for (const l of ph.lines) {
      const q = a.peaks[l.peak];
      const dPub = 1 / Math.sqrt(qOf('tetragonal-P', 0.626428, 0.740545, ...l.hkl));
      if (Math.abs(q.dCorrectedNm - dPub) <= 2 * q.budget.combinedNm) inside++;
    }
    expect(inside / ph.lines.length).toBeGreaterThan(0.85);
    expect(a.radiationSource).toMatch(/header line/);
  });
});

describe('a Scherrer size\'s ± carries the uncertainty of η as well as of the FWHM', () => {
  test('u(size) is the propagation of the fitted FWHM and η with their correlation (GUM §5.2) through the instrument correction (seeded synthetic fcc, LaB6-like standard)', async () => {
    const { instrumentFromStandard } = await import('../../src/diffraction/analyse');
    const { sampleBreadth } = await import('../../src/diffraction/instrument');
    const { diffractionScenarios, standardScenario } = await import('../../testing/synthetic/xrd-scenarios');
    const profile = instrumentFromStandard(parsePattern(standardScenario(3).text), 'LaB6-like (synthetic)');
    const sc = diffractionScenarios(3).find((s) => s.name === 'Au-like fcc')!;
    const a = analysePattern(parsePattern(sc.text), { instrument: profile });
    const sized = a.peaks.filter((p) => p.crystalliteNm !== null);
    expect(sized.length).toBeGreaterThanOrEqual(3);
    let etaMatters = 0;
    for (const p of sized) {
      const sb = (w: number, e: number) => sampleBreadth(w, Math.min(1, Math.max(0, e)), p.twoThetaDeg!, profile).fwhmDeg;
      const b = sb(p.fwhmDeg!, p.eta);
      const dW = (sb(p.fwhmDeg! * 1.001, p.eta) - sb(p.fwhmDeg! * 0.999, p.eta)) / (0.002 * p.fwhmDeg!);
      const e0 = Math.max(0, p.eta - 0.002);
      const e1 = Math.min(1, p.eta + 0.002);
      const dE = (sb(p.fwhmDeg!, e1) - sb(p.fwhmDeg!, e0)) / (e1 - e0);
      const sw = p.fwhmUncDeg!;
      const uB = Math.sqrt(dW * dW * sw * sw + dE * dE * p.etaUnc * p.etaUnc + 2 * dW * dE * p.fwhmEtaCorrelation * sw * p.etaUnc);
      // D = Kλ/(β cos θ): u(D)/D = u(β)/β
      expect(Math.abs(p.crystalliteUncNm! / p.crystalliteNm! / (uB / b) - 1)).toBeLessThan(0.02);
      if (Math.abs(dE * p.etaUnc) > 0.3 * Math.abs(dW * sw)) etaMatters++;
    }
    expect(etaMatters).toBeGreaterThan(0);
  }, 60000);
});

describe('the instrument profile from a line-profile standard (seeded synthetic truth)', () => {
  // The LaB6-like standard (testing/synthetic/xrd-scenarios.ts) is drawn on a known instrument
  // (LAB_INSTRUMENT: Gaussian FWHM² = U tan²θ + V tan θ + W, Lorentzian X tan θ + Y / cos θ) plus
  // its own 5 µm crystallites (a Lorentzian Kλ/(D cos θ), Scherrer). Its weak lines' η is poorly
  // determined and moves width between the Gaussian and the Lorentzian part; weighed alike with the
  // strong lines they bent the fit (on seed 13 the Gaussian width at 2° came out 53 % low and the
  // Lorentzian 64 %), which every size below the standard's first line then carried.
  test('Gaussian and Lorentzian widths within 10 % and 20 % of the drawn ones over 2–60° on five seeds', async () => {
    const { instrumentFromStandard } = await import('../../src/diffraction/analyse');
    const { instrumentWidth } = await import('../../src/diffraction/instrument');
    const { standardScenario } = await import('../../testing/synthetic/xrd-scenarios');
    const { LAB_INSTRUMENT: I } = await import('../../testing/synthetic/diffraction-pattern');
    const lambda = 0.1540593; // Cu Kα1, nm (Hölzer et al., Phys. Rev. A 56, 4554, 1997), the standard's radiation
    for (const seed of [2, 3, 6, 9, 13]) {
      const profile = instrumentFromStandard(parsePattern(standardScenario(seed, 'doublet').text), 'LaB6-like (synthetic)');
      for (const tt of [2, 10, 20, 40, 60]) {
        const th = (tt * Math.PI) / 360;
        const t = Math.tan(th);
        const gG = Math.sqrt(I.u * t * t + I.v * t + I.w);
        const gL = I.x * t + I.y / Math.cos(th) + ((0.9 * lambda) / (5000 * Math.cos(th))) * (180 / Math.PI);
        const got = instrumentWidth(profile, tt);
        expect(Math.abs(got.gammaG / gG - 1), `seed ${seed}, Gaussian width at ${tt}°`).toBeLessThan(0.1);
        expect(Math.abs(got.gammaL / gL - 1), `seed ${seed}, Lorentzian width at ${tt}°`).toBeLessThan(0.2);
      }
    }
  }, 240000);
});

describe('a lamellar cell from broad low-angle orders carries no bias of the profile fit (synthetic truth, no counting noise; common practice)', () => {
  // a clay of 10 nm crystallites, d001 = 1.25 nm (one water layer, reference-values §3), orders 001–005
  // of FWHM about 0.8° (Lorentzian), Cu Kα1 + Kα2, drawn with their expected counts and no noise: on a
  // flat background, and on a steep low-angle background with a polymer halo under the orders. The
  // benchmark's clay cells scatter by 0.03–0.06 % over redrawn noise with no common sign (issue #16,
  // docs/validation.md); this pins the part that is not noise: where the profiles drawn and fitted are
  // the same, the background's curvature under broad orders may move the cell by a small fraction of its u.
  test('the cell within 0.015 % of the drawn one and within half its own standard uncertainty, with and without a curved background', async () => {
    const { reflectionWidth, syntheticPattern } = await import('../../testing/synthetic/diffraction-pattern');
    const { dToTwoTheta } = await import('../../src/diffraction/bragg');
    const CU1 = 0.154059292; // Cu Kα1, nm (ITC C Table 4.2.2.6)
    const cNm = 1.25;
    const areas = [1500, 180, 150, 60, 45];
    const peaks = areas.map((area, j) => {
      const tt = dToTwoTheta(cNm / (j + 1), CU1);
      const w = reflectionWidth(tt, 10, CU1);
      return { twoThetaDeg: tt, area, fwhmDeg: w.fwhmDeg, eta: w.eta };
    });
    const cases = [
      { name: 'flat background', background: { a: 60, b: 0, c: 1 }, halos: [] },
      { name: 'steep low-angle background and a halo', background: { a: 60, b: 3000, c: 1 }, halos: [{ centerDeg: 19.6, fwhmDeg: 8.5, height: 380 }] },
    ];
    for (const k of cases) {
      const pattern = syntheticPattern(peaks, { rangeDeg: [2, 40], stepDeg: 0.02, background: k.background, halos: k.halos, seed: null });
      pattern.sigma = Float64Array.from(pattern.y, (v) => Math.sqrt(Math.max(v, 1)));
      const a = analysePattern(pattern);
      const lam = a.indexing.phases.find((p) => p.kind === 'lamellar');
      expect(lam, k.name).toBeDefined();
      expect(lam!.lines.length, k.name).toBe(5);
      expect(Math.abs(lam!.cNm / cNm - 1), k.name).toBeLessThan(1.5e-4);
      expect(Math.abs(lam!.cNm - cNm), k.name).toBeLessThan(0.5 * lam!.cUncNm);
    }
  }, 60000);
});
