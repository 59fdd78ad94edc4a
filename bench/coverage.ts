/**
 * Coverage benchmark: are the reported period uncertainties honest?
 *
 * Seeded synthetic images with known truth (testing/synthetic/lattice-images.ts, ten families) are
 * measured with analyseRegion over the whole region. Each true periodicity is matched to the
 * nearest reported frequency vector within a tolerance (a harmonic never counts as the
 * fundamental), and error = measured − true period (px) is compared with the reported standard
 * uncertainty u, read through ONE adapter, standardUncertaintyPx.
 *
 * Table 1, per family and overall: how many found; coverage = fraction of ±2u intervals that contain
 * the truth (target 90–98 %; a normal error with honest u gives 95 %); median |error|/u (target
 * 0.4–1.0; 0.67 for a normal error); median relative error; median |error| over the Cramér–Rao
 * bound where it applies (straight fringes filling the region in white noise).
 * Table 2, low-dose: detection probability against dose and against the total SNR η·N, misses and
 * false alarms at the stated family-wise false-alarm probability. Table 3, amorphous: false alarms.
 * Then the worst cases; with --verbose every matched truth as comma-separated lines.
 *
 * Usage: npm run bench:coverage -- [--quick] [--family NAME[,NAME…]] [--verbose] [--seed N]
 *        [--cases N] [--alpha P]
 * --quick: 6 images per family (10 for low-dose and amorphous); --seed: the base seed (another
 * base seed gives a held-out set); --cases: images per family; --alpha: false-alarm probability
 * passed to the measurement (default 0.01 per image, family-wise).
 * Seeded: the same numbers on every run.
 */
import { analyseRegion } from '../src/measure/measure-region';
import * as measurementModule from '../src/measure/measurement';
import type { Periodicity } from '../src/measure/measurement';
import { frequencyCrbStd } from '../src/measure/period-profile';
import type { Spot } from '../src/measure/spectrum';
import { FAMILIES, type FamilyName, generateCase, type LatticeTruth, type TruePeriodicity } from '../testing/synthetic/lattice-images';

// ---------------------------------------------------------------------------------------------
// The one place the benchmark reads an uncertainty.
// ---------------------------------------------------------------------------------------------

/** Parts of a period's uncertainty in px (k = 1), as the record carries them. */
type UncertaintyParts = Record<string, unknown>;

/** The measurement module's helper for the combined uncertainty (record version 2: combinedPx(u)). */
const combinedPxHelper = (measurementModule as unknown as { combinedPx?: (u: UncertaintyParts) => number }).combinedPx;

/**
 * The combined standard uncertainty (k = 1) of a period in px, as the tool reports it.
 * @param p a reported periodicity
 * @returns combinedPx(p.u) when the record has a `u` object and the module exports combinedPx
 *   (record version 2: statistical, local variation and method parts, root-sum-square); the
 *   root-sum-square of u's finite `…Px` parts when only `u` exists; otherwise the version-1 field
 *   uncertaintyPx (the statistical part alone)
 * Notes: every number the benchmark judges passes through here, so a change of the record (issue
 * #13) is a change of this function only. The checks are at run time so the same file also runs on
 * a version-1 checkout, for a before/after comparison.
 */
function standardUncertaintyPx(p: Periodicity): number {
  const record = p as unknown as { u?: unknown; uncertaintyPx?: unknown };
  if (typeof record.u === 'object' && record.u !== null) {
    const u = record.u as UncertaintyParts;
    if (typeof combinedPxHelper === 'function') return combinedPxHelper(u);
    const parts = Object.entries(u)
      .filter(([k, v]) => k.endsWith('Px') && typeof v === 'number' && Number.isFinite(v))
      .map(([, v]) => v as number);
    return Math.hypot(...parts);
  }
  if (typeof record.uncertaintyPx === 'number') return record.uncertaintyPx;
  throw new TypeError('a periodicity without u or uncertaintyPx: update standardUncertaintyPx in bench/coverage.ts');
}

// ---------------------------------------------------------------------------------------------
// Options
// ---------------------------------------------------------------------------------------------

interface Options {
  quick: boolean;
  families: FamilyName[];
  verbose: boolean;
  seedBase: number;
  cases: number | null;
  alpha: number;
}

/** Images per family in the full run. */
const FULL_CASES: Record<FamilyName, number> = {
  straight: 30,
  crossed: 25,
  curved: 30,
  'small-crystal': 30,
  'low-dose': 40,
  blur: 25,
  harmonics: 25,
  saturation: 25,
  uneven: 25,
  amorphous: 40,
};

