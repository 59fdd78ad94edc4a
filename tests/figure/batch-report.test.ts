// The batch report: one self-contained HTML file with the pooled period (the one pooling rule),
// a row per file (its calibration and source, or why it was not measured), statistics and
// histograms only from 3 values up (fewer are listed one by one; common practice: a mean and a
// standard deviation of one or two values say nothing about a spread), the recipe and the caution.
import { expect, test } from 'vitest';
import { batchReportHtml } from '../../src/figure/report';
import type { FileResult } from '../../src/batch/run';
import { makeCalibration } from '../../src/calibration/calibration';

const cal = makeCalibration(0.05, 'metadata', 'TIFF resolution tags', [{ name: 'indicated magnification', rel: 0.05, type: 'B' }]);
const ok = (file: string, periodPx: number, sheets: number[] = []): FileResult => ({
  file, status: 'ok', image: { widthPx: 512, heightPx: 512, bitDepth: 16 }, calibration: cal, measurements: [], notes: [],
  summary: {
    topPeriods: [{ periodPx, angleDeg: 28, geometry: 'normal', u: { statisticalPx: 0.05, localVariationPx: 0.1, methodPx: 0.02 }, uAngleDeg: 0.3, strength: 50, flags: [], tool: 'spectrum' }],
    sheetCount: sheets.length ? sheets.length : null, meanThicknessNm: sheets.length ? sheets.reduce((a, b) => a + b) / sheets.length : null,
    sdThicknessNm: sheets.length ? 0.1 : null, sheetThicknessNm: sheets,
  },
});
const failed: FileResult = { file: 'broken.tif', status: 'failed', reason: 'not a TIFF file', image: null, calibration: null, measurements: [], notes: [],
  summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] } };

test('three or more images: mean, sd, pooled value and a histogram; every file listed, the failed one with its reason', () => {
  const html = batchReportHtml({ results: [ok('a.tif', 25), ok('b.tif', 25.2), ok('c.tif', 24.9), failed], recipe: { name: 'fringes', version: 1 }, software: 'Stratameter 9.9.9' });
  expect(html).toMatch(/mean 1\.25\d* nm, sd 0\.0\d+ nm/);
  expect(html).toMatch(/Pooled over the images: <b>1\.2\d+ ± 0\.\d+ nm<\/b> \(k = 2; .*n = 3/);
  expect(html).toContain('Strongest period per image</text>'); // the histogram's title
  expect(html).toContain('<td>broken.tif</td><td colspan="4">not measured: not a TIFF file</td>');
  expect(html).toContain('0.05000 (file metadata)');
  expect(html).toContain('&quot;name&quot;: &quot;fringes&quot;');
  expect(html).toContain('do not replace a calibration');
  expect(html).not.toMatch(/<script|<link|src="http/i);
});

test('fewer than three values: listed, with no mean, sd or histogram', () => {
  const html = batchReportHtml({ results: [ok('a.tif', 25, [1.9, 2.1]), failed], recipe: {}, software: 'S' });
  expect(html).toMatch(/Strongest period per image: 1\.25 nm \(n = 1: too few for a mean, a standard deviation or a histogram\)/);
  expect(html).toMatch(/Sheet thickness: 1\.9, 2\.1 nm \(n = 2: too few/);
  expect(html).not.toContain('<svg');
  expect(html).not.toMatch(/mean \d/);
});
