import { afterAll, beforeAll, expect, test } from 'vitest';
import { csvRows, downloadedText, drag, foreignRequests, imageToPage, openDemoImage, openSession, type Session, artefactDir, nextFrames } from './browser';
import { join } from 'node:path';
import { dToTwoTheta } from '../../src/diffraction/bragg';
import { latticeLines } from '../../src/diffraction/lattice';
import { reflectionWidth, syntheticPattern, type SyntheticPeak } from '../../testing/synthetic/diffraction-pattern';

let s: Session;
beforeAll(async () => { s = await openSession(); });
afterAll(async () => { await s?.close(); });

/** A fresh page at 1366 × 768 with the Diffraction tab open; page errors are collected. */
async function diffractionTab() {
  const errors: string[] = [];
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.setViewportSize({ width: 1366, height: 768 });
  await s.page.goto(s.url);
  await s.page.locator('strata-app').getByRole('tab', { name: 'Diffraction', exact: true }).click();
  return { xrd: s.page.locator('strata-diffraction-panel'), errors };
}

test('the demo pattern: the clay 00l lines indexed with their d budget, the 3.9 nm lamellar phase, no peak on the halo; spots indexed with a built-in phase', async () => {
  const errors: string[] = [];
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.setViewportSize({ width: 1366, height: 768 });
  await s.page.goto(s.url);
  const app = s.page.locator('strata-app');
  await app.getByRole('tab', { name: 'Diffraction', exact: true }).click();
  const xrd = s.page.locator('strata-diffraction-panel');
  await xrd.locator('button', { hasText: 'Demo pattern' }).click();
  await expect.poll(() => xrd.evaluate((el) => ((el as unknown as { analysis: { peaks: unknown[] } | null }).analysis?.peaks.length ?? 0)), { timeout: 60_000 }).toBeGreaterThan(2);
  // demo truth (demo-data/make-demo.ts): 00l of the 1.25 nm clay and the 3.9 nm lamellar 001, 002; a polymer halo near 19.6° that is no peak
  const a = await xrd.evaluate((el) => (el as unknown as { analysis: { peaks: Array<{ twoThetaDeg: number }>; indexing: { phases: Array<{ kind: string; cNm: number }> } } }).analysis);
  const lam = 0.15405929;
  const truth = [3.9, 1.95, 1.25, 1.25 / 2, 1.25 / 3, 1.25 / 4, 1.25 / 5].map((d) => (360 / Math.PI) * Math.asin(lam / (2 * d)));
  // no false peak: every fitted peak is one of the drawn lines
  for (const p of a.peaks) expect(Math.min(...truth.map((t) => Math.abs(t - p.twoThetaDeg)))).toBeLessThan(0.1);
  expect(a.indexing.phases.some((p) => p.kind === 'lamellar' && Math.abs(p.cNm - 1.25) < 0.01)).toBe(true);
  await expect.poll(() => xrd.locator('td', { hasText: '0 0 1' }).count()).toBeGreaterThan(0);
  await expect.poll(() => xrd.locator('p', { hasText: 'from header line' }).count()).toBeGreaterThan(0);
  // the clay phase's crystallite size from all its 00l lines, with what its ± contains (demo truth: 10 nm, Scherrer FWHM drawn)
  const sizeText = (await xrd.locator('.phase-size').allTextContents()).find((t) => /crystallite size/.test(t)) ?? '';
  const m = /crystallite size ([0-9.]+) ± ([0-9.]+) nm \(± 2u\) from (\d+) lines/.exec(sizeText);
  expect(m, sizeText).not.toBeNull();
  expect(Number(m![3])).toBeGreaterThanOrEqual(3);
  expect(Math.abs(Number(m![1]) / 10 - 1)).toBeLessThan(0.15);
  // the one export menu: the peaks as CSV (units and k in the header, d as the panel fitted it) and the pattern's figure
  const csv = await downloadedText(s.page, () => xrd.locator('strata-export-menu button.export-csv').click());
  const { header, rows } = csvRows(csv.text);
  expect(header).toEqual(expect.arrayContaining(['twoThetaDeg', 'dNm', 'uCombinedDNm', 'expandedDNm', 'coverageFactorK']));
  expect(rows).toHaveLength(a.peaks.length);
  rows.forEach((r, i) => expect(Number(r[header.indexOf('twoThetaDeg')])).toBeCloseTo(a.peaks[i].twoThetaDeg, 9));
  const fig = await downloadedText(s.page, () => xrd.locator('strata-export-menu button.export-figure').click());
  expect(fig.name).toMatch(/-pattern\.svg$/);
  expect(fig.text).toContain('<svg');
  // spots of Si seen along ⟨110⟩: 111, 1̄11 and 202 (CODATA a; angles 70.5° and 35.3°, common practice)
  await xrd.locator('textarea[aria-label^="Spots"]').fill('0.3135,10; 0.3135,80.5; 0.192,45.3');
  await xrd.locator('textarea[aria-label^="Spots"]').dispatchEvent('change');
  await xrd.locator('button', { hasText: 'Index spots' }).click();
  await expect.poll(() => xrd.locator('p', { hasText: 'Zone axis' }).textContent(), { timeout: 20_000 }).toMatch(/\[(1 0 -1|1 -1 0|0 1 -1|1 1 0|1 0 1|0 1 1)\]/);
  await xrd.locator('h3', { hasText: 'Index spots' }).scrollIntoViewIfNeeded();
  if (process.env.SCREENSHOT_DIR) await s.page.screenshot({ path: `${process.env.SCREENSHOT_DIR}/diffraction-panel.png` });
  expect(errors).toEqual([]);
  expect(foreignRequests(s.requests, s.url)).toEqual([]);
}, 120_000);