/** Families for detection statistics only (not in the overall coverage row). */
const DETECTION_FAMILIES: readonly FamilyName[] = ['low-dose', 'amorphous'];

/** Parses the command line; rejects unknown flags and bad values with a message naming them. */
function parseOptions(argv: string[]): Options {
  const o: Options = { quick: false, families: [...FAMILIES], verbose: false, seedBase: 1, cases: null, alpha: 0.01 };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    const value = () => {
      const v = argv[++i];
      if (v === undefined) throw new RangeError(`${a} needs a value`);
      return v;
    };
    if (a === '--quick') o.quick = true;
    else if (a === '--verbose') o.verbose = true;
    else if (a === '--family') {
      const names = value().split(',');
      for (const n of names) if (!(FAMILIES as readonly string[]).includes(n)) throw new RangeError(`unknown family '${n}' (use ${FAMILIES.join(', ')})`);
      o.families = names as FamilyName[];
    } else if (a === '--seed') {
      o.seedBase = Number(value());
      if (!Number.isInteger(o.seedBase)) throw new RangeError(`--seed must be an integer, got ${argv[i]}`);
    } else if (a === '--cases') {
      o.cases = Number(value());
      if (!(Number.isInteger(o.cases) && o.cases >= 1)) throw new RangeError(`--cases must be a positive integer, got ${argv[i]}`);
    } else if (a === '--alpha') {
      o.alpha = Number(value());
      if (!(o.alpha > 0 && o.alpha < 1)) throw new RangeError(`--alpha must be in (0, 1), got ${argv[i]}`);
    } else throw new RangeError(`unknown option '${a}' (use --quick, --family NAME, --verbose, --seed N, --cases N, --alpha P)`);
  }
  return o;
}

/** Images to run for a family. */
function casesFor(family: FamilyName, o: Options): number {
  if (o.cases !== null) return o.cases;
  if (o.quick) return DETECTION_FAMILIES.includes(family) ? 10 : 6;
  return FULL_CASES[family];
}

// ---------------------------------------------------------------------------------------------
// Matching
// ---------------------------------------------------------------------------------------------

/** Distance between a spot and a truth's frequency vector, Friedel mates alike (cycles/px). */
function vectorDistance(s: { fx: number; fy: number }, fx: number, fy: number): number {
  return Math.min(Math.hypot(s.fx - fx, s.fy - fy), Math.hypot(s.fx + fx, s.fy + fy));
}

/** Harmonic orders checked before a report is called unexplained (profiles carry up to 12). */
const HARMONICS = Array.from({ length: 16 }, (_, i) => i + 1);

/** A frequency component folded into the sampled band [−0.5, 0.5) cycles/px (aliasing). */
function fold(f: number): number {
  return f - Math.round(f);
}

/** Axial direction difference in degrees, [0, 90]. */
function axialDiffDeg(a: number, b: number): number {
  let d = Math.abs(a - b) % 180;
  if (d > 90) d = 180 - d;
  return d;
}

/**
 * Matching tolerance in frequency for a truth (cycles/px).
 * @param t the truth; @param minSidePx shorter side of the transformed area
 * @returns max(2 bins, 5 % of |f|, 0.6 / extent), at most 30 % of |f|, so neither a harmonic (2|f|)
 *   nor a half-frequency ever falls inside
 */
function toleranceFor(t: TruePeriodicity, minSidePx: number): number {
  const f = 1 / t.periodPx;
  return Math.min(0.3 * f, Math.max(2 / minSidePx, 0.05 * f, 0.6 / t.extentPx));
}

/**
 * Whether a spot is (a harmonic m ≥ 1 of) a truth, within tolerance.
 * @param s the spot; @param t the truth; @param tol its tolerance; @param m harmonic order
 * @returns the distance (cycles/px) if acceptable, else null
 */
function matchDistance(s: Spot, t: TruePeriodicity, tol: number, m: number): number | null {
  if (t.angleSpreadDeg > 0) {
    // curved lamellae: the spot may lie anywhere on the arc of directions present
    const f = Math.hypot(s.fx, s.fy);
    const angTol = ((tol / (1 / t.periodPx)) * 180) / Math.PI;
    if (Math.abs(f - m / t.periodPx) > m * tol) return null;
    if (axialDiffDeg(s.angleDeg, t.angleDeg) > t.angleSpreadDeg + angTol) return null;
    return vectorDistance(s, m * t.fxPerPx, m * t.fyPerPx);
  }
  const dist = vectorDistance(s, m * t.fxPerPx, m * t.fyPerPx);
  return dist <= m * tol ? dist : null;
}

