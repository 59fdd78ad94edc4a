// The batch panel in the browser: the demo micrographs plus a corrupt file through the default
// recipe (pixel size from the file metadata) in the worker pool; a reload after the first file
// is committed, then Resume; each file exactly once; the zip of every export.
// Truth from demo-data/index.json: the three TIFF demos carry their pixel size in the tags, the
// PNG demo has none (only a burned-in bar), so with the metadata route it fails with its reason.
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { strFromU8, unzipSync } from 'fflate';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { foreignRequests, openSession, type Session } from './browser';

let s: Session;
const dir = mkdtempSync(join(tmpdir(), 'strata-batch-'));
const errors: string[] = [];

const DEMOS = ['amorphous-polymer.tif', 'lamellar-mesophase.png', 'tactoid-film_overview.tif', 'tactoid-fringes_hr.tif'];
const CALIBRATED = ['amorphous-polymer.tif', 'tactoid-film_overview.tif', 'tactoid-fringes_hr.tif'];
const CORRUPT = 'broken-scan.tif';

interface PanelView {
  batch: { id: string; total: number; ok: number; failed: number; state: string } | null;
  rows: { name: string; status: string; reason: string | null }[];
  chosen: number;
  running: boolean;
}

const app = () => s.page.locator('strata-app');
const panel = () => s.page.locator('strata-batch-panel');
const view = () => panel().evaluate((el) => {
  const p = el as unknown as { batch: PanelView['batch']; rows: { name: string; status: string; result: { reason?: string } | null }[]; chosen: unknown[]; running: boolean };
  return {
    batch: p.batch && { id: p.batch.id, total: p.batch.total, ok: p.batch.ok, failed: p.batch.failed, state: p.batch.state },
    rows: p.rows.map((r) => ({ name: r.name, status: r.status, reason: r.result?.reason ?? null })),
    chosen: p.chosen.length,
    running: p.running,
  } as PanelView;
});

/** The stored file records of a batch, read straight from IndexedDB. */
const stored = (batchId: string) => s.page.evaluate((id) => new Promise<{ name: string; status: string; reason: string | null }[]>((resolve, reject) => {
  const open = indexedDB.open('stratameter');
  open.onerror = () => reject(open.error);
  open.onsuccess = () => {
    const db = open.result;
    const req = db.transaction('batchFiles').objectStore('batchFiles').index('byBatch').getAll(id);
    req.onsuccess = () => {
      resolve(req.result.map((r: { name: string; status: string; result: { reason?: string } | null }) => ({ name: r.name, status: r.status, reason: r.result?.reason ?? null })));
      db.close();
    };
    req.onerror = () => reject(req.error);
  };
}), batchId);

async function shoot(name: string) {
  await s.page.setViewportSize({ width: 1400, height: 1800 });
  await s.page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
  await s.page.screenshot({ path: join(dir, name) });
  await s.page.setViewportSize({ width: 1400, height: 900 });
}

async function openBatchTab() {
  await s.page.waitForSelector('strata-app');
  await app().locator('[role="tab"]', { hasText: 'Batch' }).click();
  await panel().waitFor();
}

beforeAll(async () => {
  s = await openSession();
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.goto(s.url);
  await openBatchTab();
  console.log(`screenshots in ${dir}`);
});
afterAll(async () => {
  await s?.close();
});

