// The image session in the browser, on the lattice-fringe demo (1024 × 1024 px, 1.25 nm fringes =
// 25 px at 0.05 nm/px, demo-data/index.json): the worker holds the image, a 1024² region's
// spectrum is computed once, clicking spots on it runs no transform of the region (counted by the
// session) and the time from click to numbers is read from the browser's performance timeline;
// a new calibration re-expresses the numbers and measures nothing again; the results export as
// CSV and JSON through the one writer; the file's bytes go to the worker once and no later call carries pixels.
import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { openSession, type Session, nextFrames, imageToPage, drag as dragOnPage, openDemoImage, recordComputeCalls, computeCalls, callsWithPixelsAfterOpen } from './browser';

let s: Session;
const errors: string[] = [];

interface Stats { regionTransforms: number; cacheHits: number }

const app = () => s.page.locator('strata-app');
const panel = () => s.page.locator('strata-measure-panel');

const stats = () => panel().evaluate(async (el) => {
  const p = el as unknown as { compute: { call(n: string, a: unknown): Promise<Stats> }; session: string };
  return p.compute.call('sessionStats', { sessionId: p.session });
});
const spots = () => panel().evaluate((el) => (el as unknown as { spots: { n: number; periodPx: number; fx: number; fy: number; added: boolean; budgeting?: boolean }[] }).spots
  .map((t) => ({ n: t.n, periodPx: t.periodPx, fx: t.fx, fy: t.fy, added: t.added, budgeting: !!t.budgeting })));

const drag = (from: [number, number], to: [number, number]) => dragOnPage(s.page, from, to, 8);

beforeAll(async () => {
  s = await openSession();
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.goto(s.url);
  await recordComputeCalls(s.page);
  await openDemoImage(s.page, 'Tactoid lattice fringes', 1024, 'Periods');
});
afterAll(async () => {
  await s?.close();
});

test('clicking spots of a 1024² region runs no transform; click → numbers from the performance timeline', async () => {
  await panel().locator('button', { hasText: 'Draw region' }).click();
  // from the image's corner to beyond the opposite one: the viewer clips to the whole 1024 × 1024 image
  await drag(await imageToPage(s.page, 0.3, 0.3), await imageToPage(s.page, 1050, 1050));
  await expect.poll(async () => (await spots()).length, { timeout: 120_000 }).toBeGreaterThan(0);
  const rect = await panel().evaluate((el) => (el as unknown as { spectrumRect: { width: number; height: number } }).spectrumRect);
  expect([rect.width, rect.height]).toEqual([1024, 1024]);
  const before = await stats(); // answered after the worker prepared what a click needs
  const top = (await spots())[0];
  // Demo truth: 25 px (demo-data/index.json)
  expect(Math.abs(top.periodPx - 25) / 25).toBeLessThan(0.01);

  const timings: number[] = [];
  const budgetTimings: number[] = [];
  // take the strongest spot out of the table, so that each click below adds it again
  await panel().locator('tbody tr').first().locator('button', { hasText: '×' }).click();
  for (let i = 0; i < 5; i++) {
    // remove the spot added by the last click, then click the strongest spot's Friedel mate, one bin off
    for (const t of (await spots()).filter((x) => x.added)) await panel().locator('tbody tr', { hasText: `#${t.n}` }).locator('button', { hasText: '×' }).click();
    const sp = await panel().evaluate((el) => (el as unknown as { spectrum: { width: number; height: number } }).spectrum);
    const box = (await panel().locator('svg.marks').boundingBox())!;
    const [mx, my] = await panel().evaluate((el, b) => (el as unknown as { binToCss(u: number, v: number): [number, number] }).binToCss(b[0], b[1]),
      [-top.fx * sp.width + (i % 2 ? 1 : -1), -top.fy * sp.height]);
    await s.page.evaluate(() => performance.clearMeasures());
    await s.page.mouse.click(box.x + 1 + mx, box.y + 1 + my);
    await expect.poll(async () => (await spots()).some((t) => t.added && !t.budgeting), { timeout: 60_000 }).toBe(true);
    const ms = await s.page.evaluate(() => performance.getEntriesByName('strata-spot-click-to-numbers').map((e) => e.duration));
    expect(ms).toHaveLength(1);
    timings.push(ms[0]);
    await expect.poll(() => s.page.evaluate(() => performance.getEntriesByName('strata-spot-click-to-budget').length)).toBe(1);
    budgetTimings.push(await s.page.evaluate(() => performance.getEntriesByName('strata-spot-click-to-budget')[0].duration));
    const added = (await spots()).find((t) => t.added)!;
    expect(Math.abs(added.periodPx - top.periodPx)).toBeLessThan(0.05);
  }
  const after = await stats();
  // the clicks were answered from the session's cache: not one transform of the region
  expect(after.regionTransforms).toBe(before.regionTransforms);
  expect(after.cacheHits).toBeGreaterThanOrEqual(before.cacheHits + 5);
  const row = (name: string, t: number[]) => {
    const o = [...t].sort((a, b) => a - b);
    return `| ${name} | ${o[2].toFixed(1)} | ${o[4].toFixed(1)} | ${t.map((v) => v.toFixed(1)).join(', ')} |`;
  };
  console.log(['', '| 1024² region, from a click on the spectrum (ms, performance.measure) | median | max | runs |', '|---|---:|---:|---:|',
    row('to the spot\'s numbers in the table (no transform)', timings), row('to its full budget (refit where its fringes are)', budgetTimings), ''].join('\n'));
}, 300_000);