/** The outcome for one true periodicity. */
interface Row {
  family: FamilyName;
  seed: number;
  label: string;
  truePx: number;
  /** Index of the matched spot, or null if missed. */
  spot: number | null;
  measuredPx: number;
  uPx: number;
  errorPx: number;
  /** Cramér–Rao bound of the period (px) where it applies, else null. */
  crbPx: number | null;
  /** η·N over the transformed area (white-noise families), else null. */
  totalSnr: number | null;
  dosePerPx: number;
  notes: string[];
  /** The reported uncertainty's parts as the record gives them (for the listing), or null. */
  parts?: Record<string, number> | null;
}

/** The outcome for one image. */
interface CaseResult {
  family: FamilyName;
  seed: number;
  rows: Row[];
  /** Reported periods explained by no truth (nor its harmonics or sums); satellite: along a truth's direction. */
  unexplained: { periodPx: number; angleDeg: number; satellite: boolean }[];
  reported: number;
  truth: LatticeTruth;
}

/** Cramér–Rao bound of a period over a w × h area, from the per-pixel white-noise SNR. */
function crbPeriodPx(t: TruePeriodicity, w: number, h: number): number | null {
  if (t.whiteNoiseSnr === null) return null;
  const sx = frequencyCrbStd(t.whiteNoiseSnr, w, h);
  const sy = frequencyCrbStd(t.whiteNoiseSnr, h, w);
  const f2 = t.fxPerPx ** 2 + t.fyPerPx ** 2;
  const sRad = Math.sqrt((t.fxPerPx ** 2 * sx * sx + t.fyPerPx ** 2 * sy * sy) / f2);
  return sRad / f2;
}

/**
 * Generates, measures and matches one case.
 * @param family the family; @param seed its seed; @param alpha false-alarm probability for the search
 * @returns rows (one per truth) and the unexplained reports
 */
async function runCase(family: FamilyName, seed: number, alpha: number): Promise<CaseResult> {
  const { image, truth } = generateCase(family, seed);
  const analysis = await analyseRegion(image, truth.region, { alpha });
  const area = analysis.spectrum.area;
  const minSide = Math.min(area.width, area.height);
  const spots = analysis.spots;
  const periods = analysis.measurement.periodicities;
  const tols = truth.periodicities.map((t) => toleranceFor(t, minSide));
  // one-to-one: acceptable (truth, spot) pairs, nearest first
  const pairs: { t: number; s: number; d: number }[] = [];
  truth.periodicities.forEach((t, ti) =>
    spots.forEach((s, si) => {
      const d = matchDistance(s, t, tols[ti], 1);
      if (d !== null) pairs.push({ t: ti, s: si, d });
    }),
  );
  pairs.sort((a, b) => a.d - b.d);
  const spotOf = new Map<number, number>();
  const used = new Set<number>();
  for (const p of pairs) {
    if (spotOf.has(p.t) || used.has(p.s)) continue;
    spotOf.set(p.t, p.s);
    used.add(p.s);
  }
  // a report is explained by a truth, one of its harmonics, or a sum/difference of two truths;
  // harmonics made after sampling (clipping, 8-bit steps) alias, so vectors are folded into the band
  const explained = (s: Spot) =>
    truth.periodicities.some((t, ti) =>
      HARMONICS.some((m) => {
        if (m / t.periodPx < 0.5 && matchDistance(s, t, tols[ti], m) !== null) return true;
        const tol = Math.min(m * tols[ti], Math.max(tols[ti], 0.25 / t.periodPx));
        return t.angleSpreadDeg === 0 && vectorDistance(s, fold(m * t.fxPerPx), fold(m * t.fyPerPx)) <= tol;
      }),
    ) ||
    truth.periodicities.some((a, i) =>
      truth.periodicities.some((b, j) => {
        if (j <= i) return false;
        const tol = Math.max(tols[i], tols[j]);
        return [1, -1].some((sg) => vectorDistance(s, fold(a.fxPerPx + sg * b.fxPerPx), fold(a.fyPerPx + sg * b.fyPerPx)) <= tol);
      }),
    );
  const unexplained = spots
    .map((s, i) => ({ s, i }))
    .filter(({ s, i }) => !used.has(i) && !explained(s))
    .map(({ s }) => ({
      periodPx: s.periodPx,
      angleDeg: s.angleDeg,
      // along a truth's direction: a side lobe of a finite crystal's or a curved set's spot
      satellite: truth.periodicities.some((t) => axialDiffDeg(s.angleDeg, t.angleDeg) <= Math.max(10, t.angleSpreadDeg)),
    }));
  const rows: Row[] = truth.periodicities.map((t, ti) => {
    const si = spotOf.get(ti) ?? null;
    const notes: string[] = [];
    const crbPx = crbPeriodPx(t, area.width, area.height);
    const totalSnr = t.whiteNoiseSnr === null ? null : t.whiteNoiseSnr * area.width * area.height;
    if (spots.length > 0) {
      const strongest = spots[0];
      for (const m of [2, 3, 4]) if (matchDistance(strongest, t, tols[ti], m) !== null) notes.push(`strongest report is harmonic ×${m}`);
    }
    if (si === null) {
      notes.push('missed');
      return { family, seed: truth.seed, label: t.label, truePx: t.periodPx, spot: null, measuredPx: NaN, uPx: NaN, errorPx: NaN, crbPx, totalSnr, dosePerPx: truth.dosePerPx, notes };
    }
    const p = periods[si];
    const uPx = standardUncertaintyPx(p);
    if (si > 0) notes.push(`report #${si + 1}`);
    const parts = (p as unknown as { u?: Record<string, number> }).u ?? null;
    return { family, seed: truth.seed, label: t.label, truePx: t.periodPx, spot: si, measuredPx: p.periodPx, uPx, errorPx: p.periodPx - t.periodPx, crbPx, totalSnr, dosePerPx: truth.dosePerPx, notes, parts };
  });
  const sat = unexplained.filter((u) => u.satellite).length;
  if (unexplained.length > 0) for (const r of rows) r.notes.push(`${unexplained.length} unexplained report(s), ${sat} along a true direction`);
  return { family, seed: truth.seed, rows, unexplained, reported: spots.length, truth };
}

