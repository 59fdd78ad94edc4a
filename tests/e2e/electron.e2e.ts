// The electron-diffraction panel in the browser, as a user works: open a gold ring pattern,
// calibrate the camera constant on it, open a sample's ring pattern, measure its d-spacings and
// store them in the library. Truth: the rendered camera constant and spacings
// (testing/synthetic/electron-pattern.ts; targets of issue 14: K within 0.1 %, d within 0.2 %).
// The worker measures the pattern its session holds: the panel's numbers are the core's on the
// file decoded here, and each file's bytes are sent once, to open it, never pixels afterwards.
import { join } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { calibrateCameraConstant } from '../../src/diffraction/electron/camera-constant';
import { measureElectronPattern } from '../../src/diffraction/electron/measure';
import { ringStandard, standardRings } from '../../src/diffraction/electron/standards';
import { decodeImage } from '../../src/image/decode';
import { encodeTiff } from '../../testing/encode-tiff';
import { electronPattern, type PatternSpec } from '../../testing/synthetic/electron-pattern';
import { csvRows, downloadedText, callsWithPixelsAfterOpen, computeCalls, openSession, recordComputeCalls, type Session, nextFrames, artefactDir } from './browser';

let s: Session;
const errors: string[] = [];
const K = 0.057;
const SAMPLE = [0.449, 0.258, 0.1497];

function tiff(spec: Partial<PatternSpec>): Buffer {
  const full: PatternSpec = { width: 480, height: 480, cx: 243.3, cy: 236.8, kInvNmPerPx: K, ellipticity: 0.014, majorAxisDeg: 65, beamStop: { widthPx: 18, offsetPx: 7 }, counts: 250, seed: 61, ...spec };
  const img = electronPattern(full);
  return Buffer.from(encodeTiff({ width: img.width, height: img.height, data: Float32Array.from(img.data) }));
}

const app = () => s.page.locator('strata-app');
const panel = () => s.page.locator('strata-electron-panel');

/** Opens a file and waits until its session is the one the viewer and the SAED panel have (both patterns are 480 px wide). */
async function open(name: string, buffer: Buffer, width: number): Promise<void> {
  const before = await app().evaluate((el) => (el as unknown as { session: string | null }).session);
  await app().locator('input.open').setInputFiles({ name, mimeType: 'image/tiff', buffer });
  await s.page.waitForFunction(([w, old]) => {
    const a = document.querySelector('strata-app') as unknown as { session: string | null; shadowRoot: ShadowRoot } | null;
    const v = a?.shadowRoot?.querySelector('strata-viewer') as unknown as { image?: { width: number } } | null;
    const p = a?.shadowRoot?.querySelector('strata-electron-panel') as unknown as { session: string | null } | null;
    return !!a && a.session !== null && a.session !== old && v?.image?.width === w && (!p || p.session === a.session);
  }, [width, before] as const, { timeout: 60_000 });
  await nextFrames(s.page);
}

async function idle(): Promise<void> {
  await s.page.waitForFunction(() => {
    const p = document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-electron-panel') as unknown as { busy: boolean } | null;
    return p && !p.busy;
  }, undefined, { timeout: 120_000 });
  await nextFrames(s.page);
}

beforeAll(async () => {
  s = await openSession();
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.setViewportSize({ width: 1366, height: 768 });
  await s.page.goto(s.url);
  await s.page.waitForSelector('strata-app');
  await recordComputeCalls(s.page);
}, 60_000);
afterAll(async () => {
  await s?.close();
});

