// `stratameter measure --report FILE.html`: the command line writes the same report as the app.
// Real data: a STEM HAADF image of Al viewed along [001] at 0.0743 nm/px, Al {200} = a/2 =
// 0.20248 nm (tests/fixtures/reference-data/SOURCES.md §1).
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { expect, test } from 'vitest';
import { main } from '../../src/cli/main';

const STEM = 'tests/fixtures/reference-data/stem-haadf_AlMgSi-alloy_Al-001-matrix_thumbnail256.png';

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

test('--report writes one self-contained HTML report with the ring at Al {200} and the caution', async () => {
  const dir = mkdtempSync(join(tmpdir(), 'report-'));
  try {
    const file = join(dir, 'al.html');
    const c = capture();
    expect(await main(['measure', STEM, '--tool', 'rings', '--nm-per-px', '0.0743', '--report', file], c.io)).toBe(0);
    expect(c.err.join('')).toMatch(/report written to/);
    const html = readFileSync(file, 'utf8');
    expect(html).toContain('Measurement report: stem-haadf_AlMgSi-alloy_Al-001-matrix_thumbnail256.png');
    expect(html).not.toMatch(/<script|<link/i);
    const d = [...html.matchAll(/<td class="n">(\d\.\d+) ± (\d\.\d+)<\/td>/g)].map((m) => [Number(m[1]), Number(m[2])]);
    expect(d.some(([v, u]) => Math.abs(v - 0.20248) <= Math.max(u, 0.005))).toBe(true);
    expect(html).toMatch(/Pixel size <b>0\.074300 nm\/px<\/b>/);
    expect(html).toContain('do not replace a calibration by an accredited laboratory');
    const bad = capture();
    expect(await main(['measure', STEM, '--report', join(dir, 'x.pdf')], bad.io)).toBe(2);
    expect(bad.err.join('')).toMatch(/--report names an HTML file/);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}, 60_000);