// ---------------------------------------------------------------------------------------------
// Statistics and tables
// ---------------------------------------------------------------------------------------------

/** Median of a list (NaN when empty). */
function median(v: number[]): number {
  if (v.length === 0) return NaN;
  const s = [...v].sort((a, b) => a - b);
  return s.length % 2 ? s[s.length >> 1] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
}

/**
 * Wilson score interval of a binomial proportion (95 %).
 * Reference: Wilson, J. Am. Stat. Assoc. 22, 209 (1927) (from memory).
 */
function wilson(k: number, n: number): [number, number] {
  if (n === 0) return [NaN, NaN];
  const z = 1.959964;
  const p = k / n;
  const den = 1 + (z * z) / n;
  const c = (p + (z * z) / (2 * n)) / den;
  const h = (z * Math.sqrt((p * (1 - p)) / n + (z * z) / (4 * n * n))) / den;
  return [Math.max(0, c - h), Math.min(1, c + h)];
}

/** A table row's cells. */
function pad(cells: (string | number)[], widths: number[]): string {
  return `| ${cells.map((c, i) => String(c).padStart(widths[i])).join(' | ')} |`;
}

/** The markdown rule under a header, right-aligned columns. */
function rule(widths: number[]): string {
  return `|${widths.map((w) => '-'.repeat(w + 1) + ':').join('|')}|`;
}

/** Percentage with no decimals, or '–'. */
function pct(x: number): string {
  return Number.isFinite(x) ? `${(x * 100).toFixed(0)} %` : '–';
}

/** A number to 2 decimals, or '–'. */
function num(x: number, digits = 2): string {
  return Number.isFinite(x) ? x.toFixed(digits) : '–';
}

/** Coverage-table cells of a set of cases. */
function summary(name: string, cases: CaseResult[]): (string | number)[] {
  const rows = cases.flatMap((c) => c.rows);
  const found = rows.filter((r) => r.spot !== null);
  const z = found.map((r) => Math.abs(r.errorPx) / r.uPx);
  const inside = z.filter((v) => v <= 2).length;
  const [lo, hi] = wilson(inside, found.length);
  const rel = found.map((r) => Math.abs(r.errorPx) / r.truePx);
  const crb = found.filter((r) => r.crbPx !== null).map((r) => Math.abs(r.errorPx) / (r.crbPx as number));
  const extra = cases.filter((c) => c.unexplained.length > 0).length;
  const satellite = cases.filter((c) => c.unexplained.some((u) => u.satellite)).length;
  return [
    name,
    cases.length,
    rows.length,
    found.length,
    found.length ? `${pct(inside / found.length)} (${pct(lo)}–${pct(hi)})` : '–',
    num(median(z)),
    num(z.length ? Math.max(...z) : NaN, 1),
    found.length ? `${(median(rel) * 100).toPrecision(2)} %` : '–',
    crb.length ? `${num(median(crb))} (${crb.length})` : '–',
    `${extra} (${satellite})`,
  ];
}

