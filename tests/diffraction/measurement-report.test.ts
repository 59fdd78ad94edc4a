import { describe, expect, test } from 'vitest';
import { readMeasurementReport, ReportError } from '../../src/diffraction/measurement-report';

// The reports 'measure --json' and 'sheets --json' print (src/cli/measure.ts MeasureReport), read back for 'match'.
const measure = (periodicities: unknown[], calibration: unknown = { nmPerPx: 0.05, source: 'metadata', relUncertainty: 0.05 }) =>
  JSON.stringify({ file: 'a.tif', width: 10, height: 10, calibration, periodicities });

describe('measurement reports', () => {
  test('calibrated periods are read with their labels; uncalibrated ones are left out with a note', () => {
    const r = readMeasurementReport(measure([{ periodPx: 25, periodNm: 1.25, angleDeg: 28.2, uncertaintyPx: 0.1, uncertaintyNm: 0.06, strength: 9 }, { periodPx: 9, periodNm: null, angleDeg: 3, uncertaintyPx: 0.1, uncertaintyNm: null, strength: 4 }]), 'dir/fringes.json');
    expect(r.periods).toEqual([{ periodNm: 1.25, uncertaintyNm: 0.06, label: 'fringes.json #1 (28°)', angleDeg: 28.2 }]);
    expect(r.relUncertainty).toBe(0.05);
    expect(r.notes).toEqual(['fringes.json: periodicity 2 has no calibrated period and is left out']);
  });
  test('every bad value is refused naming the file and the entry', () => {
    const bad = (text: string, re: RegExp) => {
      let err: unknown;
      try {
        readMeasurementReport(text, 'm.json');
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(ReportError);
      expect((err as Error).message).toMatch(re);
    };
    bad('{"periodicities": [', /^m\.json: not a measurement report: the text is not valid JSON/);
    bad('[1, 2]', /^m\.json: not a measurement report: the file holds a list, not a JSON object/);
    bad(measure([null]), /^m\.json: periodicities\[0\] is null, not a periodicity$/);
    bad(measure([{ periodNm: -1, uncertaintyNm: 0.1 }]), /^m\.json: periodicities\[0\]\.periodNm is -1; a period must be a positive number of nm$/);
    bad(measure([{ periodNm: '1.2', uncertaintyNm: 0.1 }]), /periodicities\[0\]\.periodNm is "1\.2"/);
    bad('{"periodicities": [{"periodNm": 1e999, "uncertaintyNm": 0.1}]}', /periodNm is a number too large to hold/);
    bad(measure([{ periodNm: 1, uncertaintyNm: -0.1 }]), /uncertaintyNm is -0\.1; an uncertainty must be a number of nm, 0 or more/);
    bad(measure([], { relUncertainty: 5 }), /calibration\.relUncertainty is 5; a relative uncertainty is a number from 0 to below 1/);
    bad('{"sheets": [null]}', /^m\.json: sheets\[0\] is null, not a sheet$/);
    bad('{"sheets": [], "stats": {"n": -2, "thicknessNm": {"mean": 3}}}', /stats\.n is -2/);
    bad('{"other": 1}', /neither a 'measure --json' report/);
  });
  test('a sheets report gives the mean layer period and the thickness statistics', () => {
    const r = readMeasurementReport(JSON.stringify({ calibration: { relUncertainty: 0 }, sheets: [{ periodNm: 1.2 }, { periodNm: 1.3 }, {}], stats: { n: 3, thicknessNm: { mean: 5, sd: 1, median: 4.8 } } }), 's.json');
    expect(r.periods[0].periodNm).toBeCloseTo(1.25, 12);
    expect(r.sheets).toEqual({ n: 3, meanNm: 5, sdNm: 1, medianNm: 4.8 });
  });
});

test('a version-2 measure report gives the period and its combined standard uncertainty from its budget', () => {
  const text = JSON.stringify({ file: 'a.tif', calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02 }, periodicities: [{ periodPx: 25, angleDeg: 10, budget: { periodNm: 1.25, uCombinedNm: 0.03, coverageFactorK: 2, expandedUncertaintyNm: 0.06 } }, { periodPx: 9, angleDeg: 0, budget: { periodPx: 9, uCombinedPx: 0.1 } }] });
  const r = readMeasurementReport(text, 'v2.json');
  expect(r.periods).toEqual([{ periodNm: 1.25, uncertaintyNm: 0.03, label: 'v2.json #1 (10°)', angleDeg: 10 }]);
  expect(r.notes).toEqual(['v2.json: periodicity 2 has no calibrated period and is left out']);
});
