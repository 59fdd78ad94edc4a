import { describe, expect, test } from 'vitest';
import { basalLine, compareWithScherrer, sizedLines } from '../../src/sheets/xrd-compare';
import { analysePattern } from '../../src/diffraction/analyse';
import { parsePattern } from '../../src/diffraction/pattern';

describe('stack thickness in the micrographs beside the Scherrer size of the basal reflection', () => {
  test('the X-ray size is volume-weighted (Langford & Wilson 1978): Σt²L / ΣtL, worked by hand; the jackknife error of three stacks (Quenouille 1956)', () => {
    // stacks 2, 4 and 6 nm thick, lengths 1, 1, 2: Σt²L = 4 + 16 + 72 = 92, ΣtL = 2 + 4 + 12 = 18 → 5.111 nm
    const c = compareWithScherrer(
      [
        { thicknessNm: 2, layers: 2, lengthWeight: 1 },
        { thicknessNm: 4, layers: 4, lengthWeight: 1 },
        { thicknessNm: 6, layers: 6, lengthWeight: 2 },
      ],
      { sizeNm: 5, uSizeNm: 0.2, dNm: 1, source: 'test' },
    );
    expect(c.volumeWeightedNm).toBeCloseTo(92 / 18, 12);
    expect(c.meanNm).toBeCloseTo(4, 12);
    // leave-one-out: (16+72)/(4+12) = 5.5, (4+72)/(2+12) = 5.4286, (4+16)/(2+4) = 3.3333
    const lo = [5.5, 76 / 14, 20 / 6];
    const m = lo.reduce((a, b) => a + b, 0) / 3;
    expect(c.uVolumeWeightedNm).toBeCloseTo(Math.sqrt((2 / 3) * lo.reduce((a, b) => a + (b - m) ** 2, 0)), 10);
    expect(c.differenceNm).toBeCloseTo(92 / 18 - 5, 12);
    expect(c.xrdLayers).toBeCloseTo(5, 12);
    expect(() => compareWithScherrer([{ thicknessNm: 2, layers: 2, lengthWeight: 1 }], { sizeNm: 5, uSizeNm: 0.2, dNm: 1, source: 'test' })).toThrow(/at least two stacks, got 1/);
  });

  test('a lamellar phase\'s size pooled over its orders is taken before a single line near the period', () => {
    const lines = [
      { dNm: 1.251, crystalliteNm: 9.1, crystalliteUncNm: 0.9, label: '001' },
      { dNm: 1.2502, crystalliteNm: 10.0, crystalliteUncNm: 0.3, label: 'phase', pooled: true },
      { dNm: 0.3, crystalliteNm: 30, crystalliteUncNm: 1, label: 'other' },
    ];
    expect(basalLine(lines, 1.25)!.label).toBe('phase');
    expect(basalLine(lines.filter((l) => !l.pooled), 1.25)!.label).toBe('001');
    expect(basalLine(lines, 2)).toBeNull();
  });

  test('on a seeded synthetic clay pattern (1.25 nm, 10 nm crystallites drawn, Cu Kα doublet) the pooled 00l size is offered, within 15 % of the drawn size', async () => {
    const { diffractionScenarios, standardScenario } = await import('../../testing/synthetic/xrd-scenarios');
    const { instrumentFromStandard } = await import('../../src/diffraction/analyse');
    const profile = instrumentFromStandard(parsePattern(standardScenario(2).text), 'LaB6-like (synthetic)');
    const sc = diffractionScenarios(2).find((s) => s.name === 'clay film on polymer halo')!;
    const a = analysePattern(parsePattern(sc.text), { instrument: profile });
    const line = basalLine(sizedLines(a), 1.25)!;
    expect(line.pooled).toBe(true);
    expect(line.label).toMatch(/lamellar phase 1, \d+ resolved 00l lines/);
    expect(Math.abs(line.crystalliteNm! / sc.phases[0].sizeNm - 1)).toBeLessThan(0.15);
    expect(line.method).toBe('instrument breadth removed');
    // without the standard the breadths keep the instrument's: a smaller size, said to be a lower bound
    const raw = basalLine(sizedLines(analysePattern(parsePattern(sc.text))), 1.25)!;
    expect(raw.pooled).toBe(true);
    expect(raw.method).toMatch(/no instrument correction: a lower bound/);
    expect(raw.crystalliteNm!).toBeLessThan(line.crystalliteNm!);
  }, 60000);
});
