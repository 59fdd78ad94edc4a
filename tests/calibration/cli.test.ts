import { afterAll, beforeAll, expect, test } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { encode } from 'fast-png';
import { main } from '../../src/cli/main';
import { encodeTiff } from '../../testing/encode-tiff';
import { scene, type SceneSpec } from './scenes';

let dir: string;
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'calibrate-cli-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

const spec: SceneSpec = { layout: 'strip-bottom', width: 640, height: 480, lengthPx: 160.4, x0: 50.3, thicknessPx: 8, label: '200 nm', font: 'sans', sizePx: 20, full: 255, seed: 31 };
const truthNmPerPx = 200 / 160.4;

function writePng(name: string): string {
  const img = scene(spec);
  const file = join(dir, name);
  writeFileSync(file, encode({ width: img.width, height: img.height, data: Uint8Array.from(img.data), channels: 1, depth: 8 }));
  return file;
}

function writeTiff(name: string, nmPerPx: number): string {
  const img = scene(spec);
  const file = join(dir, name);
  // pixels per cm = 1e7 nm / nmPerPx
  writeFileSync(file, encodeTiff({ width: img.width, height: img.height, data: Uint8Array.from(img.data), resolution: { x: 1e7 / nmPerPx, unit: 'cm' } }));
  return file;
}

test('a PNG with a scale bar only: the bar is measured and its label read offline', async () => {
  const c = capture();
  expect(await main(['calibrate', writePng('bar.png'), '--json'], c.io)).toBe(0);
  const r = JSON.parse(c.out.join(''));
  expect(r.source).toBe('scale-bar');
  expect(Math.abs(r.scaleBar.lengthPx - spec.lengthPx)).toBeLessThan(0.5);
  expect(r.scaleBar.label).toMatchObject({ value: 200, unit: 'nm' });
  expect(Math.abs(r.nmPerPx / truthNmPerPx - 1)).toBeLessThan(0.005);
  expect(r.scaleBar.stripBox).toEqual([0, expect.any(Number), 640, expect.any(Number)]);
  expect(r.warning).toBeNull();
});

test('metadata and bar that agree: metadata chosen, no warning', async () => {
  const c = capture();
  expect(await main(['calibrate', writeTiff('agree.tif', truthNmPerPx * 1.01), '--json', '--label', '200 nm'], c.io)).toBe(0);
  const r = JSON.parse(c.out.join(''));
  expect(r.source).toBe('metadata');
  expect(r.candidates.map((x: { source: string }) => x.source).sort()).toEqual(['metadata', 'scale-bar']);
  expect(r.warning).toBeNull();
});

test('metadata and bar that disagree beyond k = 2: a warning showing both', async () => {
  const c = capture();
  expect(await main(['calibrate', writeTiff('disagree.tif', truthNmPerPx * 1.3), '--label', '200 nm'], c.io)).toBe(0);
  const text = c.out.join('');
  expect(text).toMatch(/WARNING/);
  expect(text).toMatch(/metadata .* vs scale-bar/);
});

test('a lattice standard with a period measured by hand', async () => {
  const c = capture();
  // graphite (002) 0.3354 nm (IUPAC Gold Book) at 6.708 px → 0.05 nm/px
  expect(await main(['calibrate', writePng('std.png'), '--json', '--no-ocr', '--standard', 'graphite-002', '--period-px', '6.708'], c.io)).toBe(0);
  const r = JSON.parse(c.out.join(''));
  expect(r.source).toBe('standard');
  expect(r.nmPerPx).toBeCloseTo(0.05, 10);
});

test('a lattice standard measured in a region of the demo fringe image (period 25 px by construction)', async () => {
  const c = capture();
  // illite d001 = 1.00 nm (Schroeder) against fringes drawn at 25 px: 0.04 nm/px, which must disagree with the 0.05 nm/px tags
  expect(await main(['calibrate', 'demo-data/tactoid-fringes_hr.tif', '--json', '--standard', 'illite-001', '--region', '180,180,300,300'], c.io)).toBe(0);
  const r = JSON.parse(c.out.join(''));
  expect(r.source).toBe('standard');
  expect(Math.abs(r.nmPerPx / 0.04 - 1)).toBeLessThan(0.01);
  expect(r.warning).toMatch(/disagree/);
});

