// The viewer and the library panel in the browser: a large 16-bit TIFF opens and is drawn from a
// pyramid level, keyboard zoom and pan, the drawing tools report image-pixel coordinates, the
// scale bar and nm readout follow the calibration, delete asks first, export and import round-trip.
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { encodeTiff } from '../../testing/encode-tiff';
import { foreignRequests, openSession, type Session, nextFrames } from './browser';

let s: Session;
const dir = mkdtempSync(join(tmpdir(), 'strata-viewer-'));
const errors: string[] = [];

/** Horizontal fringes of period 16 px on a 16-bit ramp; 0.125 nm per pixel as TIFF resolution. */
function fringeTiff(width: number, height: number): string {
  const data = new Uint16Array(width * height);
  for (let y = 0; y < height; y++) {
    const f = 12000 + 9000 * Math.cos((2 * Math.PI * y) / 16);
    for (let x = 0; x < width; x++) data[y * width + x] = f + (x * 20000) / width;
  }
  const path = join(dir, `fringes-${width}x${height}.tif`);
  // 0.125 nm per pixel = 1e7 / 0.125 = 8e7 pixels per cm.
  writeFileSync(path, encodeTiff({ width, height, data, resolution: { x: 8e7, unit: 'cm' } }));
  return path;
}

const viewer = () => s.page.locator('strata-viewer');
const viewerState = () => viewer().evaluate((el) => {
  const v = el as unknown as { zoom: number; cx: number; cy: number; dataset: DOMStringMap };
  return { zoom: v.zoom, cx: v.cx, cy: v.cy, level: Number(v.dataset.level) };
});

const settle = () => nextFrames(s.page);

beforeAll(async () => {
  s = await openSession();
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.goto(s.url);
  await s.page.waitForSelector('strata-app');
});
afterAll(async () => {
  await s?.close();
  console.log(`screenshots in ${dir}`);
});