/** Table 1: coverage per family and overall. */
function coverageTable(results: CaseResult[], families: FamilyName[]): void {
  console.log('## Table 1: coverage of ±2u intervals (target 90–98 %), median |err|/u (target 0.4–1.0)\n');
  const w = [14, 6, 6, 5, 21, 11, 11, 11, 17, 11];
  console.log(pad(['family', 'images', 'truths', 'found', 'coverage ±2u (95% CI)', 'med |err|/u', 'max |err|/u', 'med rel err', 'med |err|/CRB (n)', 'extra (sat.)'], w));
  console.log(rule(w));
  for (const f of families) {
    const cs = results.filter((r) => r.family === f);
    if (cs.length === 0 || f === 'amorphous') continue;
    console.log(pad(summary(DETECTION_FAMILIES.includes(f) ? `${f} *` : f, cs), w));
  }
  const overall = results.filter((r) => !DETECTION_FAMILIES.includes(r.family));
  if (overall.length > 0) console.log(pad(summary('**overall**', overall), w));
  console.log(
    '\nfound: truths matched to a report (nearest frequency vector within max(2 bins, 5 % of |f|, 0.6/extent), ≤ 30 % of |f|; harmonics never count); ' +
      'coverage: |err| ≤ 2u among found; CRB: Cramér–Rao bound of the period for the fundamental in white noise (straight and low-dose); ' +
      'extra: images with a report explained by no truth, harmonic (aliased too) or sum of truths; sat.: of which along a true direction (side lobes of a finite or curved spot). ' +
      '* not in the overall row (detection family).\n',
  );
}

/** Table 2: low-dose detection. */
function lowDoseTable(results: CaseResult[], alpha: number): void {
  const cs = results.filter((r) => r.family === 'low-dose');
  if (cs.length === 0) return;
  console.log(`## Table 2: low-dose detection (false-alarm probability α = ${alpha} per image, family-wise)\n`);
  const w = [16, 6, 9, 10];
  console.log(pad(['dose (e⁻/px)', 'images', 'detected', 'fraction'], w));
  console.log(rule(w));
  const bins: [number, number][] = [[0.5, 1], [1, 2], [2, 5], [5, 10], [10, 20.001]];
  for (const [lo, hi] of bins) {
    const b = cs.filter((c) => c.truth.dosePerPx >= lo && c.truth.dosePerPx < hi);
    const k = b.filter((c) => c.rows[0].spot !== null).length;
    console.log(pad([`${lo}–${Math.round(hi)}`, b.length, k, b.length ? pct(k / b.length) : '–'], w));
  }
  console.log('');
  const w2 = [16, 6, 9, 10];
  console.log(pad(['η·N (total SNR)', 'images', 'detected', 'fraction'], w2));
  console.log(rule(w2));
  const sb: [number, number][] = [[0, 30], [30, 100], [100, 300], [300, 1000], [1000, Infinity]];
  for (const [lo, hi] of sb) {
    const b = cs.filter((c) => (c.rows[0].totalSnr ?? 0) >= lo && (c.rows[0].totalSnr ?? 0) < hi);
    const k = b.filter((c) => c.rows[0].spot !== null).length;
    console.log(pad([hi === Infinity ? `≥ ${lo}` : `${lo}–${hi}`, b.length, k, b.length ? pct(k / b.length) : '–'], w2));
  }
  const missed = cs.filter((c) => c.rows[0].spot === null).length;
  const fa = cs.filter((c) => c.unexplained.length > 0).length;
  console.log(
    `\nmissed periodicities: ${missed} of ${cs.length}; images with a false alarm: ${fa} of ${cs.length} (expected at most ${(alpha * cs.length).toFixed(1)})\n`,
  );
}

