import { expect, test } from 'vitest';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { decodeImage } from '../../src/image/decode';
import { findScaleBar } from '../../src/calibration/scale-bar';

// The committed demo files against the true values the generator wrote into index.json.
const index = JSON.parse(readFileSync('demo-data/index.json', 'utf8')) as {
  file: string;
  kind: string;
  truth: Record<string, unknown> & { nmPerPx?: number; scaleBar?: { lengthPx: number; x0Px: number }; stripBox?: number[] };
}[];

test('index.json lists every demo file, and they stay under 8 MB together', () => {
  let total = 0;
  for (const e of index) {
    expect(existsSync(`demo-data/${e.file}`)).toBe(true);
    total += statSync(`demo-data/${e.file}`).size;
    expect(['micrograph', 'pattern']).toContain(e.kind);
  }
  expect(index.length).toBe(5);
  expect(total).toBeLessThan(8e6);
});

for (const e of index.filter((x) => x.kind === 'micrograph')) {
  test(`${e.file}: pixel size and scale bar as the truth says`, () => {
    const img = decodeImage(new Uint8Array(readFileSync(`demo-data/${e.file}`)), e.file);
    const bar = findScaleBar(img);
    if (e.truth.scaleBar) {
      expect(bar).not.toBeNull();
      expect(Math.abs(bar!.lengthPx - e.truth.scaleBar.lengthPx)).toBeLessThan(0.5);
      expect(Math.abs(bar!.x0 - e.truth.scaleBar.x0Px)).toBeLessThan(0.5);
      if (e.truth.stripBox) expect(bar!.stripBox).toEqual(e.truth.stripBox);
    } else {
      expect(bar).toBeNull();
    }
    if (e.truth.fileCalibration === null) expect(img.calibration).toBeNull();
    else expect(img.calibration!.nmPerPx).toBeCloseTo(e.truth.nmPerPx!, 9);
  });
}

test('the powder pattern: two columns, the wavelength header, and the 001 peak where Bragg puts it', () => {
  const text = readFileSync('demo-data/tactoid-film_CuKa.xy', 'utf8');
  expect(text).toMatch(/^# wavelength: 1\.5406 A/m);
  const rows = text.split('\n').filter((l) => l && !l.startsWith('#')).map((l) => l.split(' ').map(Number));
  expect(rows.every((r) => r.length === 2 && r.every(Number.isFinite))).toBe(true);
  // Bragg's law, n λ = 2 d sin θ: d = 1.25 nm, λ = 0.15405929 nm (Cu Kα1, ITC C Table 4.2.2.6) → 2θ = 7.066°
  const expected = (2 * Math.asin(0.15405929 / (2 * 1.25)) * 180) / Math.PI;
  expect(expected).toBeCloseTo(7.066, 3);
  const window = rows.filter(([x]) => x > 5.5 && x < 9);
  const top = window.reduce((a, b) => (b[1] > a[1] ? b : a));
  expect(Math.abs(top[0] - expected)).toBeLessThan(0.15);
});
