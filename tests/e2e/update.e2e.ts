// Safe offline updates with two builds on the same origin: build A installs and controls the
// page; the server then serves build B (one file changed, its service worker regenerated). B
// installs in the background and waits; the page shows "A new version is ready — Reload" and
// keeps working on A's files; Reload hands over to B and the page then runs on B's files.
import { appendFileSync, cpSync, mkdtempSync, readFileSync } from 'node:fs';
import { execFileSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
// @ts-expect-error plain JavaScript module without types
import { serve } from '../../scripts/serve.mjs';
import { chromiumPath, foreignRequests } from './browser';

const MARKER = '/* build B */';
const root = mkdtempSync(join(tmpdir(), 'strata-update-'));
const distA = join(root, 'a', 'dist');
const distB = join(root, 'b', 'dist');
let server: { close(cb: () => void): void; address(): { port: number } };
let url = '';
let context: BrowserContext;
let page: Page;
const requests: string[] = [];
const errors: string[] = [];

async function serveDir(dir: string, port: number) {
  const r = await serve({ dir, port });
  server = r.server;
  url = r.url;
}

const appCss = () => page.evaluate(async () => (await fetch('app.css')).text());

beforeAll(async () => {
  cpSync('dist', distA, { recursive: true });
  cpSync('dist', distB, { recursive: true });
  // Build B: one served file changed, and the service worker regenerated for B's files.
  appendFileSync(join(distB, 'app.css'), `\n${MARKER}\n`);
  execFileSync(process.execPath, [resolve('scripts/build-sw.mjs')], { cwd: join(root, 'b'), stdio: 'pipe' });
  expect(readFileSync(join(distB, 'sw.js'), 'utf8')).not.toBe(readFileSync(join(distA, 'sw.js'), 'utf8'));

  await serveDir(distA, 0);
  context = await chromium.launchPersistentContext(mkdtempSync(join(tmpdir(), 'strata-e2e-')), {
    executablePath: chromiumPath(),
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--no-first-run', '--disable-component-update', '--disable-sync'],
    viewport: { width: 1400, height: 900 },
  });
  context.on('request', (r) => requests.push(r.url()));
  page = context.pages()[0] ?? (await context.newPage());
  page.on('pageerror', (e) => errors.push(String(e)));
});

afterAll(async () => {
  await context?.close();
  await new Promise<void>((r) => server?.close(() => r()));
});

test('build A installs and controls the page; no notice on a first visit', async () => {
  await page.goto(url);
  await page.waitForSelector('strata-app');
  await page.evaluate(async () => { await navigator.serviceWorker.ready; });
  await page.reload();
  await page.waitForFunction(() => navigator.serviceWorker.controller !== null);
  expect(await appCss()).not.toContain(MARKER);
  expect(await page.locator('strata-sw-update').count()).toBe(0);
});

test('build B installs in the background; the notice appears; the old page keeps its old files and works', async () => {
  const port = server.address().port;
  await new Promise<void>((r) => server.close(() => r()));
  await serveDir(distB, port); // same origin, new files
  await page.evaluate(async () => { await (await navigator.serviceWorker.getRegistration())!.update(); });
  await expect.poll(() => page.locator('strata-sw-update').count(), { timeout: 120_000 }).toBe(1);
  expect(await page.locator('strata-sw-update').textContent()).toBeDefined();
  expect(await page.locator('strata-sw-update div[role="status"]').innerText()).toMatch(/A new version is ready\s*—\s*Reload/);
  const state = await page.evaluate(async () => {
    const reg = (await navigator.serviceWorker.getRegistration())!;
    return { waiting: reg.waiting?.state ?? null, active: reg.active?.state ?? null };
  });
  expect(state).toEqual({ waiting: 'installed', active: 'activated' });
  // The old page is served by the old worker from the old precache: never a mix of A and B.
  expect(await appCss()).not.toContain(MARKER);
  // And it still works: switch panels.
  const tabs = page.locator('strata-app [role="tab"]');
  expect(await tabs.count()).toBeGreaterThan(1);
  await tabs.last().click();
  expect(await tabs.last().getAttribute('aria-selected')).toBe('true');
});

test('Reload hands over to build B, and the page then runs on its files', async () => {
  await Promise.all([page.waitForEvent('load', { timeout: 120_000 }), page.locator('strata-sw-update button', { hasText: 'Reload' }).click()]);
  await page.waitForSelector('strata-app');
  await page.waitForFunction(() => navigator.serviceWorker.controller !== null);
  expect(await appCss()).toContain(MARKER);
  const css = await page.evaluate(() => [...document.styleSheets].map((s) => s.href ?? '').filter(Boolean));
  expect(css.some((h) => h.endsWith('/app.css'))).toBe(true);
  expect(await page.locator('strata-sw-update').count()).toBe(0);
  const waiting = await page.evaluate(async () => (await navigator.serviceWorker.getRegistration())!.waiting);
  expect(waiting).toBeNull();
  expect(foreignRequests(requests, url)).toEqual([]);
  expect(errors).toEqual([]);
});