/** Table 3: amorphous false alarms. */
function amorphousTable(results: CaseResult[], alpha: number): void {
  const cs = results.filter((r) => r.family === 'amorphous');
  if (cs.length === 0) return;
  console.log(`## Table 3: amorphous regions, false alarms (α = ${alpha} per image)\n`);
  const w = [22, 6, 22, 8];
  console.log(pad(['texture', 'images', 'images with a period', 'reports'], w));
  console.log(rule(w));
  const kindOf = (c: CaseResult) => c.truth.scene.texture.kind + (c.truth.scene.illumination.length ? ' + gradient' : '');
  const kinds = [...new Set(cs.map(kindOf))].sort();
  for (const k of kinds) {
    const b = cs.filter((c) => kindOf(c) === k);
    console.log(pad([k === 'none' ? 'shot noise only' : k === 'none + gradient' ? 'shot only + gradient' : k, b.length, b.filter((c) => c.reported > 0).length, b.reduce((s, c) => s + c.reported, 0)], w));
  }
  const n = cs.filter((c) => c.reported > 0).length;
  console.log(pad(['**all**', cs.length, n, cs.reduce((s, c) => s + c.reported, 0)], w));
  console.log(`\nexpected images with a false alarm: at most ${(alpha * cs.length).toFixed(1)}\n`);
}

/** One row as comma-separated values. */
function csv(r: Row, truth: LatticeTruth): string {
  const z = Math.abs(r.errorPx) / r.uPx;
  return [
    r.family,
    r.seed,
    JSON.stringify(r.label),
    r.truePx.toFixed(4),
    Number.isFinite(r.measuredPx) ? r.measuredPx.toFixed(4) : '',
    Number.isFinite(r.uPx) ? r.uPx.toExponential(2) : '',
    r.parts ? Object.values(r.parts).map((v) => v.toExponential(1)).join(' ') : '',
    Number.isFinite(z) ? z.toFixed(2) : '',
    r.crbPx !== null && Number.isFinite(r.errorPx) ? (Math.abs(r.errorPx) / r.crbPx).toFixed(2) : '',
    JSON.stringify([...truth.notes, ...r.notes].join('; ')),
  ].join(',');
}

/** The worst cases by |err|/u, and with --verbose every row. */
function listings(results: CaseResult[], verbose: boolean): void {
  const all = results.flatMap((c) => c.rows.map((r) => ({ r, t: c.truth })));
  const found = all.filter(({ r }) => r.spot !== null).sort((a, b) => Math.abs(b.r.errorPx) / b.r.uPx - Math.abs(a.r.errorPx) / a.r.uPx);
  const header = 'family,seed,truth,true px,measured px,u px,u parts (stat local method),|err|/u,|err|/CRB,notes';
  console.log('## Worst cases by |err|/u\n');
  console.log('```');
  console.log(header);
  for (const { r, t } of found.slice(0, 12)) console.log(csv(r, t));
  console.log('```\n');
  if (!verbose) return;
  console.log('## All truths\n');
  console.log('```');
  console.log(header);
  for (const { r, t } of all) console.log(csv(r, t));
  for (const c of results) {
    for (const u of c.unexplained) {
      console.log(`${c.family},${c.seed},"unexplained report",,${u.periodPx.toFixed(4)},,,,"angle ${u.angleDeg.toFixed(1)}°${u.satellite ? ', along a true direction' : ''}"`);
    }
  }
  console.log('```\n');
}

async function main(): Promise<void> {
  const o = parseOptions(process.argv.slice(2));
  const started = performance.now();
  const results: CaseResult[] = [];
  for (const family of o.families) {
    const n = casesFor(family, o);
    const fi = FAMILIES.indexOf(family);
    for (let i = 0; i < n; i++) {
      const seed = o.seedBase * 100_000 + fi * 1000 + i;
      results.push(await runCase(family, seed, o.alpha));
    }
    process.stderr.write(`${family}: ${n} images, ${((performance.now() - started) / 1000).toFixed(0)} s\n`);
  }
  console.log(
    `# Coverage of reported period uncertainties (${results.length} images, base seed ${o.seedBase}, α = ${o.alpha}${o.quick ? ', quick' : ''})\n`,
  );
  coverageTable(results, o.families);
  lowDoseTable(results, o.alpha);
  amorphousTable(results, o.alpha);
  listings(results, o.verbose);
  console.log(`elapsed ${((performance.now() - started) / 1000).toFixed(0)} s`);
}

main().catch((e) => {
  console.error(e);
  process.exit(1);
});
