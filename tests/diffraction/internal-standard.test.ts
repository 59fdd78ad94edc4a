import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { main } from '../../src/cli/main';
import { dToTwoTheta } from '../../src/diffraction/bragg';
import { indexPattern, type IndexPeak } from '../../src/diffraction/indexing';
import { INTERNAL_STANDARDS, internalStandardFrom, zeroShiftCellPartDeg } from '../../src/diffraction/internal-standard';
import { latticeLines } from '../../src/diffraction/lattice';
import { reflectionWidth, syntheticPattern, type SyntheticPeak } from '../../testing/synthetic/diffraction-pattern';

const CU1 = 0.154059292; // Cu Kα1, ITC C Table 4.2.2.1 (reference-values.md)
// SRM 640f Si: a = 0.5431144 ± 0.000008 nm (k = 2), Black et al., Powder Diffr. 35 (2020) (reference-values.md §2)
const SI_640F = 0.5431144;
const AU = 0.40782; // an fcc metal's a, from memory (handbook value 0.4078 nm)

/** d-glide of diamond (Fd-3m, ITC A No. 227): all-even hkl need h + k + l = 4n. */
const diamond = (h: number, k: number, l: number) => ([h, k, l].every((v) => v % 2 === 0) ? (h + k + l) % 4 === 0 : true);

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