test('demo images and a corrupt file run as a batch, survive a reload, and export one zip', async () => {
  // Files: the demo micrographs and a file that starts like a TIFF but is not one.
  await panel().locator('button.use-demos').click();
  await s.page.waitForFunction(() => (document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { chosen: unknown[] })?.chosen.length === 4, undefined, { timeout: 60_000 });
  const corrupt = Buffer.alloc(4096, 7);
  corrupt.write('II*\0', 0, 'latin1');
  // A text file beside the images is left out by its type, and named.
  await panel().locator('input.files').setInputFiles([
    { name: CORRUPT, mimeType: 'image/tiff', buffer: corrupt },
    { name: 'notes.txt', mimeType: 'text/plain', buffer: Buffer.from('session notes') },
  ]);
  await s.page.waitForFunction(() => (document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { chosen: unknown[] })?.chosen.length === 5);
  await expect(panel().locator('p.skipped').textContent()).resolves.toContain('notes.txt');
  // Annotated figures on: they go into the zip.
  await panel().locator('input.o-figures').check();
  await shoot('1-chosen.png');

  await panel().locator('button.start').click();
  // Reload as soon as the first file is committed.
  await s.page.waitForFunction(() => {
    const b = (document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { batch: { ok: number; failed: number } | null })?.batch;
    return !!b && b.ok + b.failed >= 1;
  }, undefined, { timeout: 170_000 });
  await shoot('2-running.png');
  const before = await view();
  expect(before.batch?.total).toBe(5);
  expect(before.running).toBe(true);
  const batchId = before.batch!.id;
  await s.page.reload();
  await openBatchTab();

  // After the reload the stopped batch is shown with Resume; what was committed is kept.
  await panel().locator('button.resume').waitFor({ timeout: 30_000 });
  const afterReload = await view();
  expect(afterReload.batch?.id).toBe(batchId);
  const kept = await stored(batchId);
  const committed = kept.filter((r) => r.status !== 'queued').length;
  expect(committed).toBeGreaterThanOrEqual(1);
  expect(committed).toBeLessThan(5);
  expect(afterReload.batch!.ok + afterReload.batch!.failed).toBe(committed);
  await shoot('3-after-reload.png');

  await panel().locator('button.resume').click();
  await s.page.waitForFunction(() => {
    const p = document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { batch: { state: string } | null; running: boolean };
    return p?.batch?.state === 'finished' && !p.running;
  }, undefined, { timeout: 170_000 });
  const done = await view();
  // Every file exactly once: 3 measured, the PNG without calibration and the corrupt file failed.
  expect(done.batch).toMatchObject({ total: 5, ok: 3, failed: 2 });
  const records = await stored(batchId);
  expect(records.map((r) => r.name).sort()).toEqual([...DEMOS, CORRUPT].sort());
  for (const name of CALIBRATED) expect(records.find((r) => r.name === name)?.status, name).toBe('ok');
  expect(records.find((r) => r.name === 'lamellar-mesophase.png')).toMatchObject({ status: 'failed', reason: expect.stringMatching(/no pixel size in the file metadata/) });
  expect(records.find((r) => r.name === CORRUPT)).toMatchObject({ status: 'failed', reason: expect.stringMatching(/cannot read the file/) });
  // the table lists the reasons
  await expect(panel().locator('tr[data-file="broken-scan.tif"] td.status-failed').textContent()).resolves.toBe('failed');
  await expect(panel().locator('td.reason', { hasText: 'cannot read the file' }).count()).resolves.toBeGreaterThanOrEqual(1);
  await shoot('4-finished.png');

  // One zip with every export.
  const [dl] = await Promise.all([s.page.waitForEvent('download'), panel().locator('button.export-zip').click()]);
  const zip = unzipSync(new Uint8Array(readFileSync((await dl.path())!)));
  const names = Object.keys(zip).sort();
  expect(names).toEqual(expect.arrayContaining(['batch.json', 'recipe.json', 'results.csv', 'summary.csv']));
  for (const name of CALIBRATED) expect(names).toContain(`figures/${name}.png`);
  // PNG signature (ISO/IEC 15948 §5.2): 137 80 78 71 13 10 26 10
  expect([...zip[`figures/${CALIBRATED[0]}.png`].subarray(0, 8)]).toEqual([137, 80, 78, 71, 13, 10, 26, 10]);
  const doc = JSON.parse(strFromU8(zip['batch.json'])) as { results: { file: string; status: string; calibration: unknown; summary?: { topPeriods: unknown[] } }[]; pooled: { files: { total: number; ok: number; failed: number } } };
  expect(doc.results.map((r) => r.file).sort()).toEqual([...DEMOS, CORRUPT].sort());
  expect(doc.pooled.files).toEqual({ total: 5, ok: 3, failed: 2 });
  // One strongest period (the fringes image's; the amorphous film has none, demo-data/index.json):
  // too few for a histogram, a mean or an sd (common practice: at least 3), so the summary lists it.
  const withPeriod = doc.results.filter((r) => r.status === 'ok' && r.calibration && r.summary?.topPeriods.length).map((r) => r.file).sort();
  expect(withPeriod).toEqual(['tactoid-fringes_hr.tif']);
  expect(names.filter((n) => n.startsWith('histograms/top-period'))).toEqual([]);
  const few = panel().locator('table.few-values tbody tr', { hasText: 'strongest period' });
  expect((await few.locator('td:nth-child(2)').allTextContents()).sort()).toEqual(withPeriod);
  for (const v of await few.locator('td.num').allTextContents()) expect(v).toMatch(/^[0-9.]+ ± [0-9.]+$/);
  expect(await panel().locator('p.pooled').textContent()).not.toMatch(/Strongest period: mean/);
  const summaryLines = strFromU8(zip['summary.csv']).trim().split(/\r\n/);
  expect(summaryLines.length).toBe(1 + 5);

  expect(foreignRequests(s.requests, s.url)).toEqual([]);
  expect(errors).toEqual([]);
});

