import { strFromU8, unzipSync } from 'fflate';
import { describe, expect, test } from 'vitest';
import { batchJson, pooledStats, RESULT_COLUMNS, resultsCsv, summaryCsv, zipExports } from '../../src/batch/export';
import { csvField } from '../../src/measure/export';
import { parseRecipe } from '../../src/batch/recipe';
import { processOne, type FileResult } from '../../src/batch/run';
import { parseCsv } from './csv';
import { fakeDeps, fakeFile } from './fakes';

async function sampleResults(): Promise<FileResult[]> {
  const recipe = parseRecipe({ schemaVersion: 1, area: { kind: 'whole', infoStripPx: 0 }, measurements: [{ tool: 'spectrum', topK: 2 }, { tool: 'sheets' }] });
  const deps = fakeDeps();
  return [
    (await processOne(fakeFile(300, 200, 0.05, 20), 'tactoid, "edge-on" #1.tif', recipe, deps)).result,
    (await processOne(fakeFile(200, 200, 0.05, 22), 'tactoid 2.tif', recipe, deps)).result,
    (await processOne(new Uint8Array([1, 2]), 'broken\nname.tif', recipe, deps)).result,
  ];
}

describe('csvField (RFC 4180 §2)', () => {
  test('quotes fields with commas, quotes and line breaks, doubling inner quotes', () => {
    expect(csvField('plain.tif')).toBe('plain.tif');
    expect(csvField('a,b')).toBe('"a,b"'); // rule 6
    expect(csvField('say "hi"')).toBe('"say ""hi"""'); // rule 7
    expect(csvField('two\r\nlines')).toBe('"two\r\nlines"'); // rule 6
    expect(csvField(null)).toBe('');
    expect(csvField(-0.25)).toBe('-0.25');
  });
  test('text that a spreadsheet would run as a formula is defused (common practice)', () => {
    expect(csvField('=HYPERLINK("x")')).toBe('"\'=HYPERLINK(""x"")"');
    expect(csvField('-x.tif')).toBe("'-x.tif");
  });
  test('non-finite numbers are refused', () => {
    expect(() => csvField(NaN)).toThrow(/finite/);
  });
});

describe('resultsCsv', () => {
  test('one row per period, units in the column names, calibration on every row', async () => {
    const rows = parseCsv(resultsCsv(await sampleResults()));
    expect(rows[0]).toEqual([...RESULT_COLUMNS]);
    expect(rows[0]).toEqual(expect.arrayContaining(['periodNm', 'uStatisticalNm', 'uCalibrationNm', 'uCombinedNm', 'coverageFactorK', 'expandedUncertaintyNm', 'angleDeg', 'nmPerPx', 'calibrationRelUncertainty']));
    const body = rows.slice(1);
    // file 1: 2 spectrum periods + 1 sheets row; file 2: the same; file 3: one failed row
    expect(body).toHaveLength(7);
    expect(body.every((r) => r.length === RESULT_COLUMNS.length)).toBe(true);
    const col = (name: string) => RESULT_COLUMNS.indexOf(name as (typeof RESULT_COLUMNS)[number]);
    expect(body[0][col('file')]).toBe('tactoid, "edge-on" #1.tif');
    expect(body[6][col('file')]).toBe('broken\nname.tif');
    expect(body[6][col('status')]).toBe('failed');
    expect(body[6][col('reason')]).toMatch(/cannot read the file/);
    for (const r of body.slice(0, 6)) {
      expect(r[col('calibrationSource')]).toBe('metadata');
      expect(r[col('calibrationRelUncertainty')]).toBe('0.02');
    }
    // 20 px × 0.05 nm/px = 1 nm (definition of the pixel size)
    expect(Number(body[0][col('periodNm')])).toBeCloseTo(1.0, 12);
    // each part in its own column: the fake tool's 0.5 % statistical part and the 2 % calibration (GUM §5.1.2)
    expect(Number(body[0][col('uStatisticalNm')])).toBeCloseTo(0.005, 12);
    expect(Number(body[0][col('uCalibrationNm')])).toBeCloseTo(0.02, 12);
    expect(Number(body[0][col('expandedUncertaintyNm')])).toBeCloseTo(2 * Math.hypot(0.005, 0.02), 3);
    expect(body[0][col('rank')]).toBe('1');
    expect(body[2][col('tool')]).toBe('sheets-auto');
    expect(body[2][col('periodNm')]).toBe('');
  });

  test('the summary table has one row per file', async () => {
    const rows = parseCsv(summaryCsv(await sampleResults()));
    expect(rows).toHaveLength(4);
    expect(rows[0]).toContain('meanThicknessNm');
    expect(rows[1][rows[0].indexOf('sheetCount')]).toBe('3');
  });
});