test('cross-check: the fringes measured in a micrograph against the pattern; at 1366 × 768 the pattern plot has the main area beside the image (≥ 600 px wide, on screen)', async () => {
  await s.page.setViewportSize({ width: 1366, height: 768 });
  await s.page.goto(s.url);
  // the fringes of the high-magnification demo (1.25 nm, demo-data/index.json), measured and kept in the library
  await openDemoImage(s.page, 'Tactoid lattice fringes', 1024, 'Periods');
  const periods = s.page.locator('strata-measure-panel');
  await periods.locator('button', { hasText: 'Draw region' }).click();
  await drag(s.page, await imageToPage(s.page, 250, 250), await imageToPage(s.page, 410, 410));
  await expect.poll(() => periods.evaluate((el) => (el as unknown as { spots: unknown[] }).spots.length), { timeout: 60_000 }).toBeGreaterThan(0);
  await periods.locator('button', { hasText: 'Save spectrum spots' }).click();
  await s.page.locator('strata-app [role="tab"]', { hasText: 'Diffraction' }).first().click();
  const xrd = s.page.locator('strata-diffraction-panel');
  await xrd.locator('button', { hasText: 'Demo pattern' }).click();
  const plot = xrd.locator('strata-plot');
  await expect.poll(() => plot.count(), { timeout: 60_000 }).toBe(1);
  const pb = (await plot.boundingBox())!;
  expect(pb.width).toBeGreaterThanOrEqual(600);
  expect(pb.y + pb.height).toBeLessThanOrEqual(768);
  const demo = (await xrd.locator('button', { hasText: 'Demo pattern' }).boundingBox())!;
  expect(demo.x).toBeGreaterThan(pb.x + pb.width);
  expect(demo.y + demo.height).toBeLessThanOrEqual(768);
  // the periods from the library against the lines: 1.25 nm meets the clay's 0 0 1 (demo truth: both 1.25 nm) within 2 u
  await xrd.locator('button', { hasText: 'Take periods from the library' }).click();
  const row = xrd.locator('h3', { hasText: 'Micrograph periods against diffraction' }).locator('xpath=..').locator('tr', { hasText: /^1\.2/ }).first();
  await expect.poll(() => row.count(), { timeout: 20_000 }).toBe(1);
  const cells = await row.locator('td').allTextContents();
  expect(cells[1]).toMatch(/0 0 1/);
  expect(Math.abs(Number(cells[4]))).toBeLessThanOrEqual(2);
  // the lines no period matched: each with its d ± U, every index spaced (demo truth: the clay's
  // 0 0 2 at 0.625 nm and the lamellar phase's 0 0 2 at 1.95 nm are two lines, both listed)
  const unmatched = ((await xrd.locator('p.unmatched').textContent()) ?? '').replace(/^Unmatched lines \(d ± U, nm\):\s*/, '').split(';').map((t) => t.trim());
  expect(unmatched.length).toBeGreaterThanOrEqual(3);
  for (const t of unmatched) expect(t).toMatch(/ \(d [0-9.]+ ± [0-9.]+\)$/);
  for (const t of unmatched) expect(t).not.toMatch(/(?:^|\s)00\d/);
  expect(unmatched.filter((t) => t.includes('0 0 2 (d 0.62')).length).toBe(1);
  expect(unmatched.filter((t) => t.includes('0 0 2 (d 1.9')).length).toBe(1);
  // every ± of the cross-check says what it contains: U = k·u with k, the period's parts (the
  // pooled budget of the saved spots: statistical and calibration at least) and the d's parts
  const note = (await xrd.locator('table.cross-check + p.budget-note').textContent()) ?? '';
  expect(note).toMatch(/U = k·u with k = 2/);
  expect(note).toMatch(/Period: [^.]*statistical[^.]*calibration/);
  expect(note).toMatch(/d: fit, profile shape, zero shift and wavelength/);
  // the micrograph period's label stays in the plot area: none of its green is drawn over the tick
  // labels left of or below the plot (it once was, right-aligned by the plot library's text settings)
  await nextFrames(s.page);
  const green = await plot.evaluate((el) => {
    const u = (el as unknown as { chart: { ctx: CanvasRenderingContext2D; bbox: { left: number; top: number; width: number; height: number } } }).chart;
    const { width, height } = u.ctx.canvas;
    const px = u.ctx.getImageData(0, 0, width, height).data;
    let outside = 0;
    let inside = 0;
    for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) {
      const i = 4 * (y * width + x);
      if (Math.abs(px[i] - 0x7f) > 24 || Math.abs(px[i + 1] - 0xd1) > 24 || Math.abs(px[i + 2] - 0x8b) > 24) continue;
      const b = u.bbox;
      if (x >= b.left && x < b.left + b.width && y >= b.top && y < b.top + b.height) inside++;
      else outside++;
    }
    return { inside, outside };
  });
  expect(green.inside).toBeGreaterThan(50);
  expect(green.outside).toBe(0);
  await s.page.screenshot({ path: join(artefactDir('diffraction'), 'wide-1366x768.png') });
}, 120_000);

