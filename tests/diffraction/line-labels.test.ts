import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { analysePattern } from '../../src/diffraction/analyse';
import { parsePattern } from '../../src/diffraction/pattern';
import { fittedLineLabels } from '../../src/diffraction/line-labels';

// The demo pattern (synthetic, demo only): a 1.25 nm clay and a 3.9 nm lamellar phase, both with a 0 0 2.
describe('fittedLineLabels', () => {
  const text = readFileSync(new URL('../../demo-data/tactoid-film_CuKa.xy', import.meta.url), 'utf8');
  const a = analysePattern(parsePattern(text));

  it('names every indexed line by its phase and hkl, so two phases\' 0 0 2 lines differ', () => {
    expect(a.indexing.phases.length).toBeGreaterThan(1);
    const labels = fittedLineLabels(a);
    expect(labels).toHaveLength(a.peaks.length);
    a.indexing.phases.forEach((ph, j) => {
      for (const l of ph.lines) expect(labels[l.peak]).toBe(`${j + 1}: ${l.hkl.join(' ')}`);
    });
    const second = labels.filter((l) => / 0 0 2$/.test(l));
    expect(second.length).toBeGreaterThan(1);
    expect(new Set(second).size).toBe(second.length);
  });

  it('names a line outside every phase and series by its position', () => {
    const labels = fittedLineLabels({ peaks: a.peaks, series: [], indexing: { ...a.indexing, phases: [] } });
    labels.forEach((l, i) => expect(l).toBe(`peak ${Number(a.peaks[i]!.twoThetaDeg!.toPrecision(5))}°`));
  });

  it('refuses what is not an analysis', () => {
    expect(() => fittedLineLabels(null as never)).toThrow(/must hold its peaks/);
  });
});