test('an 8192 × 8192 16-bit image opens and is drawn from a down-sampled level while fitted', async () => {
  const big = fringeTiff(8192, 8192);
  await s.page.locator('strata-app input.open').setInputFiles(big);
  await s.page.waitForFunction(() => !!document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-viewer')?.dataset.level, undefined, { timeout: 150_000 });
  await settle();
  const fitted = await viewerState();
  expect(fitted.level).toBeGreaterThanOrEqual(3); // 8192 px into a view under 1400 px wide
  expect(await s.page.locator('strata-app .message').textContent()).toMatch(/8192 × 8192 px, 16-bit, 0\.1250 nm\/px/);
  await s.page.screenshot({ path: join(dir, 'big-fitted.png') });

  // Keyboard: 1 shows actual size (full resolution), + zooms in, arrows pan, F fits again.
  await viewer().locator('.stage').focus();
  await s.page.keyboard.press('1');
  await settle();
  expect((await viewerState()).level).toBe(0);
  const before = await viewerState();
  await s.page.keyboard.press('+');
  await s.page.keyboard.press('ArrowRight');
  await settle();
  const after = await viewerState();
  expect(after.zoom).toBeCloseTo(before.zoom * 1.25, 6);
  expect(after.cx).toBeGreaterThan(before.cx);
  await s.page.keyboard.press('f');
  await settle();
  expect((await viewerState()).zoom).toBeCloseTo(fitted.zoom, 6);
});

test('line and rectangle tools report image-pixel coordinates; the scale bar and nm readout follow the calibration', async () => {
  await s.page.locator('strata-app input.open').setInputFiles(fringeTiff(512, 384));
  await s.page.waitForFunction(() => {
    const v = document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-viewer') as unknown as { image?: { width: number } };
    return v?.image?.width === 512;
  });
  await settle();
  const st = await viewerState();
  const box = (await viewer().locator('.stage').boundingBox())!;
  const toScreen = (x: number, y: number) => [box.x + box.width / 2 + (x - st.cx) * st.zoom, box.y + box.height / 2 + (y - st.cy) * st.zoom];

  await s.page.evaluate(() => {
    const w = window as unknown as { drawn: unknown[] };
    w.drawn = [];
    document.addEventListener('line-drawn', (e) => w.drawn.push({ type: 'line', ...(e as CustomEvent).detail }));
    document.addEventListener('rect-drawn', (e) => w.drawn.push({ type: 'rect', ...(e as CustomEvent).detail }));
  });
  await viewer().locator('button', { hasText: 'Line profile' }).click();
  const [ax, ay] = toScreen(100, 50);
  const [bx, by] = toScreen(100, 250);
  await s.page.mouse.move(ax, ay);
  await s.page.mouse.down();
  await s.page.mouse.move(bx, by, { steps: 5 });
  await s.page.mouse.up();
  await viewer().locator('.stage').focus();
  await s.page.keyboard.press(']');

  await viewer().locator('button', { hasText: 'Region' }).click();
  const [rx, ry] = toScreen(200, 100);
  const [sx, sy] = toScreen(328, 164);
  await s.page.mouse.move(rx, ry);
  await s.page.mouse.down();
  await s.page.mouse.move(sx, sy, { steps: 4 });
  await s.page.mouse.up();

  const drawn = (await s.page.evaluate(() => (window as unknown as { drawn: Record<string, number | string>[] }).drawn));
  const lines = drawn.filter((d) => d.type === 'line');
  const tol = 1.5 / st.zoom + 0.01; // one screen pixel of rounding either way
  expect(lines.length).toBe(2);
  expect(lines[0].x0 as number).toBeCloseTo(100, 0);
  expect(Math.abs((lines[0].y0 as number) - 50)).toBeLessThan(tol);
  expect(Math.abs((lines[0].y1 as number) - 250)).toBeLessThan(tol);
  expect(lines[1].widthPx).toBe((lines[0].widthPx as number) + 1);
  const rect = drawn.find((d) => d.type === 'rect')!;
  expect(rect).toMatchObject({ x: 200, y: 100, width: 128, height: 64 });

  // Cursor readout: pixel (256, 192) is 32 nm, 24 nm at 0.125 nm/px.
  const [cx, cy] = toScreen(256.5, 192.5);
  await s.page.mouse.move(cx, cy);
  const readout = await viewer().locator('.readout').textContent();
  expect(readout).toMatch(/x nm\s*32\.00/);
  expect(readout).toMatch(/y nm\s*24\.00/);
  const bar = await viewer().locator('svg .scalebar text').textContent();
  expect(bar).toMatch(/^(1|2|5|10|20|50) nm$/);
  await s.page.screenshot({ path: join(dir, 'tools.png') });
});

test('with the keyboard alone, a region is drawn from a cross-hair moved by the arrow keys', async () => {
  await viewer().locator('button', { hasText: 'Region' }).focus();
  await s.page.keyboard.press('Enter'); // the Region button: already on, stays on
  await viewer().locator('.stage').focus();
  const st = await viewerState();
  const start = { x: Math.round(st.cx), y: Math.round(st.cy) };
  await s.page.keyboard.press('Enter');
  for (let i = 0; i < 3; i++) await s.page.keyboard.press('Shift+ArrowRight');
  for (let i = 0; i < 2; i++) await s.page.keyboard.press('Shift+ArrowDown');
  await s.page.keyboard.press('ArrowLeft');
  await s.page.keyboard.press('Enter');
  const drawn = await s.page.evaluate(() => (window as unknown as { drawn: Record<string, number | string>[] }).drawn);
  const step = Math.max(1, Math.round(1 / st.zoom));
  expect(drawn[drawn.length - 1]).toEqual({ type: 'rect', x: start.x, y: start.y, width: 29 * step, height: 20 * step });
  await s.page.keyboard.press('Escape');
});

test('the library asks before deleting, and export then import brings the images back', async () => {
  await s.page.locator('strata-app [role="tab"]', { hasText: 'Library' }).click();
  const items = s.page.locator('strata-library li');
  await expect.poll(() => items.count()).toBe(2);
  const big = items.filter({ hasText: 'fringes-8192x8192.tif' });
  await big.locator('button', { hasText: 'Delete' }).click();
  expect(await big.locator('.confirm').textContent()).toMatch(/Delete this image/);
  await big.locator('button', { hasText: 'Keep' }).click();
  expect(await items.count()).toBe(2);
  await big.locator('button', { hasText: 'Delete' }).click();
  await big.locator('button.danger', { hasText: /^Delete$/ }).click();
  await expect.poll(() => items.count()).toBe(1);

  const download = s.page.waitForEvent('download');
  await s.page.locator('strata-library button', { hasText: 'Export all' }).click();
  const file = join(dir, 'library.json');
  await (await download).saveAs(file);
  const exported = JSON.parse(readFileSync(file, 'utf8'));
  expect(exported.format).toBe('stratameter-library');
  expect(exported.images.map((i: { fileName: string }) => i.fileName)).toEqual(['fringes-512x384.tif']);

  const small = items.filter({ hasText: 'fringes-512x384.tif' });
  await small.locator('button', { hasText: 'Delete' }).click();
  await small.locator('button.danger', { hasText: /^Delete$/ }).click();
  await expect.poll(() => items.count()).toBe(0);

  await s.page.locator('strata-library input.import').setInputFiles(file);
  await expect.poll(() => items.count()).toBe(1);
  expect(await s.page.locator('strata-app .message').textContent()).toMatch(/Imported library\.json: 1 image, 0 results/);
  await s.page.screenshot({ path: join(dir, 'library.png') });
});

test('files dropped on the window open like chosen ones', async () => {
  await s.page.locator('strata-app button', { hasText: 'Close image' }).click();
  const bytes = [...readFileSync(fringeTiff(96, 64))];
  await s.page.evaluate((b) => {
    const dt = new DataTransfer();
    dt.items.add(new File([new Uint8Array(b)], 'dropped-fringes.tif', { type: 'image/tiff' }));
    const app = document.querySelector('strata-app')!;
    app.dispatchEvent(new DragEvent('dragover', { dataTransfer: dt, bubbles: true, cancelable: true }));
    app.dispatchEvent(new DragEvent('drop', { dataTransfer: dt, bubbles: true, cancelable: true }));
  }, bytes);
  await s.page.waitForFunction(() => {
    const v = document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-viewer') as unknown as { image?: { width: number } };
    return v?.image?.width === 96;
  });
  expect(await s.page.locator('strata-app .message').textContent()).toMatch(/^dropped-fringes\.tif: 96 × 64 px, 16-bit/);
});

test('a file that is not an image gives a readable message on the message line', async () => {
  const bad = join(dir, 'notes.tif');
  writeFileSync(bad, 'these are my notes, not a micrograph');
  await s.page.locator('strata-app input.open').setInputFiles(bad);
  const line = s.page.locator('strata-app .message.error');
  await line.waitFor();
  expect(await line.textContent()).toMatch(/notes\.tif/);
  expect(foreignRequests(s.requests, s.url)).toEqual([]);
  expect(errors).toEqual([]);
});