/** Copies of the calibrated overview demo under other names, so a batch lasts long enough to pause. */
const COPIES = 10;
async function chooseCopies() {
  const bytes = readFileSync('demo-data/tactoid-film_overview.tif');
  await panel().locator('input.files').setInputFiles(Array.from({ length: COPIES }, (_, i) => ({ name: `overview-copy-${String(i + 1).padStart(2, '0')}.tif`, mimeType: 'image/tiff', buffer: bytes })));
  await s.page.waitForFunction((n) => (document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { chosen: unknown[] })?.chosen.length === n, COPIES, { timeout: 60_000 });
}

test('a bad recipe is refused next to its field; pause, resume and cancel', async () => {
  const view2 = async () => (await view()).batch;
  // A recipe with a wrong type: the message names the key and sits by the acceptance fields.
  await panel().locator('input.recipe-file').setInputFiles({ name: 'bad.recipe.json', mimeType: 'application/json', buffer: Buffer.from('{"schemaVersion":1,"acceptance":{"minStrength":"high"}}') });
  const msg = panel().locator('.err[data-field="acceptance"]');
  await msg.waitFor();
  await expect(msg.textContent()).resolves.toMatch(/acceptance\.minStrength/);
  await chooseCopies();
  await expect(panel().locator('button.start').isDisabled()).resolves.toBe(true);
  await shoot('5-bad-recipe.png');
  // A valid recipe (2 × 2 tiles per image) clears the message.
  await panel().locator('input.recipe-file').setInputFiles({ name: 'tiles.recipe.json', mimeType: 'application/json', buffer: Buffer.from('{"schemaVersion":1,"name":"tiles","area":{"kind":"tiles","infoStripPx":"auto","rows":2,"columns":2}}') });
  await msg.waitFor({ state: 'detached' });
  await panel().locator('button.start').click();
  await s.page.waitForFunction(() => {
    const b = (document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { batch: { ok: number; failed: number; name: string } | null })?.batch;
    return !!b && b.name.startsWith('tiles') && b.ok + b.failed >= 1;
  }, undefined, { timeout: 170_000 });
  await panel().locator('button.pause').click();
  // The files in work finish; no new one is taken.
  await s.page.waitForFunction(() => !(document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { running: boolean }).running, undefined, { timeout: 170_000 });
  const paused = (await view2())!;
  expect(paused.state).toBe('paused');
  expect(paused.ok + paused.failed).toBeLessThan(COPIES);
  expect((await stored(paused.id)).filter((r) => r.status !== 'queued').length).toBe(paused.ok + paused.failed);
  await panel().locator('button.resume').click();
  await s.page.waitForFunction(() => (document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { batch: { state: string } | null })?.batch?.state === 'finished', undefined, { timeout: 170_000 });
  expect(await view2()).toMatchObject({ total: COPIES, ok: COPIES, failed: 0 });

  // Cancel right after the start: the batch is kept as cancelled, with what was finished.
  await chooseCopies();
  await panel().locator('button.start').click();
  await panel().locator('button.cancel').click();
  await s.page.waitForFunction(() => !(document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { running: boolean }).running, undefined, { timeout: 60_000 });
  const cancelled = (await view2())!;
  expect(cancelled.state).toBe('cancelled');
  expect(cancelled.ok + cancelled.failed).toBeLessThan(COPIES);
  expect((await stored(cancelled.id)).filter((r) => r.status !== 'queued').length).toBe(cancelled.ok + cancelled.failed);
  await expect(panel().locator('button.resume').count()).resolves.toBe(0);
  await shoot('6-cancelled.png');
  expect(errors).toEqual([]);
});

