/**
 * Accuracy of the diffraction peak fit on seeded synthetic patterns with known truth:
 * true vs fitted position, FWHM and Scherrer size, for three scenarios. A true peak counts as
 * found when a fitted peak lies within 0.3 FWHM of it; errors are over found peaks.
 *   npm run bench:diffraction
 */
import { dToTwoTheta } from '../src/diffraction/bragg';
import { fitPattern } from '../src/diffraction/peaks';
import { scherrerSize } from '../src/diffraction/scherrer';
import { indexSeries } from '../src/diffraction/series';
import { syntheticPattern, type SyntheticOptions, type SyntheticPeak } from '../testing/synthetic/diffraction-pattern';

const CU = 0.154059292;
const SEEDS = [1, 2, 3, 4, 5];

/** FWHM in degrees for a crystallite size D in nm at 2θ by the Scherrer relation (K = 0.9). */
const fwhmFor = (sizeNm: number, twoThetaDeg: number) => ((0.9 * CU) / (sizeNm * Math.cos((twoThetaDeg * Math.PI) / 360)) * 180) / Math.PI;

interface Scenario {
  name: string;
  peaks: SyntheticPeak[];
  sizesNm: number[];
  options: SyntheticOptions;
  fit: Parameters<typeof fitPattern>[1];
  period?: number;
}

function lamellar(): Scenario {
  const period = 4.0; // nm: a surfactant-intercalated clay, our scenario
  const size = 40;
  const peaks = [1, 2, 3, 4].map((l, i) => {
    const tt = dToTwoTheta(period / l, CU);
    return { twoThetaDeg: tt, area: [900, 300, 120, 50][i], fwhmDeg: fwhmFor(size, tt), eta: 0.5 };
  });
  return { name: 'lamellar 4.0 nm, 001–004 (low angle)', peaks, sizesNm: peaks.map(() => size), options: { rangeDeg: [1.2, 11], stepDeg: 0.01, background: { a: 150, b: 30000, c: 0.6 } }, fit: { backgroundIterations: 60 }, period };
}

function clay(): Scenario {
  const period = 1.25; // nm: one-water-layer smectite tactoids in a polymer film, our scenario
  const basalSize = 8;
  const out: SyntheticPeak[] = [];
  const sizes: number[] = [];
  [1, 2, 3, 4, 5].forEach((l, i) => {
    const tt = dToTwoTheta(period / l, CU);
    out.push({ twoThetaDeg: tt, area: [600, 80, 120, 40, 60][i], fwhmDeg: fwhmFor(basalSize, tt), eta: 0.6 });
    sizes.push(basalSize);
  });
  for (const [d, a] of [[0.449, 250], [0.256, 150], [0.15, 90]] as const) {
    const tt = dToTwoTheta(d, CU);
    out.push({ twoThetaDeg: tt, area: a, fwhmDeg: fwhmFor(20, tt), eta: 0.4 });
    sizes.push(20);
  }
  return { name: 'layered 1.25 nm, 00l + hk0', peaks: out, sizesNm: sizes, options: { rangeDeg: [3, 70], stepDeg: 0.02, background: { a: 300, b: 3000, c: 3, slope: -2 } }, fit: { backgroundIterations: 120 }, period };
}

function crystalline(): Scenario {
  const a = 0.5431144; // nm, Si cell (SRM 640f, Black et al. 2020) as a stand-in crystalline phase
  const hkl = [[1, 1, 1], [2, 2, 0], [3, 1, 1], [4, 0, 0], [3, 3, 1]];
  const size = 60;
  const peaks = hkl.map(([h, k, l], i) => {
    const tt = dToTwoTheta(a / Math.hypot(h, k, l), CU);
    return { twoThetaDeg: tt, area: [400, 250, 150, 40, 60][i], fwhmDeg: fwhmFor(size, tt), eta: 0.5 };
  });
  return { name: 'crystalline (Si cell), Kα doublets', peaks, sizesNm: peaks.map(() => size), options: { rangeDeg: [20, 85], stepDeg: 0.01, background: { a: 120, b: 0, c: 1 } }, fit: {} };
}

