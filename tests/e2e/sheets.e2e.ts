// The sheets panel in the browser, on the demo overview (truth in demo-data/index.json: 26
// tactoids of 2 to 10 layers, layer period 1.25 nm at 0.5 nm/px). Automatic detection with
// review, the statistics table, and a line drawn across one tactoid.
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { openSession, type Session, nextFrames, imageToPage } from './browser';

let s: Session;
const dir = mkdtempSync(join(tmpdir(), 'strata-sheets-'));
const errors: string[] = [];

interface Tactoid { centreXPx: number; centreYPx: number; sheetDirectionDeg: number; layers: number; lengthNm: number }
const truth = (JSON.parse(readFileSync('demo-data/index.json', 'utf8')) as { file: string; truth: { tactoids?: Tactoid[] } }[])
  .find((d) => d.file === 'tactoid-film_overview.tif')!.truth.tactoids!;
const NM_PER_PX = 0.5;

interface PanelSheet { status: string; layers: number; thicknessNm: number | null; center: [number, number] }
const app = () => s.page.locator('strata-app');
const panel = () => s.page.locator('strata-sheets-panel');
const viewer = () => s.page.locator('strata-viewer');
const panelSheets = () => panel().evaluate((el) => {
  const p = el as unknown as { sheets: { status: string; layers: number; thicknessNm: number | null; centerPx?: [number, number]; across: [[number, number], [number, number]] }[]; busy: boolean };
  return JSON.parse(JSON.stringify(p.sheets.map((q) => ({ status: q.status, layers: q.layers, thicknessNm: q.thicknessNm, center: [(q.across[0][0] + q.across[1][0]) / 2, (q.across[0][1] + q.across[1][1]) / 2] })))) as PanelSheet[];
});

const settle = () => nextFrames(s.page);

const toPage = (x: number, y: number) => imageToPage(s.page, x, y);

/** The true tactoid nearest a point, when within half its length (the bench's matching rule). */
function tactoidAt(x: number, y: number): Tactoid | null {
  let best: Tactoid | null = null;
  let bestD = Infinity;
  for (const t of truth) {
    const d = Math.hypot(t.centreXPx - x, t.centreYPx - y);
    if (d < bestD) {
      bestD = d;
      best = t;
    }
  }
  return best && bestD < best.lengthNm / NM_PER_PX / 2 ? best : null;
}

beforeAll(async () => {
  s = await openSession();
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.goto(s.url);
  await s.page.waitForSelector('strata-app');
  await app().locator('button.demo', { hasText: 'Tactoid film, overview' }).click();
  await s.page.waitForFunction(() => {
    const v = document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-viewer') as unknown as { image?: { width: number } };
    return v?.image?.width === 1024;
  }, undefined, { timeout: 60_000 });
  await app().locator('[role="tab"]', { hasText: 'Sheets' }).click();
  await settle();
});
afterAll(async () => {
  await s?.close();
});

test('automatic sheets lie on true tactoids, with statistics that follow the review', async () => {
  await panel().locator('button', { hasText: 'Find sheets in the image' }).click();
  await expect.poll(async () => (await panelSheets()).length, { timeout: 120_000 }).toBeGreaterThan(0);
  const sheets = await panelSheets();
  // README (Sheets, Accuracy): 10 sheets on this overview, all on a true tactoid, 9 with its layer count
  const onTactoid = sheets.filter((q) => tactoidAt(q.center[0], q.center[1]));
  expect(onTactoid.length).toBeGreaterThanOrEqual(Math.ceil(0.8 * sheets.length));
  const right = onTactoid.filter((q) => tactoidAt(q.center[0], q.center[1])!.layers === q.layers);
  expect(right.length).toBeGreaterThanOrEqual(Math.ceil(0.7 * onTactoid.length));
  for (const q of sheets) {
    expect(q.status).toBe('auto');
    expect(q.layers).toBeGreaterThanOrEqual(2);
    // thickness = layers × period: each sheet's period within 20 % of the demo's 1.25 nm (sheets
    // of two or three layers read high, README: Sheets, Accuracy) and their mean within 5 %
    expect(Math.abs(q.thicknessNm! / q.layers - 1.25)).toBeLessThan(0.25);
  }
  const meanPeriodNm = sheets.reduce((acc, q) => acc + q.thicknessNm! / q.layers, 0) / sheets.length;
  expect(Math.abs(meanPeriodNm - 1.25)).toBeLessThan(0.0625);
  // the statistics: one row per statistic, a column for thickness and one for layers
  const table = panel().locator('table.stats');
  await expect.poll(async () => (await table.locator('tr').allTextContents()).length).toBe(8);
  const nRow = await table.locator('tr', { hasText: /^n/ }).locator('td').allTextContents();
  expect(nRow).toEqual([String(sheets.length), String(sheets.length)]);
  expect(await table.locator('tr', { hasText: '95 % CI of the mean' }).count()).toBe(1);
  // the whole table fits the panel (no clipped column)
  const fits = await table.evaluate((el) => el.scrollWidth <= (el.parentElement as HTMLElement).clientWidth + 1);
  expect(fits).toBe(true);
  // rejecting a sheet takes it out of the statistics
  await panel().locator('button[title="Reject"]').first().click();
  await expect.poll(async () => (await table.locator('tr', { hasText: /^n/ }).locator('td').allTextContents())[0]).toBe(String(sheets.length - 1));
  await s.page.screenshot({ path: join(dir, 'automatic.png') });
  expect(errors).toEqual([]);
});

test('a 25 px line across a tactoid counts its layers', async () => {
  // the 8-layer tactoid at (338, 293), layers along 128° (demo truth), so its normal is at 38°
  const t = truth.find((q) => q.layers === 8 && Math.abs(q.centreXPx - 338) < 2)!;
  const normal = ((t.sheetDirectionDeg - 90) * Math.PI) / 180;
  const ux = Math.cos(normal);
  const uy = -Math.sin(normal);
  await viewer().evaluate((el) => {
    const v = el as unknown as { tool: string; lineWidthPx: number };
    v.tool = 'line';
    v.lineWidthPx = 25;
  });
  const a = await toPage(t.centreXPx - 30 * ux, t.centreYPx - 30 * uy);
  const b = await toPage(t.centreXPx + 30 * ux, t.centreYPx + 30 * uy);
  await s.page.mouse.move(a[0], a[1]);
  await s.page.mouse.down();
  await s.page.mouse.move(b[0], b[1], { steps: 6 });
  await s.page.mouse.up();
  await panel().locator('button', { hasText: 'Measure the line' }).click();
  await expect.poll(async () => panel().evaluate((el) => (el as unknown as { lineResult: { sheets: unknown[] } | null }).lineResult?.sheets.length ?? -1)).toBeGreaterThanOrEqual(1);
  const layers = await panel().evaluate((el) => (el as unknown as { lineResult: { sheets: { layers: number }[] } }).lineResult.sheets.map((q) => q.layers));
  expect(layers).toEqual([8]);
  // the overlay is the Sheets panel's (its sheets with their layer counts), not the Periods
  // panel's analysis of the same line in the background
  const labels = await viewer().evaluate((el) => (el as unknown as { shapes: { label?: string }[] }).shapes.map((q) => q.label ?? ''));
  expect(labels.some((l) => / L$/.test(l))).toBe(true);
  expect(labels.some((l) => l.startsWith('profile'))).toBe(false);
  await s.page.screenshot({ path: join(dir, 'line.png') });
  expect(errors).toEqual([]);
});