test('the scale-bar route reads each bar in the workers; spectrum periods and sheets per file', async () => {
  // Truth (demo-data/index.json): overview 0.5 nm/px with a 100 nm bar; lamellar mesophase
  // 0.3 nm/px with a 50 nm bar and a 3.9 nm period.
  await panel().locator('input.recipe-file').setInputFiles({ name: 'bar.recipe.json', mimeType: 'application/json', buffer: Buffer.from('{"schemaVersion":1,"name":"scale bar","calibration":{"route":"scale-bar"},"measurements":[{"tool":"spectrum","topK":3},{"tool":"sheets"}]}') });
  await panel().locator('input.files').setInputFiles(['tactoid-film_overview.tif', 'lamellar-mesophase.png'].map((name) => ({ name, mimeType: 'image/tiff', buffer: readFileSync(`demo-data/${name}`) })));
  await s.page.waitForFunction(() => (document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { chosen: unknown[] })?.chosen.length === 2);
  await panel().locator('button.start').click();
  await s.page.waitForFunction(() => {
    const b = (document.querySelector('strata-app')?.shadowRoot?.querySelector('strata-batch-panel') as unknown as { batch: { name: string; state: string } | null })?.batch;
    return !!b && b.name.startsWith('scale bar') && b.state === 'finished';
  }, undefined, { timeout: 170_000 });
  const results = await panel().evaluate((el) => (el as unknown as { rows: { name: string; result: { status: string; calibration: { nmPerPx: number; source: string; relUncertainty: number } | null; summary: { topPeriods: { periodPx: number; u: { statisticalPx: number; localVariationPx: number; methodPx: number } }[]; sheetCount: number | null } } }[] }).rows
    .map((r) => ({ name: r.name, status: r.result.status, calibration: r.result.calibration, top: r.result.summary.topPeriods[0] ?? null, sheets: r.result.summary.sheetCount })));
  const overview = results.find((r) => r.name === 'tactoid-film_overview.tif')!;
  const lamellar = results.find((r) => r.name === 'lamellar-mesophase.png')!;
  for (const [r, nmPerPx] of [[overview, 0.5], [lamellar, 0.3]] as const) {
    expect(r.status).toBe('ok');
    expect(r.calibration?.source).toBe('scale-bar');
    expect(Math.abs(r.calibration!.nmPerPx - nmPerPx)).toBeLessThan(2 * r.calibration!.relUncertainty * nmPerPx);
    expect(r.sheets).not.toBeNull();
  }
  // the lamellar period within its expanded uncertainty (k = 2): pixel parts and the calibration's, GUM quadrature
  const t = lamellar.top!;
  const s0 = lamellar.calibration!.nmPerPx;
  const dNm = t.periodPx * s0;
  const uNm = Math.hypot(t.u.statisticalPx * s0, t.u.localVariationPx * s0, t.u.methodPx * s0, dNm * lamellar.calibration!.relUncertainty);
  expect(Math.abs(dNm - 3.9)).toBeLessThan(2 * uNm);
  // the overview holds tactoids of 2 to 10 layers: sheets are found
  expect(overview.sheets).toBeGreaterThan(0);
  await shoot('7-scale-bar.png');
  expect(errors).toEqual([]);
});

