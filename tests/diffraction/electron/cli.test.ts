import { afterAll, beforeAll, expect, test } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../../src/cli/main';
import { ringStandard, standardRings } from '../../../src/diffraction/electron/standards';
import { encodeTiff } from '../../../testing/encode-tiff';
import { electronPattern, type PatternSpec } from '../../../testing/synthetic/electron-pattern';

// stratameter saed: calibrate on a rendered gold ring pattern, save the setting, measure a sample's
// rings with it. Truth: the rendered camera constant (target: within 0.1 %; d within 0.2 %).
let dir: string;
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'saed-cli-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

const K = 0.058;
function write(name: string, spec: Partial<PatternSpec>): string {
  const s: PatternSpec = { width: 480, height: 480, cx: 236.4, cy: 245.1, kInvNmPerPx: K, ellipticity: 0.015, majorAxisDeg: 30, beamStop: { widthPx: 18, offsetPx: 8 }, counts: 250, seed: 21, ...spec };
  const img = electronPattern(s);
  const file = join(dir, name);
  writeFileSync(file, encodeTiff({ width: img.width, height: img.height, data: Float32Array.from(img.data) }));
  return file;
}

test('calibrate on gold, save the camera, measure a sample: text, JSON and the saved file', async () => {
  const intens = [1, 0.6, 0.45, 0.45, 0.15, 0.1, 0.2, 0.2];
  const gold = write('gold.tif', { rings: standardRings(ringStandard('au'), 8).map((r, i) => ({ gInvNm: r.gInvNm, intensity: intens[i] })) });
  const camFile = join(dir, 'camera.json');
  const c = capture();
  expect(await main(['saed', gold, '--standard', 'au', '--kv', '200', '--detector-pixel-um', '14', '--save-camera', camFile], c.io)).toBe(0);
  const text = c.out.join('');
  expect(text).toMatch(/camera const\.\s+K = 0\.05\d+ nm⁻¹ per px ± [\d.]+ % \(k = 2; contains ring radii/);
  expect(text).toMatch(/wavelength\s+2\.5079 pm at 200 kV/); // reference-values §4
  expect(text).toMatch(/ellipticity\s+1\.\d\d ± /);
  // one index style everywhere (src/figure/reflection-index.ts): the ring table's hkl spaced, never closed up
  expect(text).toMatch(/^ {2}1 1 1 {3}/m);
  expect(text).toMatch(/^ {2}2 2 0 {3}/m);
  expect(text).not.toMatch(/^ {2}\d{3} /m);
  const saved = JSON.parse(readFileSync(camFile, 'utf8'));
  expect(saved.kind).toBe('stratameter-camera-constant');
  expect(Math.abs(saved.kInvNmPerPx / K - 1)).toBeLessThan(0.001);
  expect(saved.voltageKv).toBe(200);

  const sample = write('sample.tif', { rings: [0.449, 0.258, 0.1497].map((d, i) => ({ gInvNm: 1 / d, intensity: [1, 0.7, 0.5][i] })), cx: 240.2, cy: 231.7, seed: 22 });
  const m = capture();
  expect(await main(['saed', sample, '--camera', camFile, '--rings', '--json'], m.io)).toBe(0);
  const r = JSON.parse(m.out.join(''));
  expect(r.rings.map((x: { dNm: number }) => x.dNm).every((d: number, i: number) => Math.abs(d / [0.449, 0.258, 0.1497][i] - 1) < 0.002)).toBe(true);
  expect(r.record.wavelengthNm).toBeCloseTo(0.0025079, 7);
  expect(r.lines).toHaveLength(3);
  const t = capture();
  expect(await main(['saed', sample, '--camera', camFile, '--rings'], t.io)).toBe(0);
  expect(t.out.join('')).toMatch(/d ± U: k = 2, contains the radius/);
  // the saved camera constant's detail names its rings the same way (Au fcc: 111, 200, 220, …)
  expect(t.out.join('')).toMatch(/^camera\s+.*rings 1 1 1, 2 0 0, 2 2 0,/m);
}, 60000);

test('bad input: each gets a message saying what is missing', async () => {
  const gold = join(dir, 'gold.tif');
  const run = async (...args: string[]) => {
    const c = capture();
    const code = await main(['saed', ...args], c.io);
    return { code, err: c.err.join('') };
  };
  expect((await run(gold)).err).toMatch(/give --standard ID to calibrate, or --camera FILE/);
  expect((await run(gold, '--standard', 'au', '--kv', '5000')).err).toMatch(/--kv: the accelerating voltage must be a number of kV from 1 to 3000, got 5000/);
  expect((await run(gold, '--standard', 'au', '--kv', 'abc')).err).toMatch(/from 1 to 3000, got 'abc'/);
  expect((await run(gold, '--standard', 'pt')).err).toMatch(/unknown ring standard 'pt'/);
  expect((await run(gold, '--standard', 'cubic:0.4')).err).toMatch(/cubic:A±U/);
  expect((await run(gold, '--camera-constant', '0.05')).err).toMatch(/--camera-constant must be K±U/);
  const bad = join(dir, 'bad.json');
  writeFileSync(bad, '{"kind":"other"}');
  expect((await run(gold, '--camera', bad)).err).toMatch(/not a camera-constant file/);
  // rings of a bcc lattice cannot be indexed as gold (fcc)
  const bcc = write('bcc.tif', { rings: [2, 4, 6, 8, 10].map((n) => ({ gInvNm: Math.sqrt(n) / 0.33, intensity: 0.6 })) });
  const r = await run(bcc, '--standard', 'au');
  expect(r.code).not.toBe(0);
  expect(r.err).toMatch(/no camera constant makes three or more of them fit the gold \(fcc\) reflections/);
}, 60000);

test('reconcile --saed: the rings measured by saed --json are a diffraction set of their own; a fringe pairs with its ring', async () => {
  // rings at the (02,11), (13,20) and (06,33) band spacings of a smectite (common practice), drawn with K known (synthetic truth)
  const sample = write('smectite-rings.tif', { rings: [0.449, 0.258, 0.1497].map((d, i) => ({ gInvNm: 1 / d, intensity: [1, 0.7, 0.5][i] })), cx: 240.2, cy: 231.7, seed: 23 });
  const m = capture();
  expect(await main(['saed', sample, '--camera-constant', `${K}±0.00003`, '--kv', '200', '--rings', '--json'], m.io)).toBe(0);
  const saedJson = join(dir, 'smectite-rings.json');
  writeFileSync(saedJson, m.out.join(''));
  const ring1 = JSON.parse(m.out.join('')).lines[0];
  // a lattice fringe at 0.4475 ± 0.004 nm (k = 1) and a lamellar period of 1.25 nm that no ring explains
  const measure = join(dir, 'fringes.json');
  writeFileSync(measure, JSON.stringify({ file: 'tactoid.tif', width: 512, height: 512, calibration: { nmPerPx: 0.02, source: 'manual', relUncertainty: 0.01 },
    periodicities: [
      { periodPx: 22.375, periodNm: 0.4475, angleDeg: 10, uncertaintyPx: 0.2, uncertaintyNm: 0.004, strength: 12 },
      { periodPx: 62.5, periodNm: 1.25, angleDeg: 100, uncertaintyPx: 0.3, uncertaintyNm: 0.013, strength: 20 },
    ] }));
  const c = capture();
  expect(await main(['reconcile', '--saed', saedJson, measure, '--json'], c.io)).toBe(0);
  const j = JSON.parse(c.out.join(''));
  expect(j.pattern).toBeNull();
  expect(j.saed).toBe(saedJson);
  expect(j.best[0].label).toBe('smectite-rings.json ring 1');
  expect(j.best[0].dNm).toBeCloseTo(ring1.dNm, 4);
  expect(Math.abs(ring1.dNm / 0.449 - 1)).toBeLessThan(0.002);
  expect(j.best[1]).toBeNull();
  const t = capture();
  expect(await main(['reconcile', '--saed', saedJson, measure], t.io)).toBe(0);
  expect(t.out.join('')).toMatch(/against 3 diffraction line\(s\) from .*smectite-rings\.json/);
  // a camera file is not a measurement; a pattern option without a pattern is refused
  const cam = join(dir, 'cam.json');
  writeFileSync(cam, JSON.stringify({ file: 'gold.tif', uncertainties: 'standard (k = 1)', camera: {}, calibration: {} }));
  const e = capture();
  expect(await main(['reconcile', '--saed', cam, measure], e.io)).toBe(2);
  expect(e.err.join('')).toMatch(/a camera-constant calibration, not a measurement of a sample/);
  const w = capture();
  expect(await main(['reconcile', '--saed', saedJson, '--wavelength', 'CuKa1', measure], w.io)).toBe(2);
  expect(w.err.join('')).toMatch(/--wavelength goes with --pattern/);
}, 60000);
