// The installed app offline: the service worker precaches everything (opencv.js included), a
// demo micrograph opens and is drawn with no network, it is kept in the library across reloads,
// and no request ever leaves 127.0.0.1.
import { mkdtempSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { foreignRequests, openSession, waitForPanelsLoaded, type Session } from './browser';

let s: Session;
const shots = mkdtempSync(join(tmpdir(), 'strata-shots-'));
const errors: string[] = [];

beforeAll(async () => {
  s = await openSession();
  s.page.on('pageerror', (e) => errors.push(String(e)));
});
afterAll(async () => {
  await s?.close();
  console.log(`screenshots in ${shots}`);
});

/** Statistics of the viewer's canvas: how many pixels differ from the background, grey spread. */
async function canvasStats() {
  return s.page.locator('strata-viewer').evaluate((el) => {
    const c = el.shadowRoot!.querySelector('canvas.view') as HTMLCanvasElement;
    const d = c.getContext('2d')!.getImageData(0, 0, c.width, c.height).data;
    let image = 0;
    let sum = 0;
    let sum2 = 0;
    const values = new Set<number>();
    for (let i = 0; i < d.length; i += 4) {
      if (d[i] === 0x0b && d[i + 1] === 0x0e && d[i + 2] === 0x11) continue; // the stage background
      image++;
      sum += d[i];
      sum2 += d[i] * d[i];
      values.add(d[i]);
    }
    const mean = image ? sum / image : 0;
    return { pixels: c.width * c.height, image, distinct: values.size, sd: image ? Math.sqrt(sum2 / image - mean * mean) : 0 };
  });
}

async function waitForDrawn() {
  await s.page.waitForFunction(() => {
    const v = document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-viewer');
    return !!v?.dataset.level;
  });
}

test('first visit: the service worker installs, precaches opencv.js and takes control after a reload', async () => {
  await s.page.goto(s.url);
  await s.page.waitForSelector('strata-app');
  await s.page.evaluate(async () => { await navigator.serviceWorker.ready; });
  await s.page.reload();
  await s.page.waitForFunction(() => navigator.serviceWorker.controller !== null);
  const cached: string[] = await s.page.evaluate(async () => {
    const urls: string[] = [];
    for (const name of await caches.keys()) for (const r of await (await caches.open(name)).keys()) urls.push(r.url);
    return urls;
  });
  const paths = cached.map((u) => new URL(u).pathname);
  expect(paths.some((p) => /^\/chunks\/opencv-[\w-]+\.js$/.test(p))).toBe(true);
  for (const p of ['/index.html', '/app.js', '/compute-worker.js', '/app.css', '/manifest.webmanifest', '/demo/index.json']) {
    expect(paths).toContain(p);
  }
  // every chunk of the build, each panel's own chunk among them (they load after start-up, when
  // idle or when their tab is opened, so a chunk missing from the precache breaks that tab offline)
  const chunks = readdirSync('dist/chunks').filter((f) => f.endsWith('.js')).map((f) => `/chunks/${f}`);
  expect(chunks.filter((c) => /-panel-[\w-]+\.js$/.test(c)).length).toBeGreaterThanOrEqual(6);
  expect(chunks.filter((c) => !paths.includes(c))).toEqual([]);
});

test('the web app manifest makes the app installable: standalone, with its icons served', async () => {
  const manifest = await s.page.evaluate(async () => {
    const href = document.querySelector('link[rel="manifest"]')!.getAttribute('href')!;
    const m = await (await fetch(href)).json();
    const icons = await Promise.all(m.icons.map(async (i: { src: string }) => (await fetch(i.src)).status));
    return { ...m, iconStatus: icons };
  });
  // Installability needs a name, a start URL, a standalone display and 192 and 512 px icons (common practice, from memory of Chromium's criteria).
  expect(manifest.name).toBe('Stratameter');
  expect(manifest.display).toBe('standalone');
  expect(manifest.start_url).toBeTruthy();
  expect(manifest.icons.map((i: { sizes: string }) => i.sizes)).toEqual(expect.arrayContaining(['192x192', '512x512']));
  expect(manifest.iconStatus.every((st: number) => st === 200)).toBe(true);
});

test('offline: a demo micrograph opens, is drawn, is stored, and the measuring engine loads', async () => {
  await s.context.setOffline(true);
  await s.page.reload();
  const demo = s.page.locator('strata-app button.demo').first();
  await demo.waitFor();
  await s.page.screenshot({ path: join(shots, '1-start-offline.png') });
  const title = (await demo.locator('b').textContent())!.trim();
  await demo.click();
  await waitForDrawn();
  const stats = await canvasStats();
  expect(stats.image).toBeGreaterThan(stats.pixels * 0.2);
  expect(stats.distinct).toBeGreaterThan(16);
  expect(stats.sd).toBeGreaterThan(10);
  await s.page.locator('strata-app [role="tab"]', { hasText: 'Library' }).click();
  await expect.poll(() => s.page.locator('strata-library li').count()).toBe(1);
  expect(await s.page.locator('strata-app .message').textContent()).toMatch(/Kept in the library/);
  // opencv.js (about 11 MB) starts in the compute worker from the precache.
  await s.page.waitForFunction(() => !!(document.querySelector('strata-app') as HTMLElement | null)?.dataset.engine, undefined, { timeout: 120_000 });
  expect(await s.page.locator('strata-app').getAttribute('data-engine')).toMatch(/^4\./);
  await s.page.screenshot({ path: join(shots, '2-demo-open.png') });
  expect(title.length).toBeGreaterThan(0);
});

test('offline, on a fresh page: every panel loads from the precache and each tab shows its panel', async () => {
  await s.page.reload();
  await waitForPanelsLoaded(s.page);
  const tabs = s.page.locator('strata-app [role="tab"]');
  const labels = (await tabs.allTextContents()).map((t) => t.trim());
  expect(labels.length).toBeGreaterThanOrEqual(7);
  for (const label of labels.filter((l) => l !== 'Library')) {
    await tabs.filter({ hasText: label }).click();
    const panel = s.page.locator('strata-app [role="tabpanel"]:not([hidden]) > *');
    // the panel's element is defined (its module ran) and has drawn its controls
    expect(await panel.evaluate((el) => !!customElements.get(el.localName) && (el.shadowRoot?.childElementCount ?? 0) > 0), label).toBe(true);
  }
  await s.page.locator('strata-app [role="tab"]', { hasText: 'Library' }).click();
});

test('offline again after a reload: the image is in the library, and opens from it', async () => {
  await s.page.reload();
  const item = s.page.locator('strata-library li');
  await expect.poll(() => item.count()).toBe(1);
  await s.page.screenshot({ path: join(shots, '3-library-after-reload.png') });
  await item.locator('button', { hasText: 'Open' }).click();
  await waitForDrawn();
  expect((await canvasStats()).distinct).toBeGreaterThan(16);
  expect(await s.page.locator('strata-app .message').textContent()).not.toMatch(/Kept in the library/);
});

test('no request left 127.0.0.1 and the page raised no error', () => {
  expect(foreignRequests(s.requests, s.url)).toEqual([]);
  expect(errors).toEqual([]);
});