test('usage errors name the offending value', async () => {
  const c = capture();
  expect(await main(['calibrate', 'x.png', '--label', 'two hundred'], c.io)).toBe(2);
  expect(c.err.join('')).toMatch(/two hundred/);
  const d = capture();
  expect(await main(['calibrate', 'x.png', '--standard', 'kryptonite', '--period-px', '3'], d.io)).toBe(2);
  expect(d.err.join('')).toMatch(/kryptonite/);
  const e = capture();
  expect(await main(['calibrate', '--list-standards'], e.io)).toBe(0);
  expect(e.out.join('')).toMatch(/si-111/);
});

test('a label the readers do not agree on is refused with what was read and why, never a silent pixel size', async () => {
  // "18 nm" is legible but not a round scale-bar value (issue 14: 10 nm once read as 18 nm and taken)
  const img = scene({ ...spec, label: '18 nm', seed: 33 });
  const file = join(dir, 'eighteen.png');
  writeFileSync(file, encode({ width: img.width, height: img.height, data: Uint8Array.from(img.data), channels: 1, depth: 8 }));
  const c = capture();
  expect(await main(['calibrate', file, '--json'], c.io)).toBe(0);
  const r = JSON.parse(c.out.join(''));
  expect(r.nmPerPx).toBeNull();
  expect(r.scaleBar.label).toBeNull();
  expect(r.scaleBar.question).toMatch(/not a round scale-bar value.*Give the label as written/);
  const t = capture();
  await main(['calibrate', file], t.io);
  expect(t.out.join('')).toMatch(/label {10}not taken: .*18 nm.*\(--label\)/);
});

