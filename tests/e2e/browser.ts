// Shared set-up for the browser tests: serve dist/ on 127.0.0.1, launch the system Chromium,
// and record every request so a test can assert that nothing leaves the machine.
import { existsSync, mkdirSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
// @ts-expect-error plain JavaScript module without types
import { serve } from '../../scripts/serve.mjs';

export function chromiumPath(): string {
  const candidates = [process.env.CHROMIUM_PATH, '/usr/bin/chromium', '/usr/bin/chromium-browser'].filter(Boolean) as string[];
  const found = candidates.find((p) => existsSync(p));
  if (!found) throw new Error('No Chromium found: install Debian\'s "chromium" package or set CHROMIUM_PATH');
  return found;
}

export interface Session {
  url: string;
  context: BrowserContext;
  page: Page;
  /** Every URL the page or its workers asked for. */
  requests: string[];
  close(): Promise<void>;
}

/** Serves `dir` (default dist/) and opens a fresh persistent Chromium profile on it. */
export async function openSession(dir = 'dist'): Promise<Session> {
  if (!existsSync(join(dir, 'index.html'))) throw new Error(`${dir}/index.html is missing: run npm run build first`);
  const { server, url } = await serve({ dir, port: 0 });
  const userDataDir = mkdtempSync(join(tmpdir(), 'strata-e2e-'));
  const context = await chromium.launchPersistentContext(userDataDir, {
    executablePath: chromiumPath(),
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-quic',
      '--no-first-run', '--disable-component-update', '--disable-sync'],
    viewport: { width: 1400, height: 900 },
  });
  const requests: string[] = [];
  context.on('request', (r) => requests.push(r.url()));
  const page = context.pages()[0] ?? (await context.newPage());
  return {
    url,
    context,
    page,
    requests,
    async close() {
      await context.close();
      await new Promise((r) => server.close(r));
    },
  };
}

/** The requests that went anywhere but the local server (data: and blob: URLs are local). */
export function foreignRequests(requests: string[], url: string): string[] {
  const origin = new URL(url).origin;
  return requests.filter((r) => !r.startsWith(origin) && !r.startsWith('data:') && !r.startsWith('blob:'));
}

/** Waits two animation frames, so that what a change draws is on screen. */
export async function nextFrames(page: Page): Promise<void> {
  await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
}

/** Image pixel → page coordinates through the viewer's current zoom and centre. */
export async function imageToPage(page: Page, x: number, y: number): Promise<[number, number]> {
  const viewer = page.locator('strata-viewer');
  const st = await viewer.evaluate((el) => {
    const v = el as unknown as { zoom: number; cx: number; cy: number };
    return { zoom: v.zoom, cx: v.cx, cy: v.cy };
  });
  const box = (await viewer.locator('.stage').boundingBox())!;
  return [box.x + box.width / 2 + (x - st.cx) * st.zoom, box.y + box.height / 2 + (y - st.cy) * st.zoom];
}

/** Drags the mouse from one page point to another (a line or a region drawn in the viewer). */
export async function drag(page: Page, from: [number, number], to: [number, number], steps = 6): Promise<void> {
  await page.mouse.move(from[0], from[1]);
  await page.mouse.down();
  await page.mouse.move(to[0], to[1], { steps });
  await page.mouse.up();
}

/** Opens a demo micrograph from the start screen, waits until the viewer shows it at its width, and shows a tab. */
export async function openDemoImage(page: Page, title: string, widthPx: number, tab: string): Promise<void> {
  const app = page.locator('strata-app');
  await page.waitForSelector('strata-app');
  await app.locator('button.demo', { hasText: title }).click();
  await page.waitForFunction((w) => {
    const v = document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-viewer') as unknown as { image?: { width: number } };
    return v?.image?.width === w;
  }, widthPx, { timeout: 60_000 });
  await app.locator('[role="tab"]', { hasText: tab }).click();
  await nextFrames(page);
}

/** A folder for a test's screenshots and files, under the git-ignored test-artefacts/e2e/. */
export function artefactDir(name: string): string {
  const dir = join('test-artefacts', 'e2e', name);
  mkdirSync(dir, { recursive: true });
  return dir;
}

/**
 * Records the page's long tasks (main-thread tasks over 50 ms, from the browser's long-task
 * observer) from the next navigation on; read them with {@link longestTaskSince}.
 */
export async function watchLongTasks(page: Page): Promise<void> {
  await page.addInitScript(() => {
    const w = window as unknown as { __longTasks: { start: number; duration: number }[] };
    w.__longTasks = [];
    new PerformanceObserver((list) => {
      for (const e of list.getEntries()) w.__longTasks.push({ start: e.startTime, duration: e.duration });
    }).observe({ type: 'longtask', buffered: true });
  });
}