test('calibrate on gold, measure a sample, store it', async () => {
  const intens = [1, 0.6, 0.45, 0.45, 0.15, 0.1, 0.2, 0.2];
  const gold = tiff({ rings: standardRings(ringStandard('au'), 8).map((r, i) => ({ gInvNm: r.gInvNm, intensity: intens[i] })) });
  await open('gold-rings.tif', gold, 480);
  await app().locator('[role="tab"]', { hasText: 'SAED' }).click();
  await nextFrames(s.page);
  await panel().locator('button', { hasText: 'Calibrate on this pattern' }).click();
  await idle();
  const k = await panel().evaluate((el) => (el as unknown as { calibration: { kInvNmPerPx: number } | null }).calibration?.kInvNmPerPx ?? null);
  expect(k).not.toBeNull();
  expect(Math.abs(k! / K - 1)).toBeLessThan(0.001);
  await expect.poll(() => panel().locator('p.num').first().textContent()).toMatch(/K = 0\.05\d+ nm⁻¹ per px ± [\d.]+ %/);
  // the worker measured the file's own pixels: the numbers of the core on the file decoded here (200 kV
  // as typed), up to the last digits where the browser's and Node's floating-point functions differ
  const here = calibrateCameraConstant(decodeImage(new Uint8Array(gold), 'gold-rings.tif'), ringStandard('au'), { voltageKv: 200 });
  expect(Math.abs(k! / here.kInvNmPerPx - 1)).toBeLessThan(1e-12);
  if (process.env.SCREENSHOT_DIR) await s.page.screenshot({ path: `${process.env.SCREENSHOT_DIR}/electron-calibrate.png` });
  // one index style everywhere: the ring table's hkl spaced, as the other panels' (Au fcc: 111, 200, 220, …)
  const hkl = (await panel().locator('table').first().locator('tbody tr td:first-child').allTextContents()).map((t) => t.trim());
  expect(hkl.slice(0, 3)).toEqual(['1 1 1', '2 0 0', '2 2 0']);
  await s.page.setViewportSize({ width: 1366, height: 768 });
  await nextFrames(s.page);
  await s.page.screenshot({ path: join(artefactDir('electron'), 'saed-rings-1366.png') });
  await s.page.setViewportSize({ width: 1400, height: 900 });

  const sample = tiff({ rings: SAMPLE.map((d, i) => ({ gInvNm: 1 / d, intensity: [1, 0.7, 0.5][i] })), cx: 236.1, cy: 246.9, seed: 62 });
  await open('sample-rings.tif', sample, 480);
  await panel().locator('select[aria-label="What to measure"]').selectOption('rings');
  await panel().locator('button', { hasText: 'Measure this pattern' }).click();
  await idle();
  const ds = await panel().evaluate((el) => (el as unknown as { measurement: { rings: { dNm: number }[] } | null }).measurement?.rings.map((r) => r.dNm) ?? []);
  expect(ds).toHaveLength(3);
  ds.forEach((d, i) => expect(Math.abs(d / SAMPLE[i] - 1)).toBeLessThan(0.002));
  const camera = { kInvNmPerPx: here.kInvNmPerPx, relUncertainty: here.relUncertainty, distortion: here.distortion, detail: here.detail };
  const dsHere = measureElectronPattern(decodeImage(new Uint8Array(sample), 'sample-rings.tif'), camera, { what: 'rings' }).rings.map((r) => r.dNm);
  expect(dsHere).toHaveLength(3);
  ds.forEach((d, i) => expect(Math.abs(d / dsHere[i] - 1)).toBeLessThan(1e-12));
  // the one export menu: the d-spacings as CSV, units and k in the header, the panel's values
  const csv = await downloadedText(s.page, () => panel().locator('strata-export-menu.spacings-export button.export-csv').click());
  const { header, rows } = csvRows(csv.text);
  expect(header).toEqual(['kind', 'number', 'radiusPx', 'dNm', 'uDNm', 'expandedDNm', 'coverageFactorK', 'directionDeg', 'from']);
  expect(rows.map((r) => Number(r[3]))).toEqual(ds);
  for (const r of rows) expect(Number(r[5])).toBeCloseTo(2 * Number(r[4]), 12);
  await panel().locator('button', { hasText: 'Store in the library' }).click();
  await expect.poll(() => app().locator('.status, [role="status"]').first().textContent(), { timeout: 10_000 }).toMatch(/Stored .* 3 d-spacings/);
  if (process.env.SCREENSHOT_DIR) await s.page.screenshot({ path: `${process.env.SCREENSHOT_DIR}/electron-measure.png` });
  // each pattern's bytes went to the worker once, to open its session; the measurements sent ids
  const calls = await computeCalls(s.page);
  expect(calls.filter((c) => c.name === 'openImage')).toHaveLength(2);
  expect(calls.map((c) => c.name)).toEqual(expect.arrayContaining(['cameraConstant', 'electronPattern']));
  expect(callsWithPixelsAfterOpen(calls)).toEqual([]);
  expect(errors).toEqual([]);
}, 240_000);
