// The report of one image: one self-contained HTML file (nothing fetched, no script) with the
// image and its scale bar, the results with what each ± contains, the calibration and its source,
// the uncertainty statement (GUM, JCGM 100:2008 §7.2.3: U = k·u with k stated), the program and
// the recipe, and the caution. The image is a pure cosine grating of 25 px period (common practice
// for a test signal) at 0.05 nm/px: d = 1.25 nm.
import { expect, test } from 'vitest';
import { decode } from 'fast-png';
import { makeGreyImage } from '../../src/image/grey-image';
import { makeCalibration } from '../../src/calibration/calibration';
import { toolOf } from '../../src/measure/tools';
import { imageReportHtml, reportPicturePng, REPORT_CAUTION } from '../../src/figure/report';
import { profilePlot } from '../../src/figure/period-plots';
import { rng } from '../../testing/random';

const W = 256;
const rand = rng(19);
const data = new Float32Array(W * W);
for (let y = 0; y < W; y++) for (let x = 0; x < W; x++) data[y * W + x] = 1000 + 200 * Math.cos((2 * Math.PI * x) / 25) + 40 * (rand() - 0.5);
const image = makeGreyImage(W, W, data);
image.calibration = makeCalibration(0.05, 'scale-bar', 'scale bar of 10 nm, 200 px', [{ name: 'bar end location', rel: 0.01, type: 'A' }]);

test('the report holds the image, the results with their ±, calibration, statement, program, recipe and caution, and fetches nothing', async () => {
  const spectrum = await toolOf('spectrum').run(image, { kind: 'rect', x: 28, y: 28, width: 200, height: 200 }, {});
  const profile = await toolOf('profile').run(image, { kind: 'line', x0: 20, y0: 128, x1: 236, y1: 128, widthPx: 9 }, {});
  const html = imageReportHtml({
    image, fileName: 'grating.tif', records: [spectrum, profile], software: 'Stratameter 9.9.9', createdIso: '2026-01-01T00:00:00Z',
    plots: [profilePlot({ distancePx: Float64Array.from({ length: 50 }, (_, i) => i), mean: Float64Array.from({ length: 50 }, (_, i) => Math.cos(i / 4)), standardError: new Float64Array(50), lengthPx: 49, angleDeg: 0, realSpace: null }, image.calibration)],
  });
  expect(html.startsWith('<!doctype html>')).toBe(true);
  // self-contained: no script, no stylesheet link, no address outside the file
  expect(html).not.toMatch(/<script|<link|<iframe|@import|url\((?!#)/i);
  expect(html).not.toMatch(/(?:src|href)="(?!data:|#)/);
  expect(html).toContain('Stratameter 9.9.9');
  expect(html).toContain(REPORT_CAUTION.slice(0, 40));
  expect(html).toMatch(/Pixel size <b>0\.050000 nm\/px<\/b>, from scale bar/);
  expect(html).toContain('bar end location 1 % (type A)');
  expect(html).toMatch(/U = k·u with coverage factor k = 2/);
  // the grating's d-spacing, 1.25 nm, in the results table with its ±
  expect(html).toMatch(/<td class="n">1\.2\d* ± 0\.\d+<\/td>/);
  expect(html).toContain('power spectrum of a region');
  expect(html).toMatch(/window/); // the recipe names the settings
  expect(html).toMatch(/<svg class="plot"/);
  // the scale bar: a round length of about a fifth of the width
  expect(html).toMatch(/>[0-9.]+ nm<\/text><\/svg>/);
  // the labels over the image carry the same d and ± as the results table, and say k
  const figure = /<figure><svg[\s\S]*?<\/svg>/.exec(html)![0];
  const labels = [...figure.matchAll(/d (1\.2\d*) ± (0\.\d+) nm \(k = 2\)/g)];
  expect(labels.length).toBeGreaterThanOrEqual(2);
  for (const [, d, u] of labels) expect(html).toContain(`<td class="n">${d} ± ${u}</td>`);
  expect(figure).not.toMatch(/d 1\.2\d* nm/);
});

test('the embedded picture is a grey PNG no larger than asked, reduced by a whole factor', () => {
  const p = reportPicturePng(image, 100);
  const png = decode(p.png);
  expect(p.factor).toBe(3);
  expect([png.width, png.height]).toEqual([85, 85]);
  expect(png.channels).toBe(1);
  expect(() => reportPicturePng(image, 10)).toThrow(/at least 64 px/);
});

test('an uncalibrated image is reported in px and says so; a bad k is refused', () => {
  const bare = makeGreyImage(W, W, data);
  const html = imageReportHtml({ image: bare, fileName: 'x.png', records: [], software: 'S' });
  expect(html).toContain('Uncalibrated.');
  expect(html).toContain('No measurement was kept');
  expect(() => imageReportHtml({ image: bare, fileName: 'x.png', records: [], software: 'S', k: 0 })).toThrow();
});