test('calibrate --standard si-110 --region: both axes and the shear of a distorted Si [110] lattice image (stretch 2 %, shear 0.7°)', async () => {
  const { distortedLattice } = await import('../../testing/synthetic/distorted-lattice');
  const { projectedLattice } = await import('../../src/calibration/affine');
  const lat = projectedLattice('si-110');
  const sx = lat.d1Nm / 7.1;
  const img = distortedLattice({ width: 320, height: 320, sxNm: sx, stretch: 0.02, shearDeg: 0.7, d1Nm: lat.d1Nm, d2Nm: lat.d2Nm, angleDeg: lat.angleDeg, rotationDeg: 17, reflections: [{ h: 1, k: 0, amplitude: 0.3 }, { h: 0, k: 1, amplitude: 0.3 }, { h: 1, k: 1, amplitude: 0.15 }], noise: 0.2, seed: 9 });
  const file = join(dir, 'si110.tif');
  writeFileSync(file, encodeTiff({ width: img.width, height: img.height, data: Uint16Array.from(img.data) }));
  const c = capture();
  expect(await main(['calibrate', file, '--no-ocr', '--standard', 'si-110', '--region', '0,0,320,320', '--json'], c.io)).toBe(0);
  const r = JSON.parse(c.out.join(''));
  expect(Math.abs(r.twoAxis.stretchPct - 2)).toBeLessThan(0.1);
  expect(Math.abs(r.twoAxis.shearDeg - 0.7)).toBeLessThan(0.05);
  expect(Math.abs(r.nmPerPx / sx - 1)).toBeLessThan(0.001);
  const t = capture();
  expect(await main(['calibrate', file, '--no-ocr', '--standard', 'si-110', '--region', '0,0,320,320'], t.io)).toBe(0);
  expect(t.out.join('')).toMatch(/two axes {7}x [\d.]+ ± [\d.]+ nm\/px, y [\d.]+ ± [\d.]+ nm\/px \(k = 2/);
  expect(t.out.join('')).toMatch(/distortion {5}stretch \(y\/x − 1\) 2\.\d+ ± [\d.]+ %, shear 0\.\d+ ± [\d.]+°/);
  const e = capture();
  expect(await main(['calibrate', file, '--no-ocr', '--standard', 'si-110', '--period-px', '5'], e.io)).toBe(2);
  expect(e.err.join('')).toMatch(/si-110 \(a zone-axis lattice\) needs --region/);
}, 60000);

test('calibrate --bar-box: a bar drawn straight onto a lattice image is searched only where the user points', async () => {
  const { barScene } = await import('../../testing/synthetic/scale-bar-scenes');
  const { image, truth } = barScene({ width: 640, height: 480, seed: 77, background: 'lattice', holder: 'free', placement: 'above', orientation: 'horizontal', lengthPx: 150.3, thicknessPx: 5, startFraction: 0.3, ink: 'light', label: '20 nm', text: { kind: 'stroke', font: 'sans', capPx: 14, antiAliased: true }, full: 255 });
  const file = join(dir, 'busy.png');
  writeFileSync(file, encode({ width: image.width, height: image.height, data: Uint8Array.from(image.data), channels: 1, depth: 8 }));
  const [lx, ly, lw, lh] = truth.labelBox;
  const x0 = Math.max(0, Math.floor(Math.min(truth.x0, lx)) - 10);
  const y0 = Math.max(0, Math.floor(Math.min(truth.y0, ly)) - 10);
  const x1 = Math.min(639, Math.ceil(Math.max(truth.x1, lx + lw)) + 10);
  const y1 = Math.min(479, Math.ceil(Math.max(truth.y1, ly + lh)) + 10);
  const c = capture();
  expect(await main(['calibrate', file, '--json', '--label', '20 nm', '--bar-box', `${x0},${y0},${x1 - x0},${y1 - y0}`], c.io)).toBe(0);
  const r = JSON.parse(c.out.join(''));
  expect(Math.abs(r.scaleBar.lengthPx - truth.lengthPx)).toBeLessThan(0.5);
  expect(r.nmPerPx).toBeCloseTo(20 / r.scaleBar.lengthPx, 9);
  const e = capture();
  expect(await main(['calibrate', file, '--bar-box', '0,0,9000,10'], e.io)).toBe(2);
  expect(e.err.join('')).toMatch(/--bar-box 0,0,9000,10 reaches outside the 640 × 480 image/);
});

test('calibrate --cell: a zone-axis cell of your own gives the same two axes as the built-in Si [110]', async () => {
  const file = join(dir, 'si110.tif'); // written by the --standard si-110 test above
  const a = capture();
  expect(await main(['calibrate', file, '--no-ocr', '--standard', 'si-110', '--region', '0,0,320,320', '--json'], a.io)).toBe(0);
  const std = JSON.parse(a.out.join('')).twoAxis;
  // Si {111}: d = a/√3 with a = 0.5431020511 nm (CODATA 2018), 70.53° between (1-11) and (1-1-1) normals
  const d = (0.5431020511 / Math.sqrt(3)).toFixed(6);
  const c = capture();
  expect(await main(['calibrate', file, '--no-ocr', '--cell', `${d}±0.000001,${d}±0.000001,${((Math.acos(1 / 3) * 180) / Math.PI).toFixed(4)}`, '--region', '0,0,320,320', '--json'], c.io)).toBe(0);
  const own = JSON.parse(c.out.join('')).twoAxis;
  expect(own.stretchPct).toBeCloseTo(std.stretchPct, 2);
  expect(own.shearDeg).toBeCloseTo(std.shearDeg, 2);
  const e = capture();
  expect(await main(['calibrate', file, '--cell', '0.3,0.3,60', '--region', '0,0,320,320'], e.io)).toBe(2);
  expect(e.err.join('')).toMatch(/--cell must be D1±U1,D2±U2,ANGLE/);
  const f = capture();
  expect(await main(['calibrate', file, '--cell', '0.3±0.001,0.3±0.001,60', '--spacing', '0.3±0.001', '--region', '0,0,320,320'], f.io)).toBe(2);
  expect(f.err.join('')).toMatch(/give one of --standard ID, --spacing D±U or --cell/);
}, 60000);
