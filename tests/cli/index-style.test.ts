// One written form of a reflection index in the command line's text (src/figure/reflection-index.ts):
// spaced ("1 1 1", "0 0 2"), and with several phases indexed, the phase's number first ("2: 1 1 1"),
// as the app's peak table writes it. The patterns are the synthetic diffraction scenarios
// (testing/synthetic/xrd-scenarios.ts: Si, a = 0.5431020511 nm, and LaB6, a = 0.4156826 nm,
// NIST SRM 640f and 660c certificates; a lamellar clay with an fcc metal).
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { expect, test } from 'vitest';
import { main } from '../../src/cli/main';
import { diffractionScenarios } from '../../testing/synthetic/xrd-scenarios';

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

const dir = mkdtempSync(join(tmpdir(), 'strata-index-style-'));

test('xrd and reconcile write each indexed line spaced, with its phase number when several are indexed', { timeout: 120000 }, async () => {
  let twoPhase = 0;
  let indexedSeen = 0;
  for (const s of diffractionScenarios(1).filter((x) => x.name.startsWith('two phases'))) {
    const file = join(dir, `${s.name.replace(/\W+/g, '-')}.xy`);
    writeFileSync(file, s.text);
    const x = capture();
    expect(await main(['xrd', file, '--json'], x.io)).toBe(0);
    const phases = JSON.parse(x.out.join('')).indexing.phases as unknown[];
    const t = capture();
    expect(await main(['xrd', file], t.io)).toBe(0);
    const table = t.out.join('').split('\n').filter((l) => /^\d+\.\d+ ± /.test(l));
    const hklCells = table.map((l) => /\s((?:\d+: )?-?\d+(?: -?\d+){1,3})(?:\s+\(at bound|$)/.exec(l)?.[1]).filter((c): c is string => !!c);
    expect(hklCells.length, s.name).toBeGreaterThan(2);
    // never closed up ("111") or with the phase number run into it ("1:1 1 1")
    for (const c of hklCells) expect(c, s.name).toMatch(phases.length > 1 ? /^\d+: -?\d+( -?\d+){1,3}$/ : /^-?\d+( -?\d+){1,3}$/);
    if (phases.length < 2) continue;
    twoPhase++;
    // reconcile labels the indexed lines as xrd does (a series member keeps its series' label,
    // "Fm3m 1 1 1", "0 0 1"): every unmatched line listed, none indexed without its phase's number
    const dNm = Number(table[0].split(/\s+/)[3]);
    const m = join(dir, 'm.json');
    writeFileSync(m, JSON.stringify({
      file: 'fringes.tif', width: 1024, height: 1024, calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.002 },
      periodicities: [{ periodPx: dNm / 0.05, periodNm: dNm, angleDeg: 30, uncertaintyPx: dNm / 0.05 / 500, uncertaintyNm: dNm / 500, strength: 20 }],
    }));
    const r = capture();
    expect(await main(['reconcile', '--pattern', file, m, '--all-lines'], r.io)).toBe(0);
    const text = r.out.join('');
    const listed = text.slice(text.indexOf('Unmatched')).split('\n').slice(1).filter((l) => l.startsWith('  ')).map((l) => l.trim().split(/\s{2,}/)[0]);
    const indexed = listed.filter((l) => /^(\d+: )?-?\d+ -?\d+ -?\d+$/.test(l) && !/^0 0 \d+$/.test(l));
    indexedSeen += indexed.length;
    for (const l of indexed) expect(l, s.name).toMatch(/^\d+: /);
  }
  expect(twoPhase).toBeGreaterThan(0);
  expect(indexedSeen).toBeGreaterThan(0);
});
