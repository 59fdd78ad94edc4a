// The workbench at 1366 × 768, on the high-magnification lattice-fringe demo (1.25 nm fringes =
// 25 px at 0.05 nm/px, normal at 28°, demo-data/index.json): after a region is drawn the period
// and its ± are on screen without scrolling and the power spectrum is at least 512 px wide; the
// profile plot is at least 600 px wide, reads values under the cursor from the keyboard and
// zooms; the report of the image is one HTML file that opens offline with its figure and tables
// and prints to at most 3 A4 pages. The longest main-thread task of each flow, from the browser's
// long-task observer, is printed (a table, not a pass/fail: timing varies with the machine).
import { readFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { csvRows, downloadedText, openSession, type Session, nextFrames, imageToPage, drag, openDemoImage, artefactDir, watchLongTasks, pageNow, longestTaskSince, waitForPanelsLoaded } from './browser';

let s: Session;
const errors: string[] = [];
const dir = artefactDir('workbench');
const longest: [string, number][] = [];
const CENTRE = 330;
const NORMAL_DEG = 28;

const panel = () => s.page.locator('strata-measure-panel');

/** Runs a flow and records its longest main-thread task. */
async function flow(name: string, run: () => Promise<void>): Promise<void> {
  const t0 = await pageNow(s.page);
  await run();
  await nextFrames(s.page);
  longest.push([name, await longestTaskSince(s.page, t0)]);
}

beforeAll(async () => {
  s = await openSession();
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await watchLongTasks(s.page);
  await s.page.setViewportSize({ width: 1366, height: 768 });
  // starting the app (its panels' modules loaded while idle) is a flow of its own, so that opening an image is timed alone
  // (from the navigation on: the new page's clock starts there)
  await s.page.goto(s.url);
  await waitForPanelsLoaded(s.page);
  await nextFrames(s.page);
  longest.push(['start the app (from the navigation until every panel is loaded)', await longestTaskSince(s.page, 0)]);
  // Playwright's selector engine is evaluated in the page on first use of a locator, in a task of
  // 25–95 ms of its own (seen in a trace): have it evaluated now, between flows, not inside one
  await s.page.locator('strata-app').waitFor();
  await flow('open the demo image', () => openDemoImage(s.page, 'Tactoid lattice fringes', 1024, 'Periods'));
});
afterAll(async () => {
  console.log(['longest main-thread task per flow (1366 × 768):', '| flow | longest task (ms) |', '|---|---|',
    ...longest.map(([n, ms]) => `| ${n} | ${ms ? ms.toFixed(0) : '< 50'} |`)].join('\n'));
  console.log(`screenshots in ${resolve(dir)}`);
  await s?.close();
});

test('after a region is drawn, the period and its ± are visible without scrolling and the spectrum is ≥ 512 px wide', async () => {
  const heightBefore = await s.page.evaluate(() => document.documentElement.scrollHeight);
  await flow('measure a spectrum', async () => {
    await panel().locator('button', { hasText: 'Draw region' }).click();
    await drag(s.page, await imageToPage(s.page, CENTRE - 80, CENTRE - 80), await imageToPage(s.page, CENTRE + 80, CENTRE + 80));
    await expect.poll(() => panel().evaluate((el) => (el as unknown as { spots: unknown[] }).spots.length), { timeout: 60_000 }).toBeGreaterThan(0);
  });
  const cell = panel().locator('tbody tr').first().locator('.dnm');
  const text = (await cell.textContent()) ?? '';
  const [d, u] = text.replace('nm', '').split('±').map(Number);
  // demo truth 1.25 nm; the ± (k = 2) covers the calibration's 5 %
  expect(Math.abs(d - 1.25)).toBeLessThanOrEqual(u);
  const box = (await cell.boundingBox())!;
  expect(box.y + box.height).toBeLessThanOrEqual(768);
  expect(box.x + box.width).toBeLessThanOrEqual(1366);
  const spectrum = (await panel().locator('.figure .clip').boundingBox())!;
  expect(spectrum.width).toBeGreaterThanOrEqual(512);
  expect(spectrum.y + spectrum.height).toBeLessThanOrEqual(768);
  // no layout shift: the page is exactly the window, before and after
  expect(await s.page.evaluate(() => document.documentElement.scrollHeight)).toBe(heightBefore);
  // spot labels on the spectrum never overlap
  const boxes = await panel().locator('svg.marks text').evaluateAll((els) => els.map((e) => { const r = e.getBoundingClientRect(); return [r.x, r.y, r.width, r.height]; }));
  for (let i = 0; i < boxes.length; i++) for (let j = i + 1; j < boxes.length; j++) {
    const [a, b] = [boxes[i], boxes[j]];
    expect(a[0] < b[0] + b[2] && b[0] < a[0] + a[2] && a[1] < b[1] + b[3] && b[1] < a[1] + a[3]).toBe(false);
  }
  // the spectrum's picture itself is drawn (made in the worker, or on the page as a fallback), not only its marks
  await expect.poll(() => panel().locator('canvas.spectrum').evaluate((c) => {
    const cv = c as HTMLCanvasElement;
    const px = cv.getContext('2d')!.getImageData(0, 0, cv.width, cv.height).data;
    // an undrawn canvas is transparent black; a drawn picture is opaque with a range of greys
    let opaque = 0;
    let lo = 255;
    let hi = 0;
    for (let i = 0; i < px.length; i += 4) {
      if (px[i + 3] === 255) opaque++;
      lo = Math.min(lo, px[i]);
      hi = Math.max(hi, px[i]);
    }
    return opaque === px.length / 4 && hi - lo >= 100;
  }), { timeout: 20_000 }).toBe(true);
  await s.page.screenshot({ path: join(dir, 'spectrum-1366x768.png') });
});

test('a profile line: its plot is ≥ 600 px wide, reads the value under the cursor from the keyboard and zooms', async () => {
  await flow('measure a profile', async () => {
    const width = panel().locator('input.width');
    await width.fill('9');
    await width.dispatchEvent('change');
    await panel().locator('button', { hasText: 'Draw profile line' }).click();
    const c = Math.cos((NORMAL_DEG * Math.PI) / 180);
    const sn = Math.sin((NORMAL_DEG * Math.PI) / 180);
    await drag(s.page, await imageToPage(s.page, CENTRE - 95 * c, CENTRE + 95 * sn), await imageToPage(s.page, CENTRE + 95 * c, CENTRE - 95 * sn));
    await expect.poll(() => panel().evaluate((el) => !!(el as unknown as { profile: { realSpace: unknown } | null }).profile?.realSpace), { timeout: 60_000 }).toBe(true);
  });
  // the profile's key numbers are on screen
  const card = panel().locator('.card .d').first();
  const cb = (await card.boundingBox())!;
  expect(cb.y + cb.height).toBeLessThanOrEqual(768);
  const plot = panel().locator('strata-plot.profile-plot');
  const pb = (await plot.boundingBox())!;
  expect(pb.width).toBeGreaterThanOrEqual(600);
  // the last tool's figure comes first, its top on screen (nothing scrolled it away)
  expect(pb.y).toBeGreaterThanOrEqual(60);
  expect(pb.y + 300).toBeLessThanOrEqual(768);
  // keyboard: focus the plot, step the cursor, read the value in the axis' unit; zoom in and back
  await plot.locator('.chart').focus();
  await s.page.keyboard.press('ArrowRight');
  await s.page.keyboard.press('ArrowRight');
  await expect.poll(() => plot.locator('.readout').textContent()).toMatch(/distance along the line [0-9.]+ nm · mean grey value [0-9.]+/);
  const range = () => plot.evaluate((el) => { const u = (el as unknown as { chart: { scales: { x: { min: number; max: number } } } }).chart.scales.x; return u.max - u.min; });
  const full = await range();
  await s.page.keyboard.press('+');
  expect(await range()).toBeLessThan(full * 0.9);
  await s.page.keyboard.press('0');
  expect(await range()).toBeCloseTo(full, 6);
  // the plot's text alternative: its data table
  await plot.locator('summary').click();
  await expect.poll(() => plot.locator('tbody tr').count()).toBeGreaterThan(100);
  // tick labels of the exported figure are at least 11 px
  const svg = await plot.evaluate((el) => (el as unknown as { svgText(): string }).svgText());
  expect(Number(/font-size="(\d+)"/.exec(svg)![1])).toBeGreaterThanOrEqual(11);
  await s.page.screenshot({ path: join(dir, 'profile-1366x768.png') });
});

test('the report opens offline with its figure and tables and prints to at most 3 A4 pages', async () => {
  let html = '';
  await flow('export a report', async () => {
    const [download] = await Promise.all([s.page.waitForEvent('download', { timeout: 60_000 }), panel().locator('button.export-report').click()]);
    expect(download.suggestedFilename()).toMatch(/-report\.html$/);
    html = readFileSync((await download.path())!, 'utf8');
  });
  const file = join(dir, 'report.html');
  writeFileSync(file, html);
  const page = await s.context.newPage();
  const requests: string[] = [];
  page.on('request', (r) => requests.push(r.url()));
  await s.context.setOffline(true);
  await page.goto(`file://${resolve(file)}`);
  expect(requests.filter((r) => !r.startsWith('file:') && !r.startsWith('data:'))).toEqual([]);
  expect(await page.locator('svg.micrograph image').count()).toBe(1);
  expect(await page.locator('table.results tbody tr').count()).toBeGreaterThanOrEqual(3);
  expect(await page.locator('table.budget').count()).toBe(1);
  expect(await page.locator('svg.plot').count()).toBe(2);
  expect(await page.locator('.caution').textContent()).toMatch(/do not replace a calibration/);
  await page.setViewportSize({ width: 900, height: 1270 });
  await page.screenshot({ path: join(dir, 'report.png'), fullPage: true });
  const pdf = await page.pdf({ format: 'A4', printBackground: true, preferCSSPageSize: true });
  writeFileSync(join(dir, 'report.pdf'), pdf);
  const pages = (pdf.toString('latin1').match(/\/Type\s*\/Page[^s]/g) ?? []).length;
  console.log(`report: ${html.length} characters, ${pages} A4 page(s)`);
  expect(pages).toBeGreaterThanOrEqual(1);
  expect(pages).toBeLessThanOrEqual(3);
  await s.context.setOffline(false);
  await page.close();
  expect(errors).toEqual([]);
});

test('undo and redo a spot removal; the history is kept with the image and comes back when it is reopened', async () => {
  const spots = () => panel().evaluate((el) => (el as unknown as { spots: { n: number }[] }).spots.map((t) => t.n));
  const before = await spots();
  expect(before).toContain(1);
  await flow('undo and redo', async () => {
    await panel().locator('tbody tr', { hasText: '#1' }).first().locator('button', { hasText: '×' }).click();
    await expect.poll(spots).not.toContain(1);
    const undo = s.page.locator('strata-undo-control button.undo');
    expect(await undo.getAttribute('title')).toMatch(/Undo: spot #1 removed/);
    await undo.click();
    await expect.poll(spots).toEqual(before);
    await expect.poll(() => s.page.locator('strata-app .message').textContent()).toMatch(/Undone: spot #1 removed/);
    // redo from the keyboard
    await s.page.locator('strata-app h1').click();
    await s.page.keyboard.press('Control+Shift+Z');
    await expect.poll(spots).not.toContain(1);
  });
  await s.page.screenshot({ path: join(dir, 'after-redo.png') });
  // reload the app and open the image again from the library: the last state is shown again
  await s.page.reload();
  const app = s.page.locator('strata-app');
  await app.locator('[role="tab"]', { hasText: 'Periods' }).waitFor(); // the panels are loaded
  await app.locator('[role="tab"]', { hasText: 'Library' }).click();
  await s.page.screenshot({ path: join(dir, 'library-after-reload.png') });
  await app.locator('button[aria-label="Open tactoid-fringes_hr.tif"]').click();
  await app.locator('[role="tab"]', { hasText: 'Periods' }).click();
  await expect.poll(async () => (await spots()).length, { timeout: 60_000 }).toBe(before.length - 1);
  expect(await spots()).not.toContain(1);
  await expect.poll(() => panel().evaluate((el) => !!(el as unknown as { profile: unknown }).profile), { timeout: 60_000 }).toBe(true);
  await expect.poll(() => panel().evaluate((el) => !!(el as unknown as { spectrum: unknown }).spectrum), { timeout: 60_000 }).toBe(true);
  // and the removal can still be undone
  await s.page.locator('strata-undo-control button.undo').click();
  await expect.poll(spots).toEqual(before);
  // the undo moved back one step and recorded none
  expect(await app.evaluate((el) => (el as unknown as { history: { index: number; steps: unknown[] } }).history.index)).toBe(2);
  await s.page.screenshot({ path: join(dir, 'reopened-undone.png') });
  expect(errors).toEqual([]);
});

test('calibrate: a typed pixel size re-expresses the periods; undo brings back the file\'s calibration', async () => {
  const app = s.page.locator('strata-app');
  const d = async () => Number(((await panel().locator('tbody tr').first().locator('.dnm').textContent()) ?? '').split('±')[0]);
  expect(Math.abs((await d()) - 1.25)).toBeLessThan(0.02);
  await flow('calibrate', async () => {
    await app.locator('[role="tab"]', { hasText: 'Calibration' }).click();
    const cal = s.page.locator('strata-calibration-panel');
    const typed = cal.locator('section', { has: s.page.locator('label', { hasText: 'nm/px' }) }).last();
    await typed.locator('label', { hasText: 'nm/px' }).locator('input').fill('0.1');
    await typed.locator('label', { hasText: '± %' }).locator('input').fill('2');
    await typed.locator('button', { hasText: 'Compute' }).click();
    await cal.locator('button', { hasText: 'Use for this image' }).click();
    await app.locator('[role="tab"]', { hasText: 'Periods' }).click();
    // 25 px at 0.1 nm/px
    await expect.poll(d).toBeCloseTo(2.5, 1);
  });
  expect(await s.page.locator('strata-undo-control button.undo').getAttribute('title')).toMatch(/Undo: calibration 0\.1000 nm\/px/);
  // the Calibration panel's export: the pixel size in use with its relative standard uncertainty (k = 1)
  await app.locator('[role="tab"]', { hasText: 'Calibration' }).click();
  const csv = await downloadedText(s.page, () => s.page.locator('strata-calibration-panel strata-export-menu button.export-csv').click());
  const { header, rows } = csvRows(csv.text);
  expect(header).toEqual(['quantity', 'value', 'unit', 'relativeStandardUncertaintyK1', 'type', 'source']);
  expect(rows[0].slice(0, 4).map((c, i) => (i === 0 || i === 2 ? c : Number(c)))).toEqual(['nmPerPx', 0.1, 'nm/px', 0.02]);
  await app.locator('[role="tab"]', { hasText: 'Periods' }).click();
  await s.page.locator('strata-undo-control button.undo').click();
  await expect.poll(d).toBeCloseTo(1.25, 1);
  await s.page.locator('strata-undo-control button.redo').click();
  await expect.poll(d).toBeCloseTo(2.5, 1);
  await s.page.screenshot({ path: join(dir, 'calibrated-redone.png') });
  // reopened from the library, the image keeps the calibration set for it, in the page and in the
  // worker's session (whose records the Periods panel shows)
  await s.page.reload();
  await app.locator('[role="tab"]', { hasText: 'Periods' }).waitFor();
  await app.locator('[role="tab"]', { hasText: 'Library' }).click();
  await app.locator('button[aria-label="Open tactoid-fringes_hr.tif"]').click();
  await app.locator('[role="tab"]', { hasText: 'Periods' }).click();
  await expect.poll(d, { timeout: 60_000 }).toBeCloseTo(2.5, 1);
  expect(await app.evaluate((el) => (el as unknown as { image: { calibration: { nmPerPx: number } } }).image.calibration.nmPerPx)).toBeCloseTo(0.1, 12);
  expect(errors).toEqual([]);
});

test('the sheets and diffraction flows: find sheets on the overview and correct one; load a pattern and cross-check it with the saved periods', async () => {
  const sheets = s.page.locator('strata-sheets-panel');
  const count = () => sheets.evaluate((el) => (el as unknown as { sheets: unknown[] }).sheets.length);
  const closeImage = () => s.page.locator('strata-app').locator('button', { hasText: 'Close image' }).click();
  await closeImage();
  await flow('open the overview demo', () => openDemoImage(s.page, 'Tactoid film, overview', 1024, 'Sheets'));
  await flow('find sheets in the image', async () => {
    await sheets.locator('button', { hasText: 'Find sheets in the image' }).click();
    await expect.poll(count, { timeout: 120_000 }).toBeGreaterThan(0);
  });
  // demo truth (demo-data/index.json): 26 tactoids
  expect(await count()).toBeGreaterThanOrEqual(24);
  const layersOf = (i: number) => sheets.evaluate((el, k) => {
    const q = (el as unknown as { sheets: { layers: number; correction: { originalLayers: number } | null }[] }).sheets[k];
    return [q.layers, q.correction?.originalLayers ?? null];
  }, i);
  const [before] = await layersOf(1);
  await flow('correct a sheet\'s count', async () => {
    await sheets.locator('tr[data-id]').nth(1).click();
    const input = sheets.locator('input.count');
    await input.fill(String((before as number) + 1));
    await input.dispatchEvent('change');
    await expect.poll(() => layersOf(1)).toEqual([(before as number) + 1, before]);
  });
  const xrd = s.page.locator('strata-diffraction-panel');
  await flow('load a pattern and cross-check', async () => {
    await s.page.locator('strata-app [role="tab"]', { hasText: 'Diffraction' }).first().click();
    await xrd.locator('button', { hasText: 'Demo pattern' }).click();
    await expect.poll(() => xrd.locator('strata-plot').count(), { timeout: 60_000 }).toBe(1);
    await xrd.locator('button', { hasText: 'Take periods from the library' }).click();
    const message = () => s.page.locator('strata-app').evaluate((el) => (el as unknown as { message: { text: string } | null }).message?.text ?? '');
    await expect.poll(message, { timeout: 20_000 }).toMatch(/distinct periods? pooled from the library/);
  });
  // every pooled period has its row in the cross-check table
  const pooled = Number(/^(\d+) distinct/.exec(await s.page.locator('strata-app').evaluate((el) => (el as unknown as { message: { text: string } }).message.text))![1]);
  const rows = xrd.locator('h3', { hasText: 'Micrograph periods against diffraction' }).locator('xpath=..').locator('tr:has(td)');
  expect(await rows.count()).toBe(pooled);
  await s.page.screenshot({ path: join(dir, 'cross-check-1366x768.png') });
  // back to the lattice-fringe demo for the tests that follow
  await closeImage();
  await openDemoImage(s.page, 'Tactoid lattice fringes', 1024, 'Periods');
});

test('on a 406 px wide window the viewer\'s status row wraps: every readout and the histogram are inside the viewer', async () => {
  await s.page.setViewportSize({ width: 406, height: 768 });
  await nextFrames(s.page);
  const viewer = s.page.locator('strata-viewer');
  const vb = (await viewer.boundingBox())!;
  expect(vb.x + vb.width).toBeLessThanOrEqual(406);
  const parts = await viewer.locator('.foot .readout span, .foot canvas.hist').evaluateAll((els) => els.map((e) => { const r = e.getBoundingClientRect(); return { text: e.textContent ?? 'histogram', left: r.left, right: r.right, width: r.width }; }));
  expect(parts.length).toBeGreaterThanOrEqual(8);
  for (const p of parts) {
    expect(p.width, p.text).toBeGreaterThan(0);
    expect(p.left, p.text).toBeGreaterThanOrEqual(vb.x - 0.5);
    expect(p.right, p.text).toBeLessThanOrEqual(vb.x + vb.width + 0.5);
  }
  await viewer.screenshot({ path: join(dir, 'viewer-406px.png') });
  await s.page.setViewportSize({ width: 1366, height: 768 });
  expect(errors).toEqual([]);
});

test('after the window is resized the viewer fits the image again, unless the user zoomed', async () => {
  const viewer = s.page.locator('strata-viewer');
  const state = () => viewer.evaluate((el) => {
    const v = el as unknown as { zoom: number; cx: number; cy: number; image: { width: number; height: number } };
    const stage = (el as HTMLElement).shadowRoot!.querySelector('.stage')!;
    return { zoom: v.zoom, cx: v.cx, cy: v.cy, fit: Math.min(stage.clientWidth / v.image.width, stage.clientHeight / v.image.height) * 0.98 };
  });
  await viewer.locator('button', { hasText: 'Fit' }).click();
  await s.page.setViewportSize({ width: 1920, height: 1080 });
  // the viewer's resize observer reports the new size after a layout
  await expect.poll(async () => { const v = await state(); return v.zoom / v.fit; }).toBeCloseTo(1, 6);
  const big = await state();
  await s.page.setViewportSize({ width: 1366, height: 768 });
  await expect.poll(async () => { const v = await state(); return v.zoom / v.fit; }).toBeCloseTo(1, 6);
  expect((await state()).zoom).toBeLessThan(big.zoom);
  // a zoom the user chose is kept through a resize
  await viewer.locator('.stage').focus();
  await s.page.keyboard.press('+');
  const zoomed = await state();
  await s.page.setViewportSize({ width: 1920, height: 1080 });
  await nextFrames(s.page);
  await nextFrames(s.page);
  const after = await state();
  expect(after.zoom).toBe(zoomed.zoom);
  expect([after.cx, after.cy]).toEqual([zoomed.cx, zoomed.cy]);
  await viewer.locator('button', { hasText: 'Fit' }).click();
  expect(errors).toEqual([]);
});

test('screenshots of every panel at 1366 × 768 and 1920 × 1080, for looking at', async () => {
  const app = s.page.locator('strata-app');
  const tabs = await app.locator('[role="tab"]').allTextContents();
  expect(tabs.length).toBeGreaterThanOrEqual(8);
  for (const [w, h] of [[1366, 768], [1920, 1080]]) {
    await s.page.setViewportSize({ width: w, height: h });
    for (const t of tabs) {
      await app.locator('[role="tab"]', { hasText: t }).click();
      await nextFrames(s.page);
      // the tab row stays one row in the narrow column too, and the selected tab is whole on screen
      const row = await app.evaluate((el) => {
        const list = el.shadowRoot!.querySelector('[role="tablist"]')!.getBoundingClientRect();
        const boxes = [...el.shadowRoot!.querySelectorAll('[role="tab"]')].map((b) => b.getBoundingClientRect());
        const sel = el.shadowRoot!.querySelector('[role="tab"][aria-selected="true"]')!.getBoundingClientRect();
        return { tops: [...new Set(boxes.map((b) => Math.round(b.top)))], sel: [sel.left, sel.right], list: [list.left, list.right] };
      });
      expect(row.tops, `tab rows with ${t} selected at ${w} px`).toHaveLength(1);
      expect(row.sel[0]).toBeGreaterThanOrEqual(row.list[0] - 1);
      expect(row.sel[1]).toBeLessThanOrEqual(row.list[1] + 1);
      await s.page.screenshot({ path: join(dir, `panel-${t.trim().toLowerCase()}-${w}x${h}.png`) });
    }
  }
  await s.page.setViewportSize({ width: 1366, height: 768 });
  await app.locator('[role="tab"]', { hasText: 'Periods' }).click();
  expect(errors).toEqual([]);
});