const median = (v: number[]) => {
  const s = [...v].sort((a, b) => a - b);
  return s.length ? (s.length % 2 ? s[(s.length - 1) / 2] : 0.5 * (s[s.length / 2 - 1] + s[s.length / 2])) : NaN;
};

const rows: string[][] = [];
const t0 = Date.now();
for (const sc of [lamellar(), clay(), crystalline()]) {
  let found = 0;
  let extra = 0;
  let posErr = 0;
  let posMax = 0;
  let posZ = 0;
  const fwErrs: number[] = [];
  const sizeErrs: number[] = [];
  let noSize = 0;
  let n = 0;
  let cellErr = 0;
  let cells = 0;
  let ms = 0;
  for (const seed of SEEDS) {
    const p = syntheticPattern(sc.peaks, { ...sc.options, seed });
    const t = Date.now();
    const fit = fitPattern(p, sc.fit);
    ms += Date.now() - t;
    const used = new Set<number>();
    sc.peaks.forEach((tp, i) => {
      let bj = -1;
      fit.peaks.forEach((q, j) => {
        if (!used.has(j) && Math.abs(q.twoThetaDeg! - tp.twoThetaDeg) < 0.3 * tp.fwhmDeg && (bj < 0 || Math.abs(q.twoThetaDeg! - tp.twoThetaDeg) < Math.abs(fit.peaks[bj].twoThetaDeg! - tp.twoThetaDeg))) bj = j;
      });
      if (bj < 0) return;
      used.add(bj);
      const q = fit.peaks[bj];
      found++;
      n++;
      const e = Math.abs(q.twoThetaDeg! - tp.twoThetaDeg);
      posErr += e;
      posMax = Math.max(posMax, e);
      posZ += (e / (q.twoThetaUncDeg ?? Infinity)) ** 2;
      fwErrs.push(Math.abs(q.fwhmDeg! / tp.fwhmDeg - 1));
      // as analysePattern: no size from a FWHM known to worse than half its value or at its bound
      if (q.fwhmUncDeg! > 0.5 * q.fwhmDeg! || q.atBound.includes('fwhm')) {
        noSize++;
        return;
      }
      const s = scherrerSize(q.fwhmDeg!, q.twoThetaDeg!, CU).sizeNm ?? NaN;
      sizeErrs.push(Math.abs(s / sc.sizesNm[i] - 1));
    });
    extra += fit.peaks.length - used.size;
    if (sc.period) {
      const lam = indexSeries(fit.peaks).find((s) => s.kind === 'lamellar');
      if (lam) {
        cellErr += Math.abs(lam.cellNm / sc.period - 1);
        cells++;
      }
    }
  }
  rows.push([
    sc.name,
    `${found}/${sc.peaks.length * SEEDS.length}`,
    String(extra),
    (posErr / n).toExponential(2),
    posMax.toExponential(2),
    Math.sqrt(posZ / n).toFixed(2),
    `${(100 * median(fwErrs)).toFixed(2)} / ${(100 * Math.max(...fwErrs)).toFixed(1)}`,
    `${(100 * median(sizeErrs)).toFixed(2)} / ${(100 * Math.max(...sizeErrs)).toFixed(1)}`,
    String(noSize),
    sc.period ? `${cells}/${SEEDS.length}, ${(100 * cellErr / Math.max(1, cells)).toFixed(3)}` : '—',
    (ms / SEEDS.length).toFixed(0),
  ]);
}
const head = ['scenario', 'found', 'extra', 'mean |Δ2θ| °', 'max |Δ2θ| °', 'rms Δ/σ', 'FWHM err % median / max', 'size err % median / max', 'no size', 'lamellar period: found, err %', 'ms/pattern'];
const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
const line = (r: string[]) => '| ' + r.map((c, i) => c.padEnd(widths[i])).join(' | ') + ' |';
console.log(`Diffraction fit accuracy: ${SEEDS.length} seeded Poisson realisations per scenario, Cu Kα1+Kα2 (ratio 0.5), pseudo-Voigt truth; sizes by Scherrer (K 0.9, no instrument term)`);
console.log(line(head));
console.log('|' + widths.map((w) => '-'.repeat(w + 2)).join('|') + '|');
for (const r of rows) console.log(line(r));
console.log(`total ${((Date.now() - t0) / 1000).toFixed(1)} s`);