/**
 * Waits until the shell shows the start screen and has loaded every panel's module (the attribute
 * `data-panels-loaded`), polling inside the page: no Playwright locator, whose selector engine is
 * evaluated in the page in a long task of its own that a timed start-up would then include.
 */
export async function waitForPanelsLoaded(page: Page): Promise<void> {
  await page.waitForLoadState('domcontentloaded');
  await page.evaluate(() => new Promise<void>((done) => {
    const check = (): void => {
      const app = document.querySelector('strata-app');
      if (app?.hasAttribute('data-panels-loaded') && app.shadowRoot?.querySelector('button.demo')) done();
      else setTimeout(check, 50);
    };
    check();
  }));
}

/** The page's time now (performance.now()), to pass to {@link longestTaskSince}. */
export async function pageNow(page: Page): Promise<number> {
  return page.evaluate(() => performance.now());
}

/** The longest main-thread task (ms) that started at or after `since`; 0 when none exceeded 50 ms. */
export async function longestTaskSince(page: Page, since: number): Promise<number> {
  return page.evaluate((t) => Math.max(0, ...((window as unknown as { __longTasks?: { start: number; duration: number }[] }).__longTasks ?? [])
    .filter((e) => e.start >= t).map((e) => e.duration)), since);
}

/** One call the page sent to the compute worker: its name and where its arguments held arrays. */
export interface ComputeCallSeen {
  name: string;
  /** Paths in the arguments of every ArrayBuffer or typed array (pixels or a file's bytes), e.g. 'image.data (Float32Array)'. */
  arrays: string[];
}

/**
 * From now on, records every call the page sends to the compute worker (the shell's client, which
 * it hands to every panel): the call's name and where its arguments hold arrays. Read them with
 * {@link computeCalls}; the app must be on the page.
 */
export async function recordComputeCalls(page: Page): Promise<void> {
  await page.waitForSelector('strata-app');
  await page.evaluate(() => {
    const app = document.querySelector('strata-app') as unknown as { compute: { call(name: string, args: unknown, transfer?: unknown[]): unknown } };
    const client = app.compute;
    const seen: { name: string; arrays: string[] }[] = [];
    (window as unknown as { strataComputeCalls: typeof seen }).strataComputeCalls = seen;
    const arraysIn = (v: unknown, path: string, out: string[], visited: Set<unknown>): string[] => {
      if (!v || typeof v !== 'object' || visited.has(v)) return out;
      visited.add(v);
      if (v instanceof ArrayBuffer || ArrayBuffer.isView(v)) out.push(`${path || '(the arguments)'} (${v.constructor.name})`);
      else for (const [k, x] of Object.entries(v)) arraysIn(x, path ? `${path}.${k}` : k, out, visited);
      return out;
    };
    const call = client.call.bind(client);
    client.call = (name, args, transfer) => {
      seen.push({ name, arrays: arraysIn(args, '', [], new Set()) });
      return call(name, args, transfer);
    };
  });
}

/** The calls recorded since {@link recordComputeCalls}, in the order sent. */
export async function computeCalls(page: Page): Promise<ComputeCallSeen[]> {
  return page.evaluate(() => (window as unknown as { strataComputeCalls?: ComputeCallSeen[] }).strataComputeCalls ?? []);
}

/**
 * The calls after the first `openImage` that carried pixels or bytes, other than `openImage`
 * itself (the file, a Blob or its bytes, sent once to open its session): none is allowed, as the compute worker
 * owns the image session and requests carry ids and regions (docs/developers.md).
 */
export function callsWithPixelsAfterOpen(calls: ComputeCallSeen[]): ComputeCallSeen[] {
  const first = calls.findIndex((c) => c.name === 'openImage');
  return first < 0 ? [] : calls.slice(first + 1).filter((c) => c.name !== 'openImage' && c.arrays.length > 0);
}

/** Runs `click` (a control that saves a file) and returns the file's offered name and its text. */
export async function downloadedText(page: Page, click: () => Promise<void>): Promise<{ name: string; text: string }> {
  const [download] = await Promise.all([page.waitForEvent('download', { timeout: 60_000 }), click()]);
  const path = await download.path();
  const { readFileSync } = await import('node:fs');
  return { name: download.suggestedFilename(), text: readFileSync(path!, 'utf8') };
}

/** A CSV export's header and data rows (its '# ' note lines skipped; no quoted commas expected in the checked columns). */
export function csvRows(text: string): { header: string[]; rows: string[][] } {
  const lines = text.split(/\r?\n/).filter((l) => l && !l.startsWith('#'));
  const split = (l: string) => l.split(',');
  return { header: split(lines[0]), rows: lines.slice(1).map(split) };
}
