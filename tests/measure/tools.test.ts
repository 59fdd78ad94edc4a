// The measurement-tool registry and the one CSV writer and JSON form of measurements: every
// record kind a tool writes is registered once, its CSV cells match its columns, its figure lies
// where it measured, and the CSV follows RFC 4180 ("Common Format and MIME Type for CSV Files",
// 2005, §2) with the budget columns of docs/uncertainty.md. Synthetic fringes with known truth
// (tests/measure/synth.ts).
import { describe, expect, test } from 'vitest';
import { csvTable, measurementsCsv, measurementsJson, PERIOD_COLUMNS } from '../../src/measure/export';
import { expressPeriod, type Measurement } from '../../src/measure/measurement';
import { RECIPE_STEPS, TOOLS, toolOf, toolOfRecipeStep } from '../../src/measure/tools';
import { fringeImage } from './synth';

const CAL = { nmPerPx: 0.05, source: 'manual' as const, relUncertainty: 0.02, detail: 'test, "quoted", with commas' };

/** Splits one RFC 4180 line into fields (quoted fields may hold commas and doubled quotes). */
function fields(line: string): string[] {
  const out: string[] = [];
  let cur = '';
  let quoted = false;
  for (let i = 0; i < line.length; i++) {
    const c = line[i];
    if (quoted) {
      if (c === '"' && line[i + 1] === '"') { cur += '"'; i++; } else if (c === '"') quoted = false; else cur += c;
    } else if (c === '"') quoted = true;
    else if (c === ',') { out.push(cur); cur = ''; } else cur += c;
  }
  out.push(cur);
  return out;
}

describe('measurement-tool registry', () => {
  test('every measuring record kind is registered once, with a panel; the recipe steps are the batch\'s four', () => {
    const kinds = TOOLS.map((t) => t.kind);
    expect(new Set(kinds).size).toBe(kinds.length);
    // the tools of the issue that made the registry (more may be added: docs/developers.md)
    expect(kinds).toEqual(expect.arrayContaining(['domains', 'profile', 'rings', 'sheets-auto', 'sheets-line', 'spectrum']));
    for (const t of TOOLS) expect(t.panel).toMatch(/^[a-z]+$/);
    expect(RECIPE_STEPS).toEqual(['spectrum', 'rings', 'sheets', 'domains']);
    expect(toolOfRecipeStep('sheets')?.kind).toBe('sheets-auto');
    expect(() => toolOf('camera-constant')).toThrow(/no measurement tool 'camera-constant': the tools are profile, spectrum/);
  });

  test('each tool runs on synthetic fringes and writes its own kind, in image pixels, with cells for its columns', async () => {
    const period = 9.6;
    const image = fringeImage(192, 192, [{ periodPx: period, angleDeg: 90, amplitude: 10 }], 2, 3, CAL);
    const targets = {
      rect: { kind: 'rect' as const, x: 16, y: 16, width: 160, height: 160 },
      line: { kind: 'line' as const, x0: 96, y0: 170, x1: 96, y1: 20, widthPx: 9 },
    };
    for (const t of TOOLS) {
      const m = await t.run(image, targets[t.target]);
      expect(m.tool).toBe(t.kind);
      expect(m.recordVersion).toBe(2);
      expect(m.calibration).toEqual(CAL);
      for (let i = 0; i < m.periodicities.length; i++) {
        expect(t.cells(m, i)).toHaveLength(t.columns.length);
        expect(m.periodicities[i].geometry).toBe(t.geometry);
      }
      for (const shape of t.figure(m)) {
        const x = shape.kind === 'line' ? shape.x0 : shape.x;
        const y = shape.kind === 'line' ? shape.y0 : shape.y;
        expect(x >= 0 && x <= 192 && y >= 0 && y <= 192).toBe(true);
      }
      // horizontal fringes of 9.6 px (synthetic truth): the tools that find periods find it
      if (['profile', 'spectrum', 'rings'].includes(t.kind)) {
        expect(m.periodicities.length).toBeGreaterThan(0);
        expect(Math.abs(m.periodicities[0].periodPx - period) / period).toBeLessThan(0.02);
      }
    }
    await expect(toolOf('spectrum').run(image, targets.line)).rejects.toThrow(/spectrum tool measures a rectangle, got a line/);
    await expect(toolOf('profile').run(image, null)).rejects.toThrow(/profile tool measures along a line, got none/);
  }, 120_000);
});

describe('the one CSV writer and JSON form', () => {
  test('csvTable: RFC 4180 fields and CRLF line ends; a row of the wrong length is refused by number', () => {
    expect(csvTable(['a', 'b'], [['x,y', 'say "hi"'], [1.5, null]])).toBe('a,b\r\n"x,y","say ""hi"""\r\n1.5,\r\n');
    expect(() => csvTable(['a', 'b'], [['only one']])).toThrow(/CSV row 1 has 1 cells for 2 columns/);
  });

  test('measurementsCsv: a row per period with px parts, the nm budget and the tool\'s own columns; JSON carries the same budgets', async () => {
    const image = fringeImage(160, 160, [{ periodPx: 12.5, angleDeg: 30, amplitude: 10 }], 2, 5, CAL);
    const spectrum = await toolOf('spectrum').run(image, { kind: 'rect', x: 0, y: 0, width: 160, height: 160 }, {}, { fileName: 'a,b.tif' });
    const profile = await toolOf('profile').run(image, { kind: 'line', x0: 20, y0: 120, x1: 140, y1: 50, widthPx: 5 });
    const records: Measurement[] = [spectrum, profile];
    const csv = measurementsCsv(records, { k: 2 });
    const lines = csv.trimEnd().split('\r\n');
    const head = fields(lines[0]);
    expect(head.slice(0, 5)).toEqual(['file', 'calibrationSource', 'nmPerPx', 'calibrationRelUncertainty', 'calibrationDetail']);
    for (const c of PERIOD_COLUMNS) expect(head).toContain(c);
    expect(head).toEqual(expect.arrayContaining(['estimator', 'fringes', 'fxPerPx', 'fyPerPx', 'snr']));
    expect(lines.length - 1).toBe(spectrum.periodicities.length + profile.periodicities.length);
    const row = fields(lines[1]);
    const at = (name: string) => row[head.indexOf(name)];
    expect(at('file')).toBe('a,b.tif');
    expect(at('calibrationDetail')).toBe(CAL.detail);
    const b = expressPeriod(spectrum.periodicities[0], CAL, 2);
    // d = period × pixel size; U = k·u (GUM §6.2.1), k = 2
    expect(Number(at('periodNm'))).toBeCloseTo(b.value, 4);
    expect(Number(at('expandedUncertaintyNm'))).toBeCloseTo(b.expanded, 3);
    expect(Number(at('coverageFactorK'))).toBe(2);
    expect(at('estimator')).toBe('');
    const doc = measurementsJson(records, 2, '2026-12-03T00:00:00.000Z');
    expect(doc.format).toBe('stratameter-measurements');
    expect(doc.measurements[0].label).toBe('spectrum spots');
    expect(doc.measurements[0].budgets[0].periodNm).toBeCloseTo(b.value, 12);
    expect(doc.measurements[1].periodicities).toEqual(profile.periodicities);
  }, 60_000);
});