test('the Lorentz–polarisation geometry chosen beside the wavelength reaches the worker\'s fit, is shown next to the wavelength and goes into the export', async () => {
  const { xrd, errors } = await diffractionTab();
  const lpLabel = () => xrd.evaluate((el) => (el as unknown as { analysis: { lpLabel: string } | null }).analysis?.lpLabel ?? null);
  const shown = () => xrd.locator('p.muted', { hasText: 'Wavelength' }).locator('span.lp-label').textContent();
  await xrd.locator('button', { hasText: 'Demo pattern' }).click();
  // the default: a random powder in Bragg–Brentano reflection
  await expect.poll(lpLabel, { timeout: 60_000 }).toBe('random powder, Bragg–Brentano, no monochromator');
  await expect.poll(shown).toContain('random powder, Bragg–Brentano, no monochromator');
  // an oriented film, then a graphite monochromator (2θm 26.6° with Cu Kα, common practice); a monochromator 2θ that is no angle is refused naming it
  await xrd.locator('select.lp-geometry').selectOption('oriented-film');
  await expect.poll(lpLabel, { timeout: 60_000 }).toBe('oriented film, Bragg–Brentano, no monochromator');
  await xrd.locator('input.monochromator').fill('200');
  await xrd.locator('input.monochromator').press('Enter');
  await expect.poll(() => xrd.locator('p.error').textContent()).toMatch(/monochromator's 2θ in degrees, between 0 and 180.*got "200"/);
  await xrd.locator('input.monochromator').fill('26.6');
  await xrd.locator('input.monochromator').press('Enter');
  const film = 'oriented film, Bragg–Brentano, monochromator 2θm 26.6°';
  await expect.poll(lpLabel, { timeout: 60_000 }).toBe(film);
  await expect.poll(shown).toContain(film);
  expect(await xrd.locator('p.error').count()).toBe(0);
  // the export keeps it as it keeps the wavelength's source: a CSV column and note, and the JSON
  const csv = await downloadedText(s.page, () => xrd.locator('strata-export-menu button.export-csv').click());
  expect(csvRows(csv.text).header).toContain('lorentzPolarisation');
  expect(csv.text).toContain(`Lorentz–polarisation factor across each line: ${film}`);
  const json = await downloadedText(s.page, () => xrd.locator('strata-export-menu button.export-json').click());
  expect(json.text).toContain(`"lorentzPolarisation": "${film}"`);
  // none (transmission, synchrotron): no monochromator to give
  await xrd.locator('select.lp-geometry').selectOption('none');
  await expect.poll(lpLabel, { timeout: 60_000 }).toBe('none');
  await expect.poll(shown).toContain('none');
  expect(await xrd.locator('input.monochromator').count()).toBe(0);
  expect(errors).toEqual([]);
}, 120_000);

test('an internal standard: Si (SRM 640f) picked in the panel measures the zero shift of a Si + fcc-metal pattern; the line says what its ± contains', async () => {
  // Si at the SRM 640f cell (a = 0.5431144 ± 0.000008 nm, k = 2; Black et al., Powder Diffr. 35 (2020),
  // reference-values.md §2) with its d-glide (ITC A, Fd-3m), an fcc metal (a = 0.40782 nm, from memory)
  // and a +0.06° zero shift, Cu Kα1 (ITC C, reference-values.md); seeded Poisson noise (seed 16)
  const CU1 = 0.154059292;
  const diamond = (h: number, k: number, l: number) => ([h, k, l].every((v) => v % 2 === 0) ? (h + k + l) % 4 === 0 : true);
  const peaks: SyntheticPeak[] = [];
  const add = (aNm: number, allows: ((h: number, k: number, l: number) => boolean) | null, sizeNm: number, top: number, rel: number[]) => {
    latticeLines({ kind: 'cubic-F', aNm, cNm: aNm }, CU1 / (2 * Math.sin((118 * Math.PI) / 360))).filter((l) => !allows || allows(...l.hkl)).forEach((l, i) => {
      const tt = dToTwoTheta(l.dNm, CU1);
      const w = reflectionWidth(tt, sizeNm, CU1);
      peaks.push({ twoThetaDeg: tt, area: top * (rel[i] ?? 0.1), fwhmDeg: w.fwhmDeg, eta: w.eta });
    });
  };
  add(0.5431144, diamond, 300, 250, [1, 0.55, 0.3, 0.06, 0.11, 0.12, 0.07, 0.05]);
  add(0.40782, null, 30, 400, [1, 0.5, 0.3, 0.35, 0.1, 0.05, 0.12, 0.1]);
  const pattern = syntheticPattern(peaks, { rangeDeg: [20, 120], stepDeg: 0.02, wavelengthNm: CU1, ka2Nm: null, zeroShiftDeg: 0.06, seed: 16 });
  const text = `# Cu Ka1 1.540593 A, primary monochromator\n${Array.from(pattern.x, (x, i) => `${x.toFixed(4)} ${pattern.y[i]}`).join('\n')}\n`;
  const { xrd, errors } = await diffractionTab();
  type Seen = { indexing: { zeroShiftDeg: number | null; zeroShiftUncDeg: number | null; phases: Array<{ standard: boolean; name: string }> } } | null;
  const analysis = () => xrd.evaluate((el) => (el as unknown as { analysis: Seen }).analysis);
  await xrd.locator('select.internal-standard').selectOption('si');
  await xrd.locator('input[type="file"]').setInputFiles({ name: 'si-metal.xy', mimeType: 'text/plain', buffer: Buffer.from(text) });
  await expect.poll(async () => (await analysis())?.indexing.phases.some((p) => p.standard) ?? false, { timeout: 60_000 }).toBe(true);
  const a = (await analysis())!;
  expect(a.indexing.phases.find((p) => p.standard)!.name).toBe('Si (SRM 640f)');
  const z = a.indexing.zeroShiftDeg!;
  const zU = a.indexing.zeroShiftUncDeg!;
  // the drawn shift, within 3u and the 0.002° the fit of a noisy pattern leaves (as the command line's test)
  expect(Math.abs(z - 0.06)).toBeLessThan(3 * zU + 0.002);
  const line = (await xrd.locator('p.zero-shift').textContent()) ?? '';
  expect(line).toMatch(/Zero shift 0\.0[5-7]\d* ± [0-9.]+° \(± 2u, k = 2\), measured on the internal standard Si \(SRM 640f\)/);
  expect(line).toMatch(/the ± contains the fit of the standard's lines and the certified cell's uncertainty/);
  // none: the same pattern without a standard says its zero shift comes from the indexed lines
  await xrd.locator('select.internal-standard').selectOption('none');
  await expect.poll(async () => (await analysis())?.indexing.phases.some((p) => p.standard) ?? true, { timeout: 60_000 }).toBe(false);
  await expect.poll(() => xrd.locator('p.zero-shift', { hasText: 'internal standard' }).count()).toBe(0);
  expect(errors).toEqual([]);
}, 120_000);

test('files of other layouts: four unnamed columns ask for the columns to read, and a CIF holding a measured profile opens as a pattern', async () => {
  // the real COD 1516218 counts (public domain; tests/fixtures/reference-data/SOURCES.md §2)
  const { readFileSync } = await import('node:fs');
  const rows = readFileSync('tests/fixtures/reference-data/xrd-powder_propylammonium-chloride_CuKa12_COD1516218_2theta-counts.xy', 'utf8')
    .split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#')).map((l) => l.trim().split(/\s+/));
  const { xrd, errors } = await diffractionTab();
  const peaks = () => xrd.evaluate((el) => (el as unknown as { analysis: { peaks: unknown[] } | null }).analysis?.peaks.length ?? 0);
  const four = `# Cu K-alpha1 1.540598 A, K-alpha2 1.544390 A\n${rows.map(([x, y]) => `${x} ${y} 1 0`).join('\n')}\n`;
  await xrd.locator('input[type="file"]').setInputFiles({ name: 'four-columns.dat', mimeType: 'text/plain', buffer: Buffer.from(four) });
  await expect.poll(() => xrd.locator('p.error').textContent(), { timeout: 30_000 }).toMatch(/4 columns and no names for them; give the columns to read/);
  await xrd.locator('input.columns').fill('1,2');
  await xrd.locator('input.columns').press('Enter');
  await expect.poll(peaks, { timeout: 60_000 }).toBeGreaterThan(20);
  expect(await xrd.locator('p.error').count()).toBe(0);
  // the same counts as a CIF, opened from the app's own file button: it goes to the panel as a pattern
  const counts: string[] = [];
  for (let i = 0; i < rows.length; i += 8) counts.push(rows.slice(i, i + 8).map((r) => r[1]).join(' '));
  const cif = ['data_1516218', "_diffrn_radiation_type 'Cu K\\a'", 'loop_', '_diffrn_radiation_wavelength', '_diffrn_radiation_wavelength_wt', '1.540598 1.0', '1.544390 0.5',
    '_pd_meas_2theta_range_min 3.000', '_pd_meas_2theta_range_max 89.988', '_pd_meas_2theta_range_inc 0.022', 'loop_', '_pd_meas_counts_total', ...counts, ''].join('\n');
  await s.page.locator('strata-app').locator('input.open').setInputFiles([{ name: 'profile.cif', mimeType: 'chemical/x-cif', buffer: Buffer.from(cif) }]);
  await expect.poll(() => xrd.evaluate((el) => (el as unknown as { fileName: string | null }).fileName), { timeout: 30_000 }).toBe('profile.cif');
  const notes = () => xrd.evaluate((el) => ((el as unknown as { pattern: { notes: string[] } | null }).pattern?.notes ?? []).join(' | '));
  await expect.poll(notes, { timeout: 60_000 }).toMatch(/CIF data block '1516218'/);
  await expect.poll(peaks, { timeout: 60_000 }).toBeGreaterThan(20);
  await expect.poll(async () => [await xrd.locator('input.columns').count(), await xrd.locator('p.error').count()]).toEqual([0, 0]);
  const source = (await xrd.locator('p.muted', { hasText: 'Wavelength' }).first().textContent()) ?? '';
  expect(source).toMatch(/Cu Kα1 0\.1540598 nm \+ Kα2 0\.154439 nm.*line 6/);
  await s.page.screenshot({ path: join(artefactDir('diffraction'), 'profile-cif-1366x768.png') });
  expect(errors).toEqual([]);
}, 180_000);