describe('internal standards', () => {
  test('the built-in cells are the certified ones (reference-values.md §2: SRM 640f Si, SRM 660c LaB6, U at k = 2)', () => {
    const si = INTERNAL_STANDARDS.find((s) => s.id === 'si')!;
    expect(si.cell.aNm).toBe(0.5431144);
    expect(si.expandedUNm).toBe(0.000008);
    expect(si.relUncertainty! * si.cell.aNm).toBeCloseTo(0.000004, 12); // u = U/2
    const lab6 = internalStandardFrom('LaB6');
    expect(lab6.cell).toEqual({ kind: 'cubic-P', aNm: 0.4156826, cNm: 0.4156826 });
    const own = internalStandardFrom('cubic:0.40782±0.00002:F');
    expect(own.cell.kind).toBe('cubic-F');
    expect(own.relUncertainty).toBeCloseTo(0.00002 / 0.40782, 12);
    expect(() => internalStandardFrom('quartz')).toThrow(/'quartz'/);
    expect(() => internalStandardFrom('cubic:0.4±0.1')).toThrow(/0\.1/);
  });

  test('the cell part of the zero shift: Bragg differentiated, Δ2θ = −2 tan θ·Δa/a (Si 111 at 28.441°, reference-values.md)', () => {
    const rel = 0.000004 / SI_640F;
    // one line: (360/π)·tan(14.2205°)·rel degrees
    const one = zeroShiftCellPartDeg([28.441], [1], rel);
    expect(one).toBeCloseTo((360 / Math.PI) * Math.tan((28.441 * Math.PI) / 360) * rel, 12);
    expect(one).toBeGreaterThan(2.0e-4);
    expect(one).toBeLessThan(2.3e-4);
    // two lines of equal weight: the mean of their parts
    const two = zeroShiftCellPartDeg([28.441, 47.301], [1, 1], rel);
    expect(two).toBeCloseTo((one + zeroShiftCellPartDeg([47.301], [1], rel)) / 2, 12);
    expect(() => zeroShiftCellPartDeg([28.4], [1, 2], rel)).toThrow(/1 angles but 2 weights/);
    expect(() => zeroShiftCellPartDeg([200], [1], rel)).toThrow(/200/);
  });

  test('Si held with its d-glide: a sample line where the forbidden Si 200 would fall is left to the sample (ITC A, Fd-3m)', () => {
    const si = internalStandardFrom('si');
    const peak = (d: number, i: number): IndexPeak => {
      const tt = Number(dToTwoTheta(d, CU1).toFixed(3));
      return { dNm: CU1 / (2 * Math.sin((tt * Math.PI) / 360)), dUncNm: 1e-5 * d, twoThetaDeg: tt, twoThetaUncDeg: 0.002, intensity: i, fwhmDeg: 0.08 };
    };
    const siLines = [[1, 1, 1, 100], [2, 2, 0, 55], [3, 1, 1, 30], [4, 0, 0, 6], [3, 3, 1, 11]].map(([h, k, l, i]) => peak(SI_640F / Math.hypot(h, k, l), i));
    // a line of the sample at d = a_Si/2 (where Si 200 would be), 40 % of the strongest
    const extra = peak(SI_640F / 2, 40);
    const r = indexPattern([...siLines, extra], { wavelengthNm: CU1, standard: si, mixtures: false });
    const std = r.phases.find((p) => p.standard)!;
    expect(std.lines.map((l) => l.hkl.join(''))).not.toContain('200');
    expect(std.lines.length).toBe(5);
    // the certified cell's uncertainty adds its part to the fitted zero shift's, in quadrature
    const bare = indexPattern([...siLines, extra], { wavelengthNm: CU1, standard: { ...si, relUncertainty: 0 }, mixtures: false });
    const used = std.lines.map((l) => [...siLines, extra][l.peak].twoThetaDeg!);
    const part = zeroShiftCellPartDeg(used, used.map(() => 1 / (0.002 ** 2 + 0.002 ** 2)), si.relUncertainty!);
    expect(r.zeroShiftUncDeg!).toBeCloseTo(Math.hypot(bare.zeroShiftUncDeg!, part), 9);
    expect(r.zeroShiftUncDeg! - bare.zeroShiftUncDeg!).toBeGreaterThan(1e-6);
  });

  test('xrd --internal-standard si on Si + an fcc metal with a +0.06° zero shift: the shift measured on the standard, its ± containing the certified cell', { timeout: 60000 }, async () => {
    const peaks: SyntheticPeak[] = [];
    const add = (a: number, kind: 'cubic-F', allows: ((h: number, k: number, l: number) => boolean) | null, size: number, top: number, rel: number[]) => {
      const lines = latticeLines({ kind, aNm: a, cNm: a }, CU1 / (2 * Math.sin((118 * Math.PI) / 360))).filter((l) => !allows || allows(...l.hkl));
      lines.forEach((l, i) => {
        const tt = dToTwoTheta(l.dNm, CU1);
        const w = reflectionWidth(tt, size, CU1);
        peaks.push({ twoThetaDeg: tt, area: top * (rel[i] ?? 0.1), fwhmDeg: w.fwhmDeg, eta: w.eta });
      });
    };
    add(SI_640F, 'cubic-F', diamond, 300, 250, [1, 0.55, 0.3, 0.06, 0.11, 0.12, 0.07, 0.05]);
    add(AU, 'cubic-F', null, 30, 400, [1, 0.5, 0.3, 0.35, 0.1, 0.05, 0.12, 0.1]);
    const pattern = syntheticPattern(peaks, { rangeDeg: [20, 120], stepDeg: 0.02, wavelengthNm: CU1, ka2Nm: null, zeroShiftDeg: 0.06, seed: 16 });
    const dir = mkdtempSync(join(tmpdir(), 'strata-istd-'));
    const f = join(dir, 'si-au.xy');
    writeFileSync(f, `# Cu Ka1 1.540593 A, Johansson Ge(111) primary monochromator\n${Array.from(pattern.x, (x, i) => `${x.toFixed(4)} ${pattern.y[i]}`).join('\n')}\n`);
    let c = capture();
    expect(await main(['xrd', f, '--internal-standard', 'si', '--json'], c.io)).toBe(0);
    const j = JSON.parse(c.out.join(''));
    const std = j.indexing.phases.find((p: any) => p.standard);
    expect(std.name).toBe('Si (SRM 640f)');
    expect(std.aNm).toBe(SI_640F);
    const z = j.indexing.zeroShiftDeg;
    const zU = j.indexing.zeroShiftUncDeg;
    expect(Math.abs(z - 0.06)).toBeLessThan(3 * zU + 0.002);
    // the certified cell's part is inside the ±: at least that of the Si 111 line alone
    expect(zU).toBeGreaterThan(zeroShiftCellPartDeg([28.441], [1], 0.000004 / SI_640F));
    const fcc = j.indexing.phases.find((p: any) => !p.standard);
    expect(fcc.lattice).toBe('cubic-F');
    expect(Math.abs(fcc.aNm / AU - 1)).toBeLessThan(2e-4);
    expect(j.notes.join(' ')).toMatch(/internal standard Si \(SRM 640f\).*640f/);
    c = capture();
    expect(await main(['xrd', f, '--internal-standard', 'si'], c.io)).toBe(0);
    expect(c.out.join('')).toMatch(/Zero shift: .*contains the fit of the standard's \d+ lines and its certified cell/);
    c = capture();
    expect(await main(['xrd', f, '--internal-standard', 'corundum'], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/'corundum' is not known/);
  });
});
