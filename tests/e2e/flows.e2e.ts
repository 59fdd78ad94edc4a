// Flows of the shell: the start screen's diffraction card opens its pattern in the diffraction
// panel; opening several files at once lists each refused file with its reason; a structure file
// is handed to the diffraction panel (or refused by name while that panel cannot take one).
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { openSession, type Session, nextFrames, artefactDir } from './browser';

let s: Session;
const errors: string[] = [];
const dir = artefactDir('flows');
const app = () => s.page.locator('strata-app');

beforeAll(async () => {
  s = await openSession();
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.setViewportSize({ width: 1366, height: 768 });
  await s.page.goto(s.url);
  await app().locator('[role="tab"]', { hasText: 'Periods' }).waitFor();
});
afterAll(async () => {
  await s?.close();
});

test('the diffraction card on the start screen opens its pattern in the diffraction panel', async () => {
  await app().locator('button.demo', { hasText: 'powder XRD' }).click();
  const panel = s.page.locator('strata-diffraction-panel');
  await expect.poll(() => panel.evaluate((el) => !!(el as unknown as { analysis: unknown }).analysis), { timeout: 60_000 }).toBe(true);
  expect(await app().locator('[role="tab"][aria-selected="true"]').textContent()).toMatch(/Diffraction/);
  await nextFrames(s.page);
  await s.page.screenshot({ path: join(dir, 'diffraction-card.png') });
  // the pattern is in the shared plot element: enlarged over the page it is read at full width
  const plot = panel.locator('strata-plot');
  await plot.locator('button.enlarge').click();
  const big = (await plot.locator('dialog .chart').boundingBox())!;
  expect(big.width).toBeGreaterThanOrEqual(1000);
  await s.page.screenshot({ path: join(dir, 'diffraction-enlarged.png') });
  await s.page.keyboard.press('Escape');
  await expect.poll(() => plot.locator('dialog').count()).toBe(0);
});

test('opening several files lists each refused file with its reason', async () => {
  const png = readFileSync(join('dist', 'demo', 'lamellar-mesophase.png'));
  await app().locator('input.open').setInputFiles([
    { name: 'notes.tif', mimeType: 'image/tiff', buffer: Buffer.from('this is not a TIFF file at all') },
    { name: 'mesophase.png', mimeType: 'image/png', buffer: png },
  ]);
  const list = app().locator('.refused li');
  await expect.poll(() => list.count(), { timeout: 30_000 }).toBe(1);
  expect(await list.first().textContent()).toMatch(/^notes\.tif: .+/);
  expect(await app().locator('.message').textContent()).toMatch(/Opened 1 of 2 files/);
  await s.page.screenshot({ path: join(dir, 'refused-files.png') });
  await app().locator('.refused button', { hasText: 'Dismiss' }).click();
  expect(await list.count()).toBe(0);
});

test('a structure file goes to the diffraction panel, for its spot indexing', async () => {
  const cif = 'data_test\n_cell_length_a 5.0\n_cell_length_b 5.0\n_cell_length_c 10.0\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\n';
  await app().locator('input.open').setInputFiles([{ name: 'layered.cif', mimeType: 'chemical/x-cif', buffer: Buffer.from(cif) }]);
  await expect.poll(() => app().locator('.message').textContent()).toMatch(/layered\.cif: handed to the Diffraction panel as a structure file/);
  expect(await app().locator('[role="tab"][aria-selected="true"]').textContent()).toMatch(/Diffraction/);
  // the panel's spot indexing now uses it
  const panel = s.page.locator('strata-diffraction-panel');
  expect(await panel.evaluate((el) => [(el as unknown as { cifName: string }).cifName, (el as unknown as { zonePhase: string }).zonePhase])).toEqual(['layered.cif', 'file']);
  expect(errors).toEqual([]);
});

test('the keyboard alone measures a region typed in image pixels', async () => {
  // the mesophase demo opened by the multi-file test above: a lamellar fingerprint pattern of 3.9 nm period
  await app().locator('[role="tab"]', { hasText: 'Periods' }).click();
  const panel = s.page.locator('strata-measure-panel');
  await panel.locator('details.typed summary').focus();
  await s.page.keyboard.press('Enter'); // opens the details
  await panel.locator('input.typed-rect').focus();
  await s.page.keyboard.type('200, 200, 256, 256');
  await s.page.keyboard.press('Enter');
  await expect.poll(() => panel.evaluate((el) => (el as unknown as { spots: unknown[] }).spots.length), { timeout: 60_000 }).toBeGreaterThan(0);
  expect(await panel.evaluate((el) => (el as unknown as { spectrumRect: unknown }).spectrumRect)).toEqual({ x: 200, y: 200, width: 256, height: 256 });
  // a region outside the image is refused by name
  await panel.locator('input.typed-rect').fill('700, 700, 256, 256');
  await s.page.keyboard.press('Enter');
  await expect.poll(() => app().locator('.message').textContent()).toMatch(/does not lie inside the 768 × 768 px image/);
  await s.page.screenshot({ path: join(dir, 'typed-region.png') });
  expect(errors).toEqual([]);
});