test('a new calibration re-expresses the numbers shown and measures nothing again', async () => {
  const before = await stats();
  const read = async () => Number(((await panel().locator('tbody tr').first().locator('.dnm').textContent()) ?? '').split('±')[0]);
  const d1 = await read();
  // 0.05 → 0.1 nm/px (the file's is 0.05 nm/px, demo-data/index.json): every d in nm doubles
  await panel().evaluate((el) => el.dispatchEvent(new CustomEvent('calibration-changed', {
    detail: { calibration: { nmPerPx: 0.1, source: 'manual', relUncertainty: 0.02, detail: 'test', parts: [{ name: 'stated', rel: 0.02, type: 'B' }] } }, bubbles: true, composed: true,
  })));
  await expect.poll(read).toBeCloseTo(2 * d1, 3);
  expect(await panel().locator('.cal').textContent()).toMatch(/0\.1000 nm\/px/);
  const after = await stats();
  expect(after.regionTransforms).toBe(before.regionTransforms);
});

test('the results export as CSV and JSON through the one writer', async () => {
  const [csvDownload] = await Promise.all([s.page.waitForEvent('download'), panel().locator('button.export-csv').click()]);
  const csv = readFileSync((await csvDownload.path())!, 'utf8');
  const [head, ...rows] = csv.trimEnd().split('\r\n');
  expect(head.split(',')).toEqual(expect.arrayContaining(['file', 'tool', 'periodPx', 'uStatisticalPx', 'periodNm', 'uCalibrationNm', 'expandedUncertaintyNm', 'coverageFactorK', 'fxPerPx']));
  expect(rows.length).toBe((await spots()).length);
  const cols = head.split(',');
  const first = rows[0].split(',');
  expect(first[cols.indexOf('tool')]).toBe('spectrum');
  expect(first[cols.indexOf('file')]).toBe('tactoid-fringes_hr.tif');
  // the calibration in force (0.1 nm/px from the previous test) is the one written
  expect(Number(first[cols.indexOf('nmPerPx')])).toBe(0.1);
  const [jsonDownload] = await Promise.all([s.page.waitForEvent('download'), panel().locator('button.export-json').click()]);
  const doc = JSON.parse(readFileSync((await jsonDownload.path())!, 'utf8'));
  expect(doc.format).toBe('stratameter-measurements');
  expect(doc.measurements[0].tool).toBe('spectrum');
  expect(doc.measurements[0].periodicities.length).toBe(rows.length);
  expect(doc.measurements[0].budgets[0].periodNm).toBeCloseTo(Number(first[cols.indexOf('periodNm')]), 3);
  // the file went to the worker once, to open the session, as a Blob (the worker reads it strip by
  // strip; the page sent no bytes); every later call sent its id
  const calls = await computeCalls(s.page);
  expect(calls.filter((c) => c.name === 'openImage')).toHaveLength(1);
  expect(calls.find((c) => c.name === 'openImage')!.arrays).toEqual([]);
  expect(calls.map((c) => c.name)).toEqual(expect.arrayContaining(['spectrum', 'spotNear', 'spotBudget', 'recalibrate']));
  expect(callsWithPixelsAfterOpen(calls)).toEqual([]);
  expect(errors).toEqual([]);
});