describe('pooledStats', () => {
  test('counts files, pools the strongest period and every sheet', async () => {
    const p = pooledStats(await sampleResults());
    expect(p.files).toEqual({ total: 3, ok: 2, failed: 1 });
    // strongest periods 1.0 and 1.1 nm: mean 1.05, sample SD 0.1/√2
    expect(p.topPeriodNm?.n).toBe(2);
    expect(p.topPeriodNm?.mean).toBeCloseTo(1.05, 12);
    expect(p.topPeriodNm?.sd).toBeCloseTo(0.1 / Math.SQRT2, 12);
    // pooled by the one rule (poolPeriods): statistical parts 0.5 % of d; 1.0 and 1.1 disagree far
    // beyond them, so a between-image term (DerSimonian–Laird) carries most of the uncertainty
    const b = p.pooledTopPeriod!.budget;
    expect(p.pooledTopPeriod?.n).toBe(2);
    expect(b.value).toBeGreaterThan(1.0);
    expect(b.value).toBeLessThan(1.1);
    expect(b.parts.betweenImages).toBeGreaterThan(0.03);
    expect(b.parts.betweenImages).toBeGreaterThan(10 * b.parts.statistical);
    expect(p.pooledTopPeriod!.birgeRatio).toBeGreaterThan(5);
    expect(p.sheetCount).toBe(5); // 300 px → 3 sheets, 200 px → 2 (fake tool)
    expect(p.sheetThicknessNm?.n).toBe(5);
  });
});

describe('batchJson and zipExports', () => {
  test("the recipe's coverage factor sets k of every expanded uncertainty in the JSON and CSV", async () => {
    // U = k·u (GUM JCGM 100:2008 §6.2): the same combined u, expanded with k = 3 instead of 2
    const results = await sampleResults();
    const recipe = parseRecipe({ schemaVersion: 1, outputs: { coverageFactor: 3 } });
    const doc = JSON.parse(batchJson(recipe, results, '2026-01-01T00:00:00.000Z'));
    const b = doc.pooled.pooledTopPeriod.budget;
    expect(b.k).toBe(3);
    expect(b.expanded).toBeCloseTo(3 * b.combined, 12);
    const rows = parseCsv(resultsCsv(results, 3));
    const col = (name: string) => rows[0].indexOf(name);
    expect(rows[1][col('coverageFactorK')]).toBe('3');
    expect(Number(rows[1][col('expandedUncertaintyNm')])).toBeCloseTo(3 * Number(rows[1][col('uCombinedNm')]), 3);
  });

  test('the JSON holds the recipe, pooled statistics and every record', async () => {
    const recipe = parseRecipe({ schemaVersion: 1 });
    const doc = JSON.parse(batchJson(recipe, await sampleResults(), '2026-01-01T00:00:00.000Z'));
    expect(doc.schemaVersion).toBe(1);
    expect(parseRecipe(doc.recipe)).toEqual(recipe);
    expect(doc.results).toHaveLength(3);
    expect(doc.pooled.files.failed).toBe(1);
  });

  test('the zip archive holds every export file unchanged', () => {
    const png = new Uint8Array([137, 80, 78, 71, 13, 10, 26, 10]);
    const zip = zipExports({ 'results.csv': 'a,b\r\n', 'figures/x.png': png });
    const back = unzipSync(zip);
    expect(strFromU8(back['results.csv'])).toBe('a,b\r\n');
    expect(back['figures/x.png']).toEqual(png);
    expect(() => zipExports({ '../x.csv': 'a' })).toThrow(/relative/);
  });
});