test('the batch against a stored diffraction set: matched periods, comparison CSV and every figure as SVG and PNG', async () => {
  // Demo truth (demo-data/index.json): the pattern holds the lamellar 001 at 3.9 nm and the clay
  // 001 at 1.25 nm, the periods of the mesophase and of the tactoids in the batch above.
  await app().getByRole('tab', { name: 'Diffraction', exact: true }).click();
  const xrd = s.page.locator('strata-diffraction-panel');
  await xrd.locator('input[type="file"]').setInputFiles({ name: 'tactoid-film_CuKa.xy', mimeType: 'text/plain', buffer: readFileSync('demo-data/tactoid-film_CuKa.xy') });
  await expect.poll(() => xrd.evaluate((el) => ((el as unknown as { analysis: { peaks: unknown[] } | null }).analysis?.peaks.length ?? 0)), { timeout: 60_000 }).toBeGreaterThan(2);
  await xrd.locator('button', { hasText: 'Save set' }).click();
  // the Diffraction tab also sees the periods of the batches' files
  await xrd.locator('button', { hasText: 'Take periods from the library' }).click();
  await expect.poll(() => xrd.evaluate((el) => (el as unknown as { periods: { label?: string }[] }).periods.filter((p) => p.label?.includes('tactoid-fringes_hr.tif')).length)).toBeGreaterThan(0);
  await app().locator('[role="tab"]', { hasText: 'Batch' }).click();
  const select = panel().locator('select.compare-set');
  await select.focus();
  await expect.poll(() => select.locator('option').count()).toBe(2);
  await select.selectOption({ label: 'tactoid-film_CuKa.xy' });
  const rows = panel().locator('table.comparison tbody tr');
  const table = async () => rows.evaluateAll((trs) => trs.map((tr) => [...tr.querySelectorAll('td')].map((td) => td.textContent?.trim() ?? '')));
  const matched = async (d: number) => {
    const near = async () => (await table()).find((c) => Math.abs(Number(c[0].split('±')[0]) - d) < 0.1 * d);
    await expect.poll(async () => !!(await near()), { timeout: 30_000 }).toBe(true);
    const row = await near();
    expect(row, `a period near ${d} nm`).toBeTruthy();
    expect(row![2]).not.toBe('no match');
    expect(Math.abs(Number(row![4]))).toBeLessThan(3);
  };
  // the batch shown (scale-bar route): the mesophase's 3.9 nm
  await matched(3.9);
  // the first batch (newest first, so the last in the list): the fringes of the tactoids, 1.25 nm
  await panel().locator('table.earlier tr').last().locator('button', { hasText: 'Show' }).click();
  await matched(1.25);
  const cells = await table();
  expect(await panel().locator('.compare svg path.period').count()).toBe(cells.length);
  await shoot('8-diffraction.png');
  const [dl] = await Promise.all([s.page.waitForEvent('download'), panel().locator('button.export-zip').click()]);
  const zip = unzipSync(new Uint8Array(readFileSync((await dl.path())!)));
  for (const name of ['diffraction/comparison.csv', 'diffraction/overlay.svg', 'diffraction/overlay.png']) expect(Object.keys(zip)).toContain(name);
  // PNG signature (ISO/IEC 15948 §5.2)
  expect([...zip['diffraction/overlay.png'].subarray(0, 8)]).toEqual([137, 80, 78, 71, 13, 10, 26, 10]);
  expect(strFromU8(zip['diffraction/comparison.csv']).split('\r\n')[0]).toContain('expandedUncertaintyNm');
  expect(foreignRequests(s.requests, s.url)).toEqual([]);
  expect(errors).toEqual([]);
});
