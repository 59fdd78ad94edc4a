/**
 * Indexing a powder pattern's peaks: which lattice (cubic P, I, F; tetragonal P, I; hexagonal P,
 * R; lamellar) explains every strong line, with which cell, zero shift and figures of merit, and
 * mixtures of two phases.
 */
import { cellParameters, centringAllows, cubicMultiplicity, latticeLines, LATTICE_KINDS, qOf, type LatticeCell, type LatticeKind } from './lattice';
import { chiSquareUpperQuantile } from '../measure/stats';
import { lorentzPolarisation } from './bragg';
import { levenbergMarquardt } from './lm';
import { zeroShiftCellPartDeg, type InternalStandard } from './internal-standard';

/** A peak offered to the indexer. */
export interface IndexPeak {
  /** d in nm. */
  dNm: number;
  /** Standard uncertainty of d from the fit, nm. */
  dUncNm: number;
  /** 2θ in degrees and its standard uncertainty (null for q data without a wavelength). */
  twoThetaDeg: number | null;
  twoThetaUncDeg: number | null;
  /** Height or area; lines are called strong relative to the strongest. */
  intensity: number;
  /** FWHM in degrees 2θ, when known: a peak two lines closer than half of it share is matched to the nearer. */
  fwhmDeg?: number | null;
}

/** Options of indexPattern. */
export interface IndexOptions {
  /** Wavelength in nm (needed for the zero shift and 2θ figures of merit; null for q data). */
  wavelengthNm: number | null;
  /** Lattices to try (default all). */
  kinds?: LatticeKind[];
  /** A line is strong at this fraction of the strongest line's intensity (default 0.1). */
  strongFraction?: number;
  /** Largest |Δ2θ| in degrees accepted while searching, before the zero shift is fitted (default 0.08°). */
  searchToleranceDeg?: number;
  /** Refine a zero shift with the cell (2θ data, default true). */
  fitZeroShift?: boolean;
  /** A phase of known cell in the sample (internal standard): its cell is held and only the zero shift is fitted from its lines. */
  standard?: InternalStandard;
  /** Try two-phase mixtures when one phase leaves strong lines unexplained (default true). */
  mixtures?: boolean;
  /** Smallest Smith–Snyder F_N for a phase to be reported (default 8). */
  minFigureOfMerit?: number;
  /** Relative standard uncertainty of the wavelength, carried into the cell (default 0). */
  wavelengthRelU?: number;
}

/** One indexed line. */
export interface IndexedLine {
  /** Index into the input peaks. */
  peak: number;
  hkl: [number, number, number];
  /** Observed d (zero shift removed) and calculated d, nm. */
  dObsNm: number;
  dCalcNm: number;
  /** 2θ observed − calculated (zero shift removed), degrees (null for q data). */
  deltaTwoThetaDeg: number | null;
}

/** A figure of merit. */
export interface FigureOfMerit {
  /** Smith–Snyder F_N = (1/⟨|Δ2θ|⟩)·(N/N_poss), or for q data the same in Q. */
  fN: number;
  /** N used (the first N indexed lines, at most 30). */
  n: number;
  /** Mean |Δ2θ| (degrees) or |ΔQ| (nm⁻²). */
  meanDelta: number;
  /** Possible distinct lines of the lattice up to the Nth line. */
  nPossible: number;
  /** de Wolff M_N = Q_N / (2 ⟨|ΔQ|⟩ N_poss) with N = min(20, lines); named M20 when N = 20. */
  mN: number;
}

/** A phase found by the indexer. */
export interface IndexedPhase {
  kind: LatticeKind;
  /** Refined cell: a and c in nm (for cubic c = a; for lamellar a is NaN and c is the period). */
  aNm: number;
  cNm: number;
  /** Standard uncertainties of a and c (fit, scaled by the Birge ratio when the lines scatter more than their σ, and the wavelength's share). */
  aUncNm: number;
  cUncNm: number;
  /** Zero shift in degrees (observed 2θ = calculated + zeroShift) and its standard uncertainty; null when not fitted. */
  zeroShiftDeg: number | null;
  zeroShiftUncDeg: number | null;
  /** Indexed lines. */
  lines: IndexedLine[];
  /** Strong lines of the pattern this phase does not explain (peak indices). */
  unexplainedStrong: number[];
  figureOfMerit: FigureOfMerit;
  /** True for the internal standard given by the user. */
  standard: boolean;
  /** Name: the standard's, or the lattice in words. */
  name: string;
}

/** Result of indexPattern. */
export interface IndexResult {
  /** One or two phases (none when nothing passes). */
  phases: IndexedPhase[];
  /** Peaks no phase explains. */
  unindexed: number[];
  /** The zero shift applied to every peak (from the standard, else from the phase with the most lines), or null. */
  zeroShiftDeg: number | null;
  zeroShiftUncDeg: number | null;
  notes: string[];
}

const DEG = Math.PI / 180;
/**
 * Allowance for a line position's profile and background misfit beside the fit's own uncertainty,
 * as a fraction of the line's FWHM (a judgement: a broad line on a halo's flank moves by a few
 * hundredths of a degree). Used while searching; an indexed phase's cell is refined again on its
 * lines' own uncertainties, its ± widened by the Birge ratio when they scatter beyond them (ownScatter).
 */
const PROFILE_ALLOWANCE = 0.03;
/** Shortest cell edge considered, nm (common practice: no crystal has a lattice edge below 0.2 nm). */
const MIN_EDGE_NM = 0.2;
const LATTICE_WORDS: Record<LatticeKind, string> = {
  'cubic-P': 'primitive cubic',
  'cubic-I': 'body-centred cubic',
  'cubic-F': 'face-centred cubic',
  'tetragonal-P': 'primitive tetragonal',
  'tetragonal-I': 'body-centred tetragonal',
  'hexagonal-P': 'hexagonal',
  'hexagonal-R': 'rhombohedral (hexagonal axes)',
  lamellar: 'lamellar stack',
};

/** 2θ in degrees of Q = 1/d² (nm⁻²) at a wavelength, NaN beyond 180°. */
function twoThetaOfQ(q: number, lambda: number): number {
  const s = (lambda * Math.sqrt(q)) / 2;
  return s >= 1 ? NaN : (2 * Math.asin(s)) / DEG;
}

interface Work {
  peaks: IndexPeak[];
  lambda: number | null;
  /** Observed Q, nm⁻². */
  q: number[];
  /** σ of Q. */
  sq: number[];
  /** 2θ (null without a wavelength). */
  tt: Array<number | null>;
  /** σ of 2θ: the fit's own, with an allowance of PROFILE_ALLOWANCE × FWHM for profile and background misfit. */
  stt: number[];
  /** σ of 2θ from the fit alone. */
  sttFit: number[];
  /** FWHM in degrees (0 when unknown). */
  fw: number[];
  strong: Set<number>;
  strongOrder: number[];
  dMin: number;
  dMax: number;
  /** The peak of largest d (the lowest-angle line). */
  first: number;
}

interface Trial {
  kind: LatticeKind;
  a: number;
  c: number;
  zero: number;
  /** Further reflection conditions of a known structure (an internal standard's space group). */
  allows?: (h: number, k: number, l: number) => boolean;
}

/**
 * Lines of a trial cell within the pattern's d range. At the low-angle end the range reaches down
 * by the first line's own assignment budget (3σ of its 2θ) and the trial's zero shift: a first
 * order at 6° moved by 0.03° changes d by 0.5 %, and a cell refined a little long must not lose
 * its first line for lying just beyond the largest observed d.
 */
function linesOf(w: Work, t: Trial) {
  const cell: LatticeCell = { kind: t.kind, aNm: t.a, cNm: t.c };
  let dHi = w.dMax * 1.005;
  const tt0 = w.tt[w.first];
  if (w.lambda !== null && tt0 !== null) {
    const low = tt0 - Math.abs(t.zero) - 3 * w.stt[w.first] - 0.02;
    if (low > 0) dHi = Math.max(dHi, w.lambda / (2 * Math.sin((low * DEG) / 2)));
  }
  const all = latticeLines(cell, w.dMin * 0.995, dHi);
  return t.allows ? all.filter((l) => t.allows!(...l.hkl)) : all;
}

/**
 * Assigns each peak to the nearest line within tolerance (2θ data: |Δ2θ| after the zero shift;
 * q data: |ΔQ| within 3σ + 0.2 %).
 */
function assign(w: Work, t: Trial, lines: ReturnType<typeof latticeLines>, tolDeg: number) {
  const out: Array<{ peak: number; line: number; delta: number; overlap: boolean } | null> = [];
  const qs = lines.map((l) => l.q);
  for (let i = 0; i < w.q.length; i++) {
    let best = -1;
    let bestD = Infinity;
    // lines are sorted by Q
    let lo = 0;
    let hi = qs.length;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if (qs[mid] < w.q[i]) lo = mid + 1;
      else hi = mid;
    }
    for (const j of [lo - 2, lo - 1, lo, lo + 1]) {
      if (j < 0 || j >= qs.length) continue;
      let d: number;
      if (w.lambda !== null && w.tt[i] !== null) {
        const tc = twoThetaOfQ(qs[j], w.lambda);
        d = Math.abs(w.tt[i]! - t.zero - tc);
        if (!(d <= Math.max(tolDeg, 3 * w.stt[i]))) continue;
      } else {
        d = Math.abs(w.q[i] - qs[j]);
        if (!(d <= 3 * w.sq[i] + 0.002 * w.q[i])) continue;
      }
      if (d < bestD) {
        bestD = d;
        best = j;
      }
    }
    let overlap = false;
    if (best < 0 && w.lambda !== null && w.tt[i] !== null && w.fw[i] > 0) {
      // a peak that two lines closer than its own width share: unresolved, matched to the nearer,
      // left out of the refinement (its position is a blend)
      const near: Array<{ j: number; d: number }> = [];
      for (let j = Math.max(0, lo - 4); j < Math.min(qs.length, lo + 4); j++) {
        const d = Math.abs(w.tt[i]! - t.zero - twoThetaOfQ(qs[j], w.lambda));
        if (d <= 0.6 * w.fw[i]) near.push({ j, d });
      }
      if (near.length >= 2) {
        near.sort((a, b) => a.d - b.d);
        best = near[0].j;
        bestD = near[0].d;
        overlap = true;
      }
    }
    if (best >= 0 && !overlap && w.lambda !== null && w.tt[i] !== null && w.fw[i] > 0) {
      // another line within half the peak's width: the position is a blend of both, kept out of the refinement
      for (let j = Math.max(0, lo - 4); j < Math.min(qs.length, lo + 4); j++) {
        if (j !== best && Math.abs(w.tt[i]! - t.zero - twoThetaOfQ(qs[j], w.lambda)) <= 0.5 * w.fw[i]) overlap = true;
      }
    }
    out.push(best >= 0 ? { peak: i, line: best, delta: bestD, overlap } : null);
  }
  return out;
}

/** Smith–Snyder F_N and de Wolff M_N of an assignment. */
function figureOfMerit(w: Work, t: Trial, lines: ReturnType<typeof latticeLines>, asg: ReturnType<typeof assign>): FigureOfMerit {
  const idx = asg.filter((a): a is NonNullable<typeof a> => a !== null).sort((a, b) => w.q[a.peak] - w.q[b.peak]);
  const n = Math.min(30, idx.length);
  if (n === 0) return { fN: 0, n: 0, meanDelta: NaN, nPossible: 0, mN: 0 };
  const first = idx.slice(0, n);
  // possible lines up to the N-th observed one, that line's own calculated position included (an
  // observed line a little below its calculated Q must not leave its own line uncounted)
  const qN = Math.max(...first.map((a) => Math.max(w.q[a.peak], lines[a.line].q)));
  const nPoss = Math.max(1, lines.filter((l) => l.q <= qN * (1 + 1e-9)).length);
  let meanDelta: number;
  if (w.lambda !== null && first.every((a) => w.tt[a.peak] !== null)) meanDelta = first.reduce((s, a) => s + a.delta, 0) / n;
  else meanDelta = first.reduce((s, a) => s + Math.abs(w.q[a.peak] - lines[a.line].q), 0) / n;
  const floor = w.lambda !== null ? 0.002 : 1e-6;
  const fN = (1 / Math.max(meanDelta, floor)) * (n / nPoss);
  const m = Math.min(20, idx.length);
  const firstM = idx.slice(0, m);
  const qM = Math.max(...firstM.map((a) => Math.max(w.q[a.peak], lines[a.line].q)));
  const nPossM = Math.max(1, lines.filter((l) => l.q <= qM * (1 + 1e-9)).length);
  const epsQ = firstM.reduce((s, a) => s + Math.abs(w.q[a.peak] - qOfZeroCorrected(w, t, a.peak, lines[a.line].q)), 0) / m;
  const mN = qM / (2 * Math.max(epsQ, 1e-9 * qM) * nPossM);
  return { fN, n, meanDelta, nPossible: nPoss, mN };
}

/** Observed Q compared with a line's Q: for 2θ data the line's Q is moved by the zero shift. */
function qOfZeroCorrected(w: Work, t: Trial, peak: number, qLine: number): number {
  if (w.lambda === null || w.tt[peak] === null || t.zero === 0) return qLine;
  const tt = twoThetaOfQ(qLine, w.lambda) + t.zero;
  const s = Math.sin((tt * DEG) / 2);
  return ((2 * s) / w.lambda) ** 2;
}

/** Refines a, c and the zero shift by weighted least squares on 2θ (or Q for q data). */
function refine(w: Work, t: Trial, hkls: Array<{ peak: number; hkl: [number, number, number] }>, fitZero: boolean, holdCell: boolean, allowance = PROFILE_ALLOWANCE): { t: Trial; cov: number[][]; chi2: number; dof: number } | null {
  const np0 = holdCell ? 0 : cellParameters(t.kind);
  const useZero = fitZero && w.lambda !== null;
  const np = np0 + (useZero ? 1 : 0);
  if (np === 0 || hkls.length < np + 1) return null;
  const twoTheta = w.lambda !== null && hkls.every((h) => w.tt[h.peak] !== null);
  const obs = hkls.map((h) => (twoTheta ? w.tt[h.peak]! : w.q[h.peak]));
  // a floor on each line's σ: profile-shape and asymmetry errors (common practice: 0.002° or 0.02 % in Q)
  const stt = (i: number) => (allowance === PROFILE_ALLOWANCE ? w.stt[i] : Math.max(Math.hypot(w.sttFit[i], allowance * w.fw[i]), 1e-6));
  const sig = hkls.map((h) => (twoTheta ? Math.hypot(stt(h.peak), 0.002) : Math.hypot(w.sq[h.peak], 2e-4 * w.q[h.peak])));
  const unpack = (p: ArrayLike<number>): Trial => {
    let a = t.a;
    let c = t.c;
    if (!holdCell) {
      if (t.kind === 'lamellar') c = p[0];
      else if (t.kind.startsWith('cubic')) {
        a = p[0];
        c = p[0];
      } else {
        a = p[0];
        c = p[1];
      }
    }
    return { kind: t.kind, a, c, zero: useZero ? p[np0] : 0, allows: t.allows };
  };
  const p0: number[] = [];
  if (!holdCell) {
    if (t.kind === 'lamellar') p0.push(t.c);
    else if (t.kind.startsWith('cubic')) p0.push(t.a);
    else p0.push(t.a, t.c);
  }
  if (useZero) p0.push(t.zero);
  const model = (p: Float64Array, out: Float64Array) => {
    const tr = unpack(p);
    hkls.forEach((h, i) => {
      const q = qOf(tr.kind, tr.a, tr.c, ...h.hkl);
      out[i] = twoTheta ? twoThetaOfQ(q, w.lambda!) + tr.zero : q;
    });
  };
  let fit;
  try {
    fit = levenbergMarquardt(model, obs, p0, { weights: sig.map((s) => 1 / (s * s)), scaleCovariance: false, maxIterations: 100, tolerance: 1e-14 });
  } catch {
    return null;
  }
  if (!fit.params.every(Number.isFinite)) return null;
  const tr = unpack(fit.params);
  if (!(tr.c > 0) || (t.kind !== 'lamellar' && !(tr.a > 0))) return null;
  const cov: number[][] = [];
  for (let i = 0; i < np; i++) cov.push(Array.from({ length: np }, (_, j) => fit.covariance[i * np + j]));
  return { t: tr, cov, chi2: fit.chi2, dof: Math.max(1, hkls.length - np) };
}

/** Candidate cells of one lattice kind from the strongest low-angle lines. */
function candidates(w: Work, kind: LatticeKind): Trial[] {
  const out: Trial[] = [];
  const base = w.strongOrder.slice(0, 8);
  const seen = new Set<string>();
  const qMax = 1 / (w.dMin * w.dMin);
  const push = (a: number, c: number) => {
    // no crystal has a lattice edge below 0.2 nm (the shortest, e.g. graphite's a, are ~0.25 nm; common practice)
    if ((kind !== 'lamellar' && !(a >= MIN_EDGE_NM && a < 20)) || !(c >= MIN_EDGE_NM && c < 50)) return;
    // cells with hundreds of lines in range index anything: left out (common practice: small cells first)
    if ((kind !== 'lamellar' && a * Math.sqrt(qMax) > (kind.startsWith('cubic') ? 10 : 14)) || c * Math.sqrt(qMax) > (kind === 'lamellar' ? 60 : 25)) return;
    const key = `${kind === 'lamellar' ? '' : a.toPrecision(4)}|${c.toPrecision(4)}`;
    if (seen.has(key)) return;
    seen.add(key);
    out.push({ kind, a, c, zero: 0 });
  };
  if (kind === 'lamellar') {
    for (const i of base.slice(0, 6)) for (let l = 1; l <= 4; l++) push(NaN, l / Math.sqrt(w.q[i]));
    return out.map((t) => ({ ...t, a: NaN }));
  }
  if (kind.startsWith('cubic')) {
    const ns: number[] = [];
    for (let h = 0; h <= 5; h++) for (let k = 0; k <= h; k++) for (let l = 0; l <= k; l++) {
      const n = h * h + k * k + l * l;
      if (n > 0 && n <= 40 && !ns.includes(n) && latticeAllows(kind, h, k, l)) ns.push(n);
    }
    for (const i of base.slice(0, 5)) for (const n of ns) {
      const a = Math.sqrt(n / w.q[i]);
      push(a, a);
    }
    return out;
  }
  // two-parameter lattices: Q = A·X + C·l², X = h²+k² (tetragonal) or 4(h²+hk+k²)/3 (hexagonal)
  const hex = kind.startsWith('hexagonal');
  const triples: Array<[number, number, number]> = [];
  // l up to 4, and the basal lines up to 00 6: a layered cell with a long c (c/a of 5–8, e.g. a
  // rhombohedral double hydroxide) has its 003 weak and its 006 among the strong lines, and with
  // l ≤ 4 no pair of strong lines seeded it (all l to 6 costs twice the time for no other gain)
  for (let h = 0; h <= 2; h++) for (let k = 0; k <= h; k++) for (let l = 0; l <= (h === 0 ? 6 : 4); l++) {
    if (h === 0 && k === 0 && l === 0) continue;
    if (!latticeAllows(kind, h, k, l)) continue;
    triples.push([h, k, l]);
  }
  const xOf = (h: number, k: number) => (hex ? (4 * (h * h + h * k + k * k)) / 3 : h * h + k * k);
  const pairs = base.slice(0, 6);
  for (let u = 0; u < pairs.length; u++) {
    for (let v = u + 1; v < pairs.length; v++) {
      const qi = w.q[pairs[u]];
      const qj = w.q[pairs[v]];
      for (const [h1, k1, l1] of triples) {
        const x1 = xOf(h1, k1);
        const z1 = l1 * l1;
        for (const [h2, k2, l2] of triples) {
          const x2 = xOf(h2, k2);
          const z2 = l2 * l2;
          const det = x1 * z2 - x2 * z1;
          if (Math.abs(det) < 1e-9) continue;
          const A = (qi * z2 - qj * z1) / det;
          const C = (x1 * qj - x2 * qi) / det;
          if (!(A > 0) || !(C > 0)) continue;
          push(1 / Math.sqrt(A), 1 / Math.sqrt(C));
        }
      }
    }
  }
  return out;
}

/** Centring conditions of the lattice kinds (the rule of latticeLines). */
const latticeAllows = centringAllows;

/** Sorted distinct Q of a trial cell up to qMax (the lattice's centring applied), for the quick score. */
function quickQs(t: Trial, qMax: number): Float64Array {
  const out: number[] = [];
  const cubic = t.kind.startsWith('cubic');
  const a = t.a;
  const c = t.c;
  const hMax = t.kind === 'lamellar' ? 0 : Math.floor(a * Math.sqrt(qMax)) + 1;
  const lMax = Math.floor((cubic ? a : c) * Math.sqrt(qMax)) + 1;
  for (let h = 0; h <= hMax; h++) {
    for (let k = 0; k <= (t.kind === 'lamellar' ? 0 : h); k++) {
      for (let l = 0; l <= (cubic ? k : lMax); l++) {
        if (h === 0 && k === 0 && l === 0) continue;
        const q = qOf(t.kind, a, c, h, k, l);
        if (q > qMax) {
          if (cubic || t.kind === 'lamellar') continue;
          break;
        }
        if (centringAllows(t.kind, h, k, l)) out.push(q);
      }
    }
  }
  // a typed array sorts numerically without a comparator (several times faster: this is the
  // search's inner loop)
  const sorted = Float64Array.from(out).sort();
  let n = 0;
  for (let i = 0; i < sorted.length; i++) if (n === 0 || sorted[i] > sorted[n - 1] * (1 + 1e-9)) sorted[n++] = sorted[i];
  return sorted.subarray(0, n);
}

/** Whether a line of the sorted list lies within tolerance of an observed Q (2θ tolerance when a wavelength is known). */
function nearestQ(qs: Float64Array, q: number, lambda: number | null, tt: number | null, tolDeg: number): boolean {
  let lo = 0;
  let hi = qs.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (qs[mid] < q) lo = mid + 1;
    else hi = mid;
  }
  for (const j of [lo - 1, lo]) {
    if (j < 0 || j >= qs.length) continue;
    if (lambda !== null && tt !== null) {
      if (Math.abs(twoThetaOfQ(qs[j], lambda) - tt) <= tolDeg) return true;
    } else if (Math.abs(qs[j] - q) <= 0.003 * q) return true;
  }
  return false;
}

interface Solution {
  t: Trial;
  hkls: Array<{ peak: number; hkl: [number, number, number] }>;
  lines: ReturnType<typeof latticeLines>;
  asg: ReturnType<typeof assign>;
  fom: FigureOfMerit;
  cov: number[][] | null;
  chi2: number;
  dof: number;
  strongExplained: number;
  intensityShare: number;
  volume: number;
  /** The supercell this solution was reduced from (smallestCell), if any. */
  from?: Trial;
  /** d-spacings, nm, of the weak lines only that supercell indexed (left to the sub-cell's fit, or unindexed). */
  fromOnlyDNm?: number[];
}

/**
 * An indexed phase's cell refined again on its lines' own fit uncertainties (with the 0.002° floor
 * for profile shape), by weighted least squares, without the allowance of PROFILE_ALLOWANCE × FWHM
 * the search used; when the lines scatter beyond those uncertainties the cell's ± is widened by
 * the Birge ratio √(χ²/ν) where the phase is reported, which keeps the lines' relative weights. An
 * allowance added alike to every line (Paule & Mandel's between-line excess variance, used here
 * before: the fraction of the FWHM that brings χ²/ν to 1) takes its weight from the best-placed
 * line: a clay's strong 001 (placed to a few mdeg, but with the most leverage on c) then counted like
 * its weak higher orders, and orders scattering 1.6 times beyond their σ gave a cell 1.23 times as
 * scattered as the lines allow (tests/diffraction/indexing.test.ts); with the lines' own weights,
 * 1.01. Weighed at its own σ, a strong line must be one reflection: a line with another of the
 * cell's reflections within its FWHM that no other peak took is left out of this refinement (while
 * two degrees of freedom remain), as it is of the phase's size (a brucite-like 002 fitted as one peak
 * with its weak 101 0.33° away sat 0.025° high and, at its own small σ, moved c by 0.03 %). In a
 * mixture, so is a line with a reflection of the other phase within its breadth (its own FWHM or
 * the phase's typical one): a clay's 007 fitted as one peak narrowed by the fcc 200 0.09° away had
 * moved c by 0.05 %. Zero shift kept or not as decided; with fewer than two degrees of freedom the
 * scatter says nothing and the search's allowance stays.
 * @param w the work arrays
 * @param s the phase's solution
 * @param other the other phase of a mixture, if any
 * @returns the solution with its cell, covariance and χ² refined so (or as it was)
 * Reference: weighted least squares (Gauss–Markov); Birge, Phys. Rev. 40, 207 (1932); single
 * reflections: Langford & Louër, Rep. Prog. Phys. 59, 131 (1996).
 */
/** The median FWHM of the given peaks (those with one), degrees; 0 when none has one. */
function typicalFwhm(w: Work, peaks: number[]): number {
  const v = peaks.map((i) => w.fw[i]).filter((x) => x > 0).sort((x, y) => x - y);
  return v.length ? v[Math.floor(v.length / 2)] : 0;
}

function ownScatter(w: Work, s: Solution, other?: Solution): Solution {
  if (w.lambda === null || !s.cov) return s;
  const clean = s.asg.flatMap((a) => (a && !a.overlap ? [{ peak: a.peak, line: a.line, hkl: s.lines[a.line].hkl }] : []));
  if (clean.some((h) => w.tt[h.peak] === null)) return s;
  const zeroKept = s.cov.length > cellParameters(s.t.kind);
  const dof = clean.length - s.cov.length;
  if (dof < 2) return s;
  // weighed at its own σ, a strong line must be one reflection: another of the cell's reflections
  // within its FWHM that no other peak took pulls its fitted position (only resolved, single
  // reflections are measured: Langford & Louër 1996, as for the sizes)
  const lambda = w.lambda;
  const taken = new Set(s.asg.flatMap((a) => (a ? [a.line] : [])));
  const tcOf = s.lines.map((l) => twoThetaOfQ(l.q, lambda) + s.t.zero);
  // in a mixture, a reflection of the other phase within the line's breadth (its own FWHM or the
  // phase's typical one, whichever is larger: a broad line fitted narrow beside a sharp one is
  // itself the sign) pulls it too, whether fitted as one peak or as two
  const otherTc = other ? other.lines.map((l) => twoThetaOfQ(l.q, lambda) + other.t.zero) : [];
  const typicalFw = typicalFwhm(w, clean.map((h) => h.peak));
  const single = clean.filter((h) => {
    const tt = w.tt[h.peak]!;
    const fw = w.fw[h.peak];
    if (!(fw > 0)) return true;
    if (otherTc.some((tc) => Math.abs(tt - tc) < Math.max(fw, typicalFw))) return false;
    return !tcOf.some((tc, j) => j !== h.line && !taken.has(j) && Math.abs(tc - tcOf[h.line]) > 1e-4 && Math.abs(tt - tc) < fw);
  });
  const use = single.length - s.cov.length >= 2 ? single : clean;
  const r = refine(w, s.t, use.map((h) => ({ peak: h.peak, hkl: h.hkl })), zeroKept, false, 0);
  if (!r || Math.abs(r.t.zero) > 1) return s;
  return { ...s, t: r.t, cov: r.cov, chi2: r.chi2, dof: r.dof };
}

/** Scores a trial cell: assigns, refines (twice, reassigning), and measures what it explains. */
/**
 * Two phases of a mixture whose cells both explain a line: the line goes to the phase whose lines
 * it matches in breadth (a sharp line of a large-crystallite phase is not an order of a clay of
 * broad lines that happens to fall beside it), when the two phases' typical FWHMs differ by more
 * than half; each phase is refined again with its lines.
 * @returns the two phases, refined again when a line moved (else as given)
 * Reference: the lines of one phase share its breadth (size and strain; Scherrer 1918, Williamson &
 * Hall 1953), so breadth tells the phases of a mixture apart (common practice).
 */
function shareByWidth(w: Work, a: Solution, b: Solution, scope: number[], opts: Required<Pick<IndexOptions, 'searchToleranceDeg' | 'fitZeroShift'>>): [Solution, Solution] {
  const typical = (s: Solution) => typicalFwhm(w, s.hkls.map((h) => h.peak));
  const wa = typical(a);
  const wb = typical(b);
  if (!(wa > 0 && wb > 0) || Math.max(wa, wb) / Math.min(wa, wb) < 1.5) return [a, b];
  const closer = (i: number, to: number, from: number) => w.fw[i] > 0 && Math.abs(Math.log(w.fw[i] / to)) < Math.abs(Math.log(w.fw[i] / from));
  const byB = new Set((evaluate(w, b.t, new Set(scope), opts, true)?.hkls ?? []).map((h) => h.peak));
  const byA = new Set((evaluate(w, a.t, new Set(scope), opts, true)?.hkls ?? []).map((h) => h.peak));
  const toB = a.hkls.map((h) => h.peak).filter((i) => byB.has(i) && closer(i, wb, wa));
  const toA = b.hkls.map((h) => h.peak).filter((i) => byA.has(i) && closer(i, wa, wb));
  if (toB.length === 0 && toA.length === 0) return [a, b];
  const aSet = new Set([...a.hkls.map((h) => h.peak).filter((i) => !toB.includes(i)), ...toA]);
  const bSet = new Set([...b.hkls.map((h) => h.peak).filter((i) => !toA.includes(i)), ...toB]);
  const a2 = evaluate(w, a.t, aSet, opts);
  const b2 = evaluate(w, b.t, bSet, opts);
  if (!a2 || !b2 || a2.hkls.length < Math.min(a.hkls.length - toB.length, 2) || b2.hkls.length < Math.min(b.hkls.length, 2)) return [a, b];
  return [a2, b2];
}

/**
 * The lines of a mixture that neither phase's solution holds (each phase was sought among the
 * lines the other left, so a line where both have one can fall between them): each goes to the
 * phase whose cell, held, puts a line nearest to it (within the search tolerance); each phase is
 * then refined again with the lines it gained, kept when it explains more and stays consistent.
 * @returns the two phases, refined again when they gained lines (else as given)
 * Reference: common practice (a line of a mixture is indexed by the phase that predicts it best).
 */
function settleLeftLines(w: Work, a: Solution, b: Solution, scope: number[], opts: Required<Pick<IndexOptions, 'searchToleranceDeg' | 'fitZeroShift'>>, minFom: number): [Solution, Solution] {
  const inA = new Set(a.hkls.map((h) => h.peak));
  const inB = new Set(b.hkls.map((h) => h.peak));
  const left = scope.filter((i) => !inA.has(i) && !inB.has(i));
  if (left.length === 0) return [a, b];
  const deltas = (s: Solution, own: Set<number>) => {
    const e = evaluate(w, s.t, new Set([...own, ...left]), opts, true);
    return new Map((e?.asg ?? []).flatMap((x) => (x && left.includes(x.peak) ? [[x.peak, x.delta] as [number, number]] : [])));
  };
  const dA = deltas(a, inA);
  const dB = deltas(b, inB);
  const toA: number[] = [];
  const toB: number[] = [];
  for (const i of left) {
    const da = dA.get(i);
    const db = dB.get(i);
    if (da !== undefined && (db === undefined || da <= db)) toA.push(i);
    else if (db !== undefined) toB.push(i);
  }
  const grow = (s: Solution, own: Set<number>, gained: number[]) => {
    if (gained.length === 0) return s;
    const r = evaluate(w, s.t, new Set([...own, ...gained]), opts);
    return r && r.hkls.length > s.hkls.length && r.strongExplained >= s.strongExplained && r.fom.fN >= minFom ? r : s;
  };
  return [grow(a, inA, toA), grow(b, inB, toB)];
}

function evaluate(w: Work, trial: Trial, subset: Set<number> | null, opts: Required<Pick<IndexOptions, 'searchToleranceDeg' | 'fitZeroShift'>>, holdCell = false): Solution | null {
  let t = trial;
  let lines = linesOf(w, t);
  if (lines.length === 0 || lines.length > 4000) return null;
  let asg = assign(w, t, lines, opts.searchToleranceDeg);
  let cov: number[][] | null = null;
  let chi2 = NaN;
  let dof = 1;
  let hkls: Solution['hkls'] = [];
  for (let round = 0; round < 3; round++) {
    hkls = asg.flatMap((a) => (a && (!subset || subset.has(a.peak)) ? [{ peak: a.peak, hkl: lines[a.line].hkl }] : []));
    const clean = asg.flatMap((a) => (a && !a.overlap && (!subset || subset.has(a.peak)) ? [{ peak: a.peak, hkl: lines[a.line].hkl }] : []));
    const r = refine(w, t, clean, opts.fitZeroShift, holdCell);
    if (!r) break;
    t = r.t;
    cov = r.cov;
    chi2 = r.chi2;
    dof = r.dof;
    if (Math.abs(t.zero) > 1) return null; // a zero shift of a degree is a wrong cell
    lines = linesOf(w, t);
    if (lines.length === 0 || lines.length > 4000) return null;
    // after refinement the tolerance tightens to the lines' own uncertainty plus 0.02°
    asg = assign(w, t, lines, round === 0 ? opts.searchToleranceDeg : 0.03);
  }
  // the zero shift is a parameter like any other: kept only when it lowers χ² beyond chance
  // (likelihood ratio, 1 degree of freedom, 5 %: 3.84); otherwise it is not measured (the d budget
  // then carries its allowance) and the cell is not bent by a shift fitted to noise
  if (opts.fitZeroShift && !holdCell && w.lambda !== null && cov !== null && cov.length > cellParameters(t.kind)) {
    const clean = asg.flatMap((a) => (a && !a.overlap && (!subset || subset.has(a.peak)) ? [{ peak: a.peak, hkl: lines[a.line].hkl }] : []));
    const r0 = refine(w, { ...t, zero: 0 }, clean, false, false);
    if (r0 && r0.chi2 - chi2 < 3.84 * Math.max(1, chi2 / dof)) {
      t = r0.t;
      cov = r0.cov;
      chi2 = r0.chi2;
      dof = r0.dof;
      lines = linesOf(w, t);
      if (lines.length === 0 || lines.length > 4000) return null;
      asg = assign(w, t, lines, 0.03);
    }
  }
  hkls = asg.flatMap((a) => (a && (!subset || subset.has(a.peak)) ? [{ peak: a.peak, hkl: lines[a.line].hkl }] : []));
  if (hkls.length === 0) return null;
  // a two-parameter cell must be fixed by its lines: some depend on a, some on c, not all alike
  if (!holdCell && cellParameters(t.kind) === 2) {
    const hex = t.kind.startsWith('hexagonal');
    let sxx = 0;
    let szz = 0;
    let sxz = 0;
    for (const h of hkls) {
      const xh = hex ? (4 * (h.hkl[0] ** 2 + h.hkl[0] * h.hkl[1] + h.hkl[1] ** 2)) / 3 : h.hkl[0] ** 2 + h.hkl[1] ** 2;
      const zh = h.hkl[2] ** 2;
      const norm = Math.hypot(xh, zh);
      sxx += (xh / norm) ** 2;
      szz += (zh / norm) ** 2;
      sxz += (xh * zh) / norm ** 2;
    }
    if (sxx * szz - sxz * sxz < 0.05 * Math.max(1, hkls.length / 4)) return null;
    // and by more than one line each way: a single line on the other axis is a coincidence; a
    // line another calculated line shares (a blend, e.g. 103 on top of 005) is evidence for neither
    const blended = new Set(asg.flatMap((a) => (a && a.overlap ? [a.peak] : [])));
    const onA = hkls.filter((h) => !blended.has(h.peak) && (h.hkl[0] !== 0 || h.hkl[1] !== 0)).length;
    const onC = hkls.filter((h) => !blended.has(h.peak) && h.hkl[2] !== 0).length;
    if (onA < 2 || onC < 2) return null;
  }
  if (!(t.c >= MIN_EDGE_NM) || (t.kind !== 'lamellar' && !(t.a >= MIN_EDGE_NM))) return null;
  const used = subset ? asg.map((a) => (a && subset.has(a.peak) ? a : null)) : asg;
  const fom = figureOfMerit(w, t, lines, used);
  let strongExplained = 0;
  let share = 0;
  let total = 0;
  w.peaks.forEach((p, i) => {
    if (subset && !subset.has(i)) return;
    total += p.intensity;
    if (used[i]) {
      share += p.intensity;
      if (w.strong.has(i)) strongExplained++;
    }
  });
  return { t, hkls, lines, asg: used, fom, cov, chi2, dof, strongExplained, intensityShare: total > 0 ? share / total : 0, volume: volumeOf(t) };
}

/**
 * Whether a solution's refined cell fits its lines within their uncertainties: χ² at most the
 * 0.1 % quantile of χ² with its degrees of freedom (Wilson–Hilferty approximation).
 * Reference: Wilson & Hilferty, Proc. Natl Acad. Sci. 17, 684 (1931).
 */
function fitsWithin(s: Solution): boolean {
  return s.dof >= 1 && Number.isFinite(s.chi2) && s.chi2 <= chiSquareUpperQuantile(0.001, s.dof);
}

/** Scatter allowed between a line's integrated intensity and the one-atom model, as a standard deviation of ln I (preferred orientation, absorption, extinction; from memory). */
const INTENSITY_SCATTER_LN = 0.3;

/**
 * How well a cubic solution's multiplicities explain its lines' integrated intensities with one
 * atom per lattice point: ln(I / (m·LP)) = c0 + c1·s², the atom's scattering factor and
 * Debye–Waller factor squared being smooth in s² = 1/(4d²), LP = (1 + cos²2θ) / (sin²θ cos θ).
 * The primitive cell of edge a and the body-centred cell of edge a√2 index the same lines
 * (h² + k² + l² in the ratios 1:2:3:4:5:6:8 and 2:4:6:8:10:12:16) until the body-centred cell's
 * 321, which the primitive cell cannot index (no h² + k² + l² = 7); below it only the intensities
 * tell them apart, through the multiplicities (the first line's 6 against 12, the second's 12 against 6).
 * @returns χ² of the ln I residuals (scatter INTENSITY_SCATTER_LN) and its degrees of freedom, or null (fewer than four lines with 2θ)
 * Reference: Cullity & Stock, Elements of X-Ray Diffraction, 3rd ed. (2001), ch. 4 (multiplicity,
 * Lorentz–polarisation factor) and ch. 10 (indexing cubic patterns).
 */
function oneAtomIntensityChi2(w: Work, s: Solution): { chi2: number; dof: number } | null {
  const rows: Array<{ x: number; y: number }> = [];
  for (const h of s.hkls) {
    const tt = w.tt[h.peak];
    const area = w.peaks[h.peak].intensity;
    if (tt === null || !(area > 0)) continue;
    const n = h.hkl[0] ** 2 + h.hkl[1] ** 2 + h.hkl[2] ** 2;
    const m = cubicMultiplicity(s.t.kind, n);
    rows.push({ x: 1 / (4 * w.peaks[h.peak].dNm ** 2), y: Math.log(area / (m * lorentzPolarisation(tt))) });
  }
  if (rows.length < 4) return null;
  const n = rows.length;
  const mx = rows.reduce((a, r) => a + r.x, 0) / n;
  const my = rows.reduce((a, r) => a + r.y, 0) / n;
  const sxx = rows.reduce((a, r) => a + (r.x - mx) ** 2, 0);
  const slope = sxx > 0 ? rows.reduce((a, r) => a + (r.x - mx) * (r.y - my), 0) / sxx : 0;
  const chi2 = rows.reduce((a, r) => a + ((r.y - my - slope * (r.x - mx)) / INTENSITY_SCATTER_LN) ** 2, 0);
  return { chi2, dof: n - 2 };
}

/** Lines of a sorted comb with Q in [lo, hi] (binary searches). */
function countBetween(qs: ReadonlyArray<{ q: number }>, lo: number, hi: number): number {
  const first = (x: number) => {
    let a = 0;
    let b = qs.length;
    while (a < b) {
      const m = (a + b) >>> 1;
      if (qs[m].q < x) a = m + 1;
      else b = m;
    }
    return a;
  };
  return first(hi * (1 + 1e-12)) - first(lo);
}

/**
 * The chance that a line of the pattern which is no reflection of a solution's cell is assigned to
 * one of its calculated lines anyway: with the cell's lines around it (±10 % in Q) taken as a
 * Poisson comb of their local density ρ, the chance of one within the assignment window (±3σ of
 * its 2θ, at least ±0.03°; for q data ±(3σ + 0.2 %) in Q), or of two within ±0.6 FWHM (the window
 * in which a broad peak is called a blend of two lines), 1 − (1 − p₁)(1 − p₂).
 * @param w the work arrays
 * @param s the solution (its lines sorted by Q)
 * @param i the peak
 * @returns the probability, 0–1
 * Reference: de Wolff, J. Appl. Cryst. 1, 108 (1968): 2⟨ε⟩N/Q, the denominator of M20, is the
 * chance that a line falls within ε of one of N calculated lines by accident.
 */
function chanceOfMatch(w: Work, s: Solution, i: number): number {
  const qi = w.q[i];
  const lo = Math.max(qi * 0.9, 1 / (w.dMax * 1.005) ** 2);
  const hi = Math.min(qi * 1.1, 1 / (w.dMin * 0.995) ** 2);
  if (!(hi > lo)) return 1;
  const n = countBetween(s.lines, lo, hi);
  const tt = w.tt[i];
  let mOne: number;
  let mTwo = 0;
  if (w.lambda !== null && tt !== null) {
    const spanDeg = twoThetaOfQ(hi, w.lambda) - twoThetaOfQ(lo, w.lambda);
    if (!(spanDeg > 0)) return 1;
    const perDeg = n / spanDeg;
    mOne = perDeg * 2 * Math.max(0.03, 3 * w.stt[i]);
    if (w.fw[i] > 0) mTwo = perDeg * 2 * 0.6 * w.fw[i];
  } else {
    mOne = (n / (hi - lo)) * 2 * (3 * w.sq[i] + 0.002 * qi);
  }
  const pOne = 1 - Math.exp(-mOne);
  const pTwo = 1 - Math.exp(-mTwo) * (1 + mTwo);
  return 1 - (1 - pOne) * (1 - pTwo);
}

/** A line broader (or narrower) than this many times its cell's other lines is no evidence for the cell (as a broad line of its own kind in the profile fit: a clay order, a band). */
const BREADTH_FACTOR = 3;

/**
 * The strong lines solution a explains and b does not, as evidence for a: counted only when a's
 * comb of lines is unlikely to meet them all by chance. If they are no reflections of a's cell, a
 * meets them all with probability Πp (chanceOfMatch); if they are, with probability 1: a likelihood
 * ratio of 1/Πp, counted when it reaches √10 (Jeffreys' first grade of evidence); below that they
 * count for nothing. A cell of three times the lines catches a broad band of another phase (a
 * clay's (06,33) band fitted as a peak) with odds of four to one and must not win by it.
 * @returns how many strong lines count for a against b (all or none)
 * Reference: Jeffreys, Theory of Probability, 3rd ed. (1961), appendix B (grades of evidence: a
 * Bayes factor below 10^½ is "barely worth mentioning"); de Wolff, J. Appl. Cryst. 1, 108 (1968).
 */
function strongBeyondChance(w: Work, a: Solution, b: Solution, strongHere: number[]): number {
  // a line more than three times broader or narrower than the cell's other lines is no reflection of
  // its crystallites (one phase's lines share its breadth: Scherrer 1918, Williamson & Hall 1953), but
  // another phase's line or a band that its comb meets: no evidence for the cell, whatever the odds
  const typical = (i: number) => typicalFwhm(w, a.hkls.map((h) => h.peak).filter((j) => j !== i));
  const sameBreadth = (i: number) => {
    const t = typical(i);
    return !(t > 0 && w.fw[i] > 0) || Math.abs(Math.log(w.fw[i] / t)) <= Math.log(BREADTH_FACTOR);
  };
  const only = strongHere.filter((i) => a.asg[i] && !b.asg[i] && sameBreadth(i));
  if (only.length === 0) return 0;
  const chanceAll = only.reduce((acc, i) => acc * chanceOfMatch(w, a, i), 1);
  return chanceAll <= 1 / Math.sqrt(10) ? only.length : 0;
}

/**
 * A phase convincing on its own, as one of a pair that replaces a single cell: Smith–Snyder F_N ≥ 20,
 * or de Wolff's M_N ≥ 20. F_N scales with 1/⟨|Δ2θ|⟩ alone, so a clay's broad orders, each placed to
 * a few hundredths of a degree, stay near 20 however sparse and regular their comb; M_N divides the
 * same mean error by the density of the cell's calculated lines (Q_N / 2N_poss), the chance that
 * lines meet the comb by accident, which is what the bar is for. 20 is twice de Wolff's 10 for a
 * substantially correct indexing, as F_N ≥ 20 is strict.
 * Reference: de Wolff, J. Appl. Cryst. 1, 108 (1968); Smith & Snyder, J. Appl. Cryst. 12, 60 (1979).
 */
function convincingAlone(s: Solution): boolean {
  return s.fom.fN >= 20 || s.fom.mN >= 20;
}

/** Volume of a trial's primitive cell in nm³ (for lamellar, the period). */
function volumeOf(t: Trial): number {
  if (t.kind === 'lamellar') return t.c;
  if (t.kind.startsWith('hexagonal')) return ((Math.sqrt(3) / 2) * t.a * t.a * t.c) / (t.kind === 'hexagonal-R' ? 3 : 1);
  return (t.a * t.a * t.c) / (t.kind.endsWith('-I') ? 2 : t.kind.endsWith('-F') ? 4 : 1);
}

/**
 * The smallest cell of a solution: a cell whose every indexed line is also a line of a sub-cell
 * (c/2, c/3; a/2; a/√2 for tetragonal, a/√3 for hexagonal: the supercells whose extra lines all have
 * indices of one parity or residue) is that sub-cell. The sub-cell predicts each indexed line at the
 * very same Q, so it explains the same lines with the same residuals; only the supercell's extra
 * lines, none of them observed, go. Left as a supercell, those lines cost it in F_N, yet they also
 * let it call a broad peak beside one of them a blend of two lines (a peak's blend needs two
 * calculated lines within its width) and so explain a line the true cell misses by a hair: de
 * Wolff's trap of the supercell. Lines only the supercell indexes are allowed when none is strong
 * and they are at most one in twenty of its lines (a stray weak peak meets one of its many lines by
 * chance); they are named in the phase's note. Repeated until no sub-cell is left. The sub-cell evaluated afresh
 * is taken when it explains as many strong lines; else the supercell's lines carried over (a blend
 * keeps its status), the cell refined again on the same clean lines.
 * @param w the work arrays
 * @param s a solution
 * @returns the solution on its smallest cell (or s itself)
 * Reference: de Wolff, J. Appl. Cryst. 1, 108 (1968) (the smallest cell that explains the lines;
 * M20 counts the calculated lines); Smith & Snyder, J. Appl. Cryst. 12, 60 (1979) (F_N likewise).
 */
function smallestCell(w: Work, s: Solution, subset: Set<number> | null, opts: Required<Pick<IndexOptions, 'searchToleranceDeg' | 'fitZeroShift'>>): Solution {
  let cur = s;
  for (let depth = 0; depth < 4; depth++) {
    const t = cur.t;
    const subs: Trial[] = [];
    const fam = t.kind === 'lamellar' ? 'lamellar' : t.kind.split('-')[0];
    const family: Record<string, { kinds: LatticeKind[]; aF: number[]; cF: number[] }> = {
      lamellar: { kinds: ['lamellar'], aF: [1], cF: [1, 1 / 2, 1 / 3] },
      cubic: { kinds: ['cubic-P', 'cubic-I', 'cubic-F'], aF: [1, 1 / 2], cF: [1] },
      tetragonal: { kinds: ['tetragonal-P', 'tetragonal-I'], aF: [1, Math.SQRT1_2, 1 / 2], cF: [1, 1 / 2, 1 / 3] },
      hexagonal: { kinds: ['hexagonal-P', 'hexagonal-R'], aF: [1, 1 / Math.sqrt(3), 1 / 2], cF: [1, 1 / 2, 1 / 3] },
    };
    const f = family[fam];
    for (const kind of f.kinds) for (const af of f.aF) for (const cf of fam === 'cubic' ? [af] : f.cF) {
      const sub: Trial = { ...t, kind, a: t.a * af, c: fam === 'cubic' ? t.a * af : t.c * cf };
      if (volumeOf(sub) < volumeOf(t) * (1 - 1e-6)) subs.push(sub);
    }
    subs.sort((x, y) => volumeOf(x) - volumeOf(y));
    let next: Solution | null = null;
    let nextOnly: number[] = [];
    for (const sub of subs) {
      if (!(sub.c >= MIN_EDGE_NM) || (sub.kind !== 'lamellar' && !(sub.a >= MIN_EDGE_NM))) continue;
      const lines = linesOf(w, sub);
      if (lines.length === 0) continue;
      const qs = lines.map((l) => l.q);
      const lineAt = (q: number) => {
        let lo = 0;
        let hi = qs.length;
        while (lo < hi) {
          const mid = (lo + hi) >>> 1;
          if (qs[mid] < q * (1 - 1e-9)) lo = mid + 1;
          else hi = mid;
        }
        return lo < qs.length && Math.abs(qs[lo] / q - 1) <= 1e-9 ? lo : -1;
      };
      const mapped = cur.asg.map((a) => (a ? { ...a, line: lineAt(cur.lines[a.line].q) } : null));
      // lines only the supercell indexes: none strong, and at most one in twenty of its indexed
      // lines (none below twenty): a supercell predicts two to eight times the lines, so among
      // many lines a weak stray peak (noise, a split line) falls near one of its own by chance; a
      // real superstructure shows more of them, or strong ones
      const only = mapped.filter((a): a is NonNullable<typeof a> => a !== null && a.line < 0);
      const indexedCount = mapped.filter((a) => a !== null).length;
      if (only.length > 0 && (only.some((a) => w.strong.has(a.peak)) || only.length > Math.floor(indexedCount / 20))) continue;
      const asg = mapped.map((a) => (a && a.line >= 0 ? a : null));
      nextOnly = only.map((a) => a.peak);
      const clean = asg.flatMap((a) => (a && !a.overlap ? [{ peak: a.peak, hkl: lines[a.line].hkl }] : []));
      const zeroKept = cur.cov !== null && cur.cov.length > cellParameters(t.kind);
      const r = cur.cov ? refine(w, sub, clean, zeroKept, false) : null;
      if (cur.cov && !r) continue;
      const t2 = r ? r.t : sub;
      next = {
        ...cur,
        t: t2,
        lines,
        asg,
        hkls: asg.flatMap((a) => (a ? [{ peak: a.peak, hkl: lines[a.line].hkl }] : [])),
        fom: figureOfMerit(w, t2, lines, asg),
        cov: r ? r.cov : null,
        chi2: r ? r.chi2 : cur.chi2,
        dof: r ? r.dof : cur.dof,
        volume: volumeOf(t2),
      };
      // the sub-cell evaluated afresh, when it explains as many strong lines on its own (its
      // assignments are then its own; weak lines it leaves were the supercell's by its extra lines)
      const direct = evaluate(w, t2, subset, opts);
      if (direct && direct.strongExplained >= next.strongExplained) next = direct;
      break;
    }
    if (!next) return cur;
    cur = { ...next, from: s.t, fromOnlyDNm: [...(cur.fromOnlyDNm ?? []), ...nextOnly.map((i) => 1 / Math.sqrt(w.q[i]))] };
  }
  return cur;
}

/**
 * Indexes a pattern's peaks.
 *
 * @param peaks the fitted peaks (bands of turbostratic layers should be left out: they have no hkl)
 * @param options wavelength, lattices, tolerances, an internal standard, mixtures
 * @returns the phases with refined cells, zero shift and figures of merit, and the unindexed peaks
 *
 * Notes — the method:
 * - trial cells come from the strongest low-angle lines: for one-parameter lattices each line as
 *   each allowed low-index reflection, for two-parameter lattices each pair of lines as each pair
 *   of allowed reflections (h, k ≤ 2, l ≤ 4, and the basal 005, 006); only reflections the
 *   lattice's centring allows are used (ITC A integral conditions), so a solution never relies on
 *   a forbidden line;
 * - every trial is refined by least squares on 2θ with a zero-shift term (observed = calculated +
 *   Z), lines reassigned after each refinement, and reduced to its smallest cell (a supercell
 *   whose indexed lines all belong to a sub-cell is that sub-cell);
 * - a phase must explain its strongest line and be consistent (F_N ≥ minFigureOfMerit); the
 *   solution preferred is the one that explains every strong line, and among those the one with
 *   the highest F_N — which favours the lattice with the fewest possible lines, i.e. the simplest
 *   that explains the pattern — then the smallest cell; when no single phase explains every
 *   strong line, the best phase is taken and a second one is sought among the lines it leaves
 *   (pairs ranked by strong lines explained, then by lines explained less two per free cell
 *   parameter);
 * - the cell's uncertainty is the refinement's (scaled by √χ²ᵣ when the lines scatter more than
 *   their σ) combined with the wavelength's relative uncertainty.
 * The lattices are those of centring only: glide and screw absences (e.g. the diamond structure's
 * 200) only remove lines and do not change the lattice. No space group is named.
 * Reference: figures of merit: Smith & Snyder, J. Appl. Cryst. 12, 60 (1979); de Wolff, J. Appl.
 * Cryst. 1, 108 (1968); integral reflection conditions: ITC A Table 2.2.13.1.
 */
export function indexPattern(peaks: IndexPeak[], options: IndexOptions): IndexResult {
  if (!Array.isArray(peaks)) throw new RangeError('peaks must be a list');
  peaks.forEach((p, i) => {
    if (!(p.dNm > 0) || !Number.isFinite(p.dNm)) throw new RangeError(`peak ${i}: dNm must be a positive number, got ${p.dNm}`);
    if (!(p.intensity >= 0)) throw new RangeError(`peak ${i}: intensity must be ≥ 0, got ${p.intensity}`);
  });
  const lambda = options.wavelengthNm;
  if (lambda !== null && !(lambda > 0 && lambda < 10)) throw new RangeError(`wavelengthNm must be in (0, 10) or null, got ${lambda}`);
  const strongFraction = options.strongFraction ?? 0.1;
  if (!(strongFraction > 0 && strongFraction <= 1)) throw new RangeError(`strongFraction must be in (0, 1], got ${strongFraction}`);
  const minFom = options.minFigureOfMerit ?? 8;
  const kinds = options.kinds ?? [...LATTICE_KINDS];
  for (const k of kinds) if (!LATTICE_KINDS.includes(k)) throw new RangeError(`unknown lattice kind '${k}'`);
  const opts = { searchToleranceDeg: options.searchToleranceDeg ?? 0.08, fitZeroShift: options.fitZeroShift ?? true };
  const notes: string[] = [];
  if (peaks.length === 0) return { phases: [], unindexed: [], zeroShiftDeg: null, zeroShiftUncDeg: null, notes: ['no peaks to index'] };
  const top = Math.max(...peaks.map((p) => p.intensity));
  const strong = new Set<number>();
  peaks.forEach((p, i) => {
    if (p.intensity >= strongFraction * top) strong.add(i);
  });
  const w: Work = {
    peaks,
    lambda,
    q: peaks.map((p) => 1 / (p.dNm * p.dNm)),
    sq: peaks.map((p) => (2 * Math.max(p.dUncNm, 1e-9 * p.dNm)) / p.dNm ** 3),
    tt: peaks.map((p) => (lambda !== null ? p.twoThetaDeg : null)),
    // a line's position also carries its profile and background misfit, which grows with its
    // breadth: an allowance of 3 % of the FWHM beside the fit's own uncertainty (a broad line on a
    // halo's flank moves by a few hundredths of a degree)
    stt: peaks.map((p) => Math.max(Math.hypot(p.twoThetaUncDeg ?? 0, PROFILE_ALLOWANCE * (p.fwhmDeg ?? 0)), 1e-6)),
    sttFit: peaks.map((p) => Math.max(p.twoThetaUncDeg ?? 0, 1e-6)),
    fw: peaks.map((p) => p.fwhmDeg ?? 0),
    strong,
    strongOrder: [...strong].sort((a, b) => peaks[b].dNm - peaks[a].dNm),
    dMin: Math.min(...peaks.map((p) => p.dNm)),
    dMax: Math.max(...peaks.map((p) => p.dNm)),
    first: peaks.reduce((b, p, i) => (p.dNm > peaks[b].dNm ? i : b), 0),
  };
  // enough strong lines to seed two-parameter cells: add the next strongest
  if (w.strongOrder.length < 6) {
    const more = peaks.map((_, i) => i).filter((i) => !strong.has(i)).sort((a, b) => peaks[b].intensity - peaks[a].intensity).slice(0, 6 - w.strongOrder.length);
    w.strongOrder = [...w.strongOrder, ...more].sort((a, b) => peaks[b].dNm - peaks[a].dNm);
  }
  const phaseOf = (s0: Solution, isStandard: boolean, name?: string, other?: Solution): IndexedPhase => {
    const s = isStandard ? s0 : ownScatter(w, s0, other);
    const np0 = isStandard ? 0 : cellParameters(s.t.kind);
    const scale = Math.max(1, s.chi2 / s.dof);
    const relL = options.wavelengthRelU ?? 0;
    let aU = 0;
    let cU = 0;
    if (!isStandard && s.cov) {
      if (s.t.kind === 'lamellar') cU = Math.sqrt(Math.max(0, s.cov[0][0] * scale));
      else if (s.t.kind.startsWith('cubic')) aU = cU = Math.sqrt(Math.max(0, s.cov[0][0] * scale));
      else {
        aU = Math.sqrt(Math.max(0, s.cov[0][0] * scale));
        cU = Math.sqrt(Math.max(0, s.cov[1][1] * scale));
      }
      aU = Math.hypot(aU, (Number.isFinite(s.t.a) ? s.t.a : 0) * relL);
      cU = Math.hypot(cU, s.t.c * relL);
    }
    let t = s.t;
    if (!isStandard && !s.cov && cellParameters(s.t.kind) === 1 && s.hkls.length > 0) {
      // too few lines to refine with a zero shift: the cell is the weighted mean of each line's
      // (cell = d·√(h²+k²+l²)), weighted by the lines' own d uncertainties (not the trial cell
      // seeded on one line), the zero shift's allowance not included (noted)
      let sw = 0;
      let swc = 0;
      for (const h of s.hkls) {
        const m = Math.sqrt(h.hkl[0] ** 2 + h.hkl[1] ** 2 + h.hkl[2] ** 2);
        const u = Math.max(peaks[h.peak].dUncNm, 1e-9) * m;
        sw += 1 / (u * u);
        swc += (peaks[h.peak].dNm * m) / (u * u);
      }
      const cell = swc / sw;
      t = { ...s.t, a: s.t.kind === 'lamellar' ? s.t.a : cell, c: cell };
      const u = Math.hypot(1 / Math.sqrt(sw), t.c * relL);
      cU = u;
      if (t.kind !== 'lamellar') aU = u;
      notes.push(`${LATTICE_WORDS[t.kind]} (${s.hkls.length} lines): too few lines to refine with a zero shift; its cell's uncertainty is that of its lines alone`);
    }

    const zFitted = opts.fitZeroShift && lambda !== null && s.cov !== null && s.cov.length > np0;
    const zU = zFitted ? Math.sqrt(Math.max(0, s.cov![np0][np0] * scale)) : null;
    const lines: IndexedLine[] = s.hkls.map((h) => {
      const dCalc = 1 / Math.sqrt(qOf(t.kind, t.a, t.c, ...h.hkl));
      const tt = w.tt[h.peak];
      const corrected = tt !== null && lambda !== null ? tt - t.zero : null;
      const dObs = corrected !== null ? lambda! / (2 * Math.sin((corrected * DEG) / 2)) : peaks[h.peak].dNm;
      return { peak: h.peak, hkl: h.hkl, dObsNm: dObs, dCalcNm: dCalc, deltaTwoThetaDeg: corrected !== null ? corrected - twoThetaOfQ(1 / (dCalc * dCalc), lambda!) : null };
    });
    lines.sort((x, y) => y.dCalcNm - x.dCalcNm);
    const cellWords = (c: Trial) => (c.kind === 'lamellar' ? `c ${c.c.toPrecision(6)} nm` : cellParameters(c.kind) === 1 ? `a ${c.a.toPrecision(6)} nm` : `a ${c.a.toPrecision(6)} nm, c ${c.c.toPrecision(6)} nm`);
    if (s.from) {
      const only = s.fromOnlyDNm ?? [];
      notes.push(
        only.length === 0
          ? `the ${LATTICE_WORDS[s.from.kind]} cell (${cellWords(s.from)}) indexes these lines only with indices its ${LATTICE_WORDS[t.kind]} sub-cell (${cellWords(t)}) also has: the sub-cell is taken (the smallest cell)`
          : `the ${LATTICE_WORDS[s.from.kind]} cell (${cellWords(s.from)}) indexes these lines with indices its ${LATTICE_WORDS[t.kind]} sub-cell (${cellWords(t)}) also has, but for ${only.length === 1 ? 'one weak line' : `${only.length} weak lines`} (d ${only.map((d) => d.toPrecision(5)).join(', ')} nm) that a cell predicting so many more lines meets by chance: the sub-cell is taken (the smallest cell); a superstructure would show more such lines, or strong ones`,
      );
    }
    const explained = new Set(s.hkls.map((h) => h.peak));
    return {
      kind: t.kind,
      aNm: t.kind === 'lamellar' ? NaN : t.a,
      cNm: t.c,
      aUncNm: t.kind === 'lamellar' ? NaN : aU,
      cUncNm: cU,
      zeroShiftDeg: zFitted ? t.zero : null,
      zeroShiftUncDeg: zU,
      lines,
      unexplainedStrong: [...strong].filter((i) => !explained.has(i)),
      figureOfMerit: s.fom,
      standard: isStandard,
      name: name ?? LATTICE_WORDS[t.kind],
    };
  };
  const phases: IndexedPhase[] = [];
  let remaining: Set<number> | null = null;
  // an internal standard first: its cell held, the zero shift fitted from its lines
  if (options.standard) {
    const st = options.standard;
    const s = evaluate(w, { kind: st.cell.kind, a: st.cell.aNm, c: st.cell.cNm, zero: 0, allows: st.allows }, null, { ...opts, fitZeroShift: lambda !== null }, true);
    if (!s || s.hkls.length < 2) notes.push(`the standard ${st.name} explains fewer than two lines: not used`);
    else {
      const ph = phaseOf(s, true, st.name);
      // the certified cell's own uncertainty moves the zero shift too
      const rel = st.relUncertainty ?? 0;
      if (ph.zeroShiftUncDeg !== null && rel > 0) {
        const used = s.hkls.filter((h) => w.tt[h.peak] !== null);
        const cellPart = zeroShiftCellPartDeg(used.map((h) => w.tt[h.peak]!), used.map((h) => 1 / (w.stt[h.peak] ** 2 + 0.002 ** 2)), rel);
        ph.zeroShiftUncDeg = Math.hypot(ph.zeroShiftUncDeg, cellPart);
      }
      phases.push(ph);
      remaining = new Set(peaks.map((_, i) => i).filter((i) => !s.hkls.some((h) => h.peak === i)));
    }
  }
  const search = (subset: Set<number> | null): { best: Solution; pool: Solution[] } | null => {
    const within = subset ? [...w.strongOrder].filter((i) => subset.has(i)) : w.strongOrder;
    if (within.length === 0) return null;
    const wSub: Work = subset ? { ...w, strongOrder: within.length >= 3 ? within : [...subset].sort((a, b) => peaks[b].dNm - peaks[a].dNm).slice(0, 7) } : w;
    const strongHere = [...strong].filter((i) => !subset || subset.has(i));
    const topHere = strongHere.length ? strongHere.reduce((a, b) => (peaks[a].intensity >= peaks[b].intensity ? a : b)) : -1;
    const pool: Solution[] = [];
    for (const kind of kinds) {
      const trials = candidates(wSub, kind);
      // a quick score first (no refinement), then the best few refined
      const quick: Array<{ t: Trial; score: number }> = [];
      const qMaxAll = 1.01 / (w.dMin * w.dMin);
      for (const t of trials) {
        const qs = quickQs(t, qMaxAll);
        if (qs.length === 0 || qs.length > 3000) continue;
        let sc = 0;
        let matched = 0;
        for (let i = 0; i < w.q.length; i++) {
          if (subset && !subset.has(i)) continue;
          if (nearestQ(qs, w.q[i], w.lambda, w.tt[i], opts.searchToleranceDeg)) {
            sc += (strong.has(i) ? 10 : 1) + peaks[i].intensity / top;
            matched++;
          }
        }
        quick.push({ t, score: sc * Math.min(1, matched / Math.max(1, qs.length)) });
      }
      quick.sort((a, b) => b.score - a.score);
      for (const q of quick.slice(0, 20)) {
        const s0 = evaluate(w, q.t, subset, opts);
        if (!s0) continue;
        const s = smallestCell(w, s0, subset, opts);
        if (topHere >= 0 && !s.hkls.some((h) => h.peak === topHere)) continue; // a phase explains the strongest line it is offered
        const minLines = s.t.kind === 'lamellar' ? 2 : cellParameters(s.t.kind) + 2;
        if (s.hkls.length < minLines) continue;
        if (s.t.kind === 'lamellar' && !s.hkls.some((h) => h.hkl[2] === 1)) continue; // a series starts at its first order
        if (s.fom.fN < minFom) continue;
        pool.push(s);
      }
    }
    if (pool.length === 0) return null;
    const needStrong = strongHere.length;
    const nHere = subset ? subset.size : peaks.length;
    const score = (x: Solution) => x.fom.fN * (x.hkls.length / nHere) ** 2;
    // the order of preference: every strong line explained; then the most strong lines; then the
    // simplest description: a two-parameter cell must score twice a one-parameter one (it can
    // index more by chance); then the score; within 10 %, the smaller cell. Strong lines one cell
    // explains and the other not decide only when the first cell's lines are unlikely to meet them
    // by chance (strongBeyondChance); else the comparison goes on as if both explained as many
    const compare = (a: Solution, b: Solution) => {
      const ca = a.strongExplained >= needStrong ? 1 : 0;
      const cb = b.strongExplained >= needStrong ? 1 : 0;
      if (ca !== cb || (!ca && a.strongExplained !== b.strongExplained)) {
        const ea = strongBeyondChance(w, a, b, strongHere);
        const eb = strongBeyondChance(w, b, a, strongHere);
        if (ea !== eb) return eb - ea;
      }
      const pa = cellParameters(a.t.kind);
      const pb = cellParameters(b.t.kind);
      // the simplest lattice that explains the lines: a cell of fewer parameters that explains as
      // many lines, the strong ones included, predicts no more lines in their range (a large cell's
      // dense comb of lines matches anything) and fits them within their uncertainties (χ² below
      // its 0.1 % quantile) is taken, however much closer the other's extra parameter brings them
      // (F_N rewards the closeness a free parameter buys on few lines)
      if (pa !== pb) {
        const [simple, other] = pa < pb ? [a, b] : [b, a];
        if (simple.hkls.length >= other.hkls.length && simple.strongExplained >= other.strongExplained && simple.fom.nPossible <= other.fom.nPossible && fitsWithin(simple)) return simple === a ? -1 : 1;
      } else if (a.hkls.length !== b.hkls.length) {
        // as many parameters: the cell that explains more lines, predicting no more in their range
        // and fitting within the uncertainties, is taken (a weak line only one cell has tells them
        // apart, as the hexagonal 110 tells a hexagonal cell from the tetragonal one of a·√3/2)
        const [more, fewer] = a.hkls.length > b.hkls.length ? [a, b] : [b, a];
        if (more.strongExplained >= fewer.strongExplained && more.fom.nPossible <= fewer.fom.nPossible && fitsWithin(more)) return more === a ? -1 : 1;
      }
      // once both figures of merit are convincing (F_N ≥ 20, common practice), a larger F_N is no
      // further evidence (a few lines fit closely by chance) while lines explained are: between
      // cells of as many parameters, one explaining half as many lines again wins
      if (pa === pb && a.fom.fN >= 20 && b.fom.fN >= 20) {
        if (a.hkls.length >= 1.5 * b.hkls.length) return -1;
        if (b.hkls.length >= 1.5 * a.hkls.length) return 1;
      }
      const sa = score(a) / pa;
      const sb = score(b) / pb;
      if (Math.abs(sa - sb) > 0.1 * Math.max(sa, sb)) return sb - sa;
      if (pa !== pb) return pa - pb;
      return a.volume - b.volume;
    };
    pool.sort(compare);
    // one entry per distinct cell
    const distinct: Solution[] = [];
    for (const x of pool) {
      if (!distinct.some((y) => y.t.kind === x.t.kind && Math.abs(y.t.c / x.t.c - 1) < 1e-3 && (x.t.kind === 'lamellar' || Math.abs(y.t.a / x.t.a - 1) < 1e-3))) distinct.push(x);
    }
    pool.length = 0;
    pool.push(...distinct);
    // a primitive cubic cell and the body-centred one of edge a√2 that index the very same lines,
    // predicting as many, are told apart by the intensities (oneAtomIntensityChi2): the cell whose
    // multiplicities explain them (χ² within its 0.1 % quantile) and the other's not by a likelihood
    // ratio of 100 or more (Δχ² ≥ 2 ln 100) is taken; else the smaller cell stays, and is named as uncertain
    const head = pool[0];
    let twinNamed: Solution | null = null;
    if (head && (head.t.kind === 'cubic-P' || head.t.kind === 'cubic-I')) {
      const twinKind: LatticeKind = head.t.kind === 'cubic-P' ? 'cubic-I' : 'cubic-P';
      const ratio = head.t.kind === 'cubic-P' ? Math.SQRT2 : Math.SQRT1_2;
      const samePeaks = (x: Solution) => x.hkls.length === head.hkls.length && x.hkls.every((h) => head.hkls.some((g) => g.peak === h.peak));
      const twin = pool.find((x) => x.t.kind === twinKind && Math.abs(x.t.a / (head.t.a * ratio) - 1) < 2e-3 && samePeaks(x) && x.fom.nPossible === head.fom.nPossible);
      if (twin) {
        const [p, b] = head.t.kind === 'cubic-P' ? [head, twin] : [twin, head];
        const ip = oneAtomIntensityChi2(w, p);
        const ib = oneAtomIntensityChi2(w, b);
        const fits = (r: { chi2: number; dof: number } | null) => r !== null && r.chi2 <= chiSquareUpperQuantile(0.001, r.dof);
        const lr = 2 * Math.log(100);
        const pick = ip && ib && fits(ib) && ip.chi2 - ib.chi2 >= lr ? b : ip && ib && fits(ip) && ib.chi2 - ip.chi2 >= lr ? p : null;
        const cellA = (x: Solution) => `a ${x.t.a.toPrecision(6)} nm`;
        const chiWords = ip && ib ? ` (χ² of ln I with one atom per lattice point: ${ip.chi2.toFixed(1)} primitive, ${ib.chi2.toFixed(1)} body-centred, on ${ip.dof} degrees of freedom)` : '';
        const chosen = pick ?? (p.volume <= b.volume ? p : b);
        const other = chosen === p ? b : p;
        pool.splice(pool.indexOf(chosen), 1);
        pool.unshift(chosen);
        twinNamed = other;
        if (pick) notes.push(`${LATTICE_WORDS[other.t.kind]} (${cellA(other)}) indexes the same lines as the ${LATTICE_WORDS[chosen.t.kind]} cell (${cellA(chosen)}); the line intensities follow the ${LATTICE_WORDS[chosen.t.kind]} cell's multiplicities${chiWords}, which is taken`);
        else notes.push(`${LATTICE_WORDS[other.t.kind]} (${cellA(other)}) indexes the same lines as the ${LATTICE_WORDS[chosen.t.kind]} cell chosen (${cellA(chosen)}, the smaller cell), and the intensities do not tell them apart${chiWords}: the body-centred cell's 321 would`);
      }
    }
    // another lattice that explains the same lines about as well is named, not hidden
    const alt = pool.find((x) => x !== pool[0] && x !== twinNamed && x.t.kind !== pool[0].t.kind && cellParameters(x.t.kind) === cellParameters(pool[0].t.kind) && x.strongExplained === pool[0].strongExplained && x.hkls.length >= pool[0].hkls.length && score(x) > 0.9 * score(pool[0]));
    if (alt) notes.push(`${LATTICE_WORDS[alt.t.kind]} (a ${alt.t.a.toPrecision(6)} nm${cellParameters(alt.t.kind) === 2 ? `, c ${alt.t.c.toPrecision(6)} nm` : ''}) indexes the same lines about as well as the ${LATTICE_WORDS[pool[0].t.kind]} cell chosen (the smaller cell); lines at higher angle would tell them apart`);
    return { best: pool[0], pool };
  };
  const firstNotesAt = notes.length;
  let found = search(remaining);
  const firstNotesEnd = notes.length;
  if (!found) {
    // no lattice explains the strongest line: a lone line (the one order of a series in range, or
    // the only line of a phase) must not hide the phases the other lines make; it is left unindexed
    const scope0 = remaining ?? new Set(peaks.map((_, i) => i));
    const strongIn = [...strong].filter((i) => scope0.has(i));
    const lone = strongIn.length ? strongIn.reduce((a, b) => (peaks[a].intensity >= peaks[b].intensity ? a : b)) : -1;
    if (lone >= 0 && scope0.size >= 4) {
      const without = new Set([...scope0].filter((i) => i !== lone));
      found = search(without);
      if (found) {
        remaining = without;
        notes.push(`no lattice explains the strongest line (d ${peaks[lone].dNm.toPrecision(5)} nm) with the others: it is left unindexed and the phases are sought among the rest`);
      }
    }
  }
  if (found) {
    const firstBest = found.best;
    const scope = remaining ? [...remaining] : peaks.map((_, i) => i);
    const strongScope = [...strong].filter((i) => !remaining || remaining.has(i));
    let complete = firstBest.strongExplained >= strongScope.length;
    // a two-parameter cell that explains everything may be two simpler phases: compared with the
    // best one-parameter phase and the best phase among the lines it leaves
    let mixtureFirst = false;
    if (complete && cellParameters(firstBest.t.kind) === 2 && (options.mixtures ?? true)) {
      for (const one of found.pool.filter((x) => cellParameters(x.t.kind) === 1).slice(0, 4)) {
        const explained = new Set(one.hkls.map((h) => h.peak));
        const rest = new Set(scope.filter((i) => !explained.has(i)));
        const restFound = rest.size >= 2 ? search(rest) : null;
        if (!restFound) continue;
        // the best phase among the rest, and the best one-parameter phase there (the pair of as many parameters as the one cell)
        const options2 = [restFound.best, restFound.pool.find((x) => cellParameters(x.t.kind) === 1 && x.hkls.length >= 3 && x.fom.fN >= 20)].filter((x, k, all): x is Solution => !!x && all.indexOf(x) === k);
        let pairFound = false;
        for (const two of options2) {
          const both = new Set([...explained, ...two.hkls.map((h) => h.peak)]);
          const strongDone = strongScope.filter((i) => both.has(i)).length;
          const gm = Math.sqrt(one.fom.fN * two.fom.fN);
          // the simplest description wins: two phases with more free cell parameters than the one
          // cell must explain at least two more lines; two one-parameter phases (as many parameters
          // as one two-parameter cell) need only explain as many, with the better figure of merit
          const extra = cellParameters(one.t.kind) + cellParameters(two.t.kind) > cellParameters(firstBest.t.kind) ? 2 : 0;
          // a single cell that is not convincing itself (F_N < 20) gives way to two convincing phases
          // explaining every strong line, even with up to two weak lines fewer (left unindexed)
          const better = (both.size >= firstBest.hkls.length + extra && gm > firstBest.fom.fN) || (firstBest.fom.fN < 20 && extra === 0 && both.size >= firstBest.hkls.length - 2);
          // each phase of the pair must be convincing on its own (at least half the single cell's F_N, and
          // F_N ≥ 20 or M_N ≥ 20): a cell of high indices fits a few lines by chance
          const convincing = [one, two].every((x) => x.fom.fN >= 0.5 * firstBest.fom.fN && convincingAlone(x));
          if (strongDone >= strongScope.length && one.hkls.length >= 3 && two.hkls.length >= 3 && better && convincing) {
            const [oneW, twoW] = shareByWidth(w, one, two, scope, opts);
            phases.push(phaseOf(oneW, false, undefined, twoW), phaseOf(twoW, false, undefined, oneW));
            notes.push(`two phases (${LATTICE_WORDS[one.t.kind]} and ${LATTICE_WORDS[two.t.kind]}) explain the lines better than one ${LATTICE_WORDS[firstBest.t.kind]} cell (a ${firstBest.t.a.toPrecision(6)} nm, c ${firstBest.t.c.toPrecision(6)} nm)`);
            mixtureFirst = true;
            // what the search said of the single cell (another lattice as good) no longer applies
            notes.splice(firstNotesAt, firstNotesEnd - firstNotesAt);
            pairFound = true;
            break;
          }
        }
        if (pairFound) break;
      }
    }
    if (mixtureFirst) complete = true;
    else if (complete || !(options.mixtures ?? true)) {
      // weaker lines the phase leaves may be a second, minor phase
      const explained = new Set(firstBest.hkls.map((h) => h.peak));
      const rest = new Set(scope.filter((i) => !explained.has(i)));
      const found = complete && (options.mixtures ?? true) && rest.size >= 2 ? search(rest)?.best ?? null : null;
      const two = found && found.hkls.length >= 2 && found.fom.fN >= 2 * minFom ? found : null;
      phases.push(phaseOf(firstBest, false, undefined, two ?? undefined));
      if (!complete) notes.push(`${strongScope.length - firstBest.strongExplained} strong line(s) left unexplained by one phase (mixtures not tried)`);
      if (two) {
        phases.push(phaseOf(two, false, undefined, firstBest));
        notes.push(`a minor second phase (${LATTICE_WORDS[two.t.kind]}) explains ${two.hkls.length} of the weaker lines the first leaves`);
      }
    } else {
      // a mixture: each of the leading single-phase solutions with the best phase among the lines it leaves
      // the simplest cells among them too: two-parameter cells whose c is a clay's period and whose a
      // catches a few lines of the other phase explain more lines each and can fill the first ten,
      // leaving out the lamellar stack or cubic cell that pairs with the other phase (de Wolff 1968:
      // the smallest cell; each description is then judged by the same key below)
      const leaders = found.pool.slice(0, 10);
      for (const x of found.pool.filter((y) => cellParameters(y.t.kind) === 1).slice(0, 4)) if (!leaders.includes(x)) leaders.push(x);
      let bestPair: { a: Solution; b: Solution | null; key: number[]; both: Set<number> } | null = null;
      // strong lines one description explains and the other does not count for it only beyond chance
      // (strongBeyondChance, for a pair: each line judged by the cell of the pair that explains it): a
      // two-parameter cell whose dense comb meets a clay's (hk) band fitted as a broad peak must not
      // win over the lamellar stack by it
      const beyondChance = (pair: { a: Solution; b: Solution | null }, only: number[]): number => {
        if (only.length === 0) return 0;
        const chanceAll = only.reduce((acc, i) => acc * chanceOfMatch(w, pair.a.hkls.some((h) => h.peak === i) || !pair.b ? pair.a : pair.b, i), 1);
        return chanceAll <= 1 / Math.sqrt(10) ? only.length : 0;
      };
      for (const a of leaders) {
        const explained = new Set(a.hkls.map((h) => h.peak));
        const rest = new Set(scope.filter((i) => !explained.has(i)));
        const b = rest.size >= 2 ? search(rest)?.best ?? null : null;
        const both = new Set([...explained, ...(b ? b.hkls.map((h) => h.peak) : [])]);
        const strongDone = strongScope.filter((i) => both.has(i)).length;
        const gm = b ? Math.sqrt(a.fom.fN * b.fom.fN) : a.fom.fN / 4;
        // the simplest description: each free cell parameter must pay for itself with two lines
        // explained (as above: more parameters must explain at least two more lines), so a clay's
        // orders read as a tetragonal cell whose a catches two stray lines do not beat the lamellar
        // stack that explains them with one parameter
        const params = cellParameters(a.t.kind) + (b ? cellParameters(b.t.kind) : 0);
        const key = [strongDone, both.size - 2 * params, gm];
        let better = !bestPair;
        if (bestPair) {
          const common = strongScope.filter((i) => both.has(i) && bestPair!.both.has(i)).length;
          const mine = common + beyondChance({ a, b }, strongScope.filter((i) => both.has(i) && !bestPair!.both.has(i)));
          const theirs = common + beyondChance(bestPair, strongScope.filter((i) => !both.has(i) && bestPair!.both.has(i)));
          better = mine > theirs || (mine === theirs && (key[1] > bestPair.key[1] || (key[1] === bestPair.key[1] && key[2] > bestPair.key[2])));
        }
        if (better) bestPair = { a, b, key, both };
      }
      let first = bestPair!.a;
      let second = bestPair!.b;
      if (second) {
        // the simplest description: when the second phase's cell, refined on every line, explains
        // every strong line and every line the pair explains, with a figure of merit no worse than
        // the weaker of the two, the pair is one phase (its first member a coincidence cell that held
        // lines of the second: a layered cell's strongest lines have l too high to seed a trial cell,
        // so the cell is first found among the lines another cell leaves; de Wolff 1968, the smallest cell)
        const alone = evaluate(w, second.t, new Set(scope), opts);
        const pairLines = new Set([...first.hkls, ...second.hkls].map((h) => h.peak));
        if (alone && alone.strongExplained >= strongScope.length && alone.hkls.length >= pairLines.size && alone.fom.fN >= Math.min(first.fom.fN, second.fom.fN)) {
          notes.push(`one ${LATTICE_WORDS[alone.t.kind]} cell explains every line that the ${LATTICE_WORDS[first.t.kind]} cell (a ${first.t.a.toPrecision(6)} nm${cellParameters(first.t.kind) === 2 ? `, c ${first.t.c.toPrecision(6)} nm` : ''}) and it explain together: one phase (the simplest description)`);
          first = alone;
          second = null;
        }
      }
      // what the search said of its best single cell no longer applies when another leads the pair
      if (first !== firstBest) notes.splice(firstNotesAt, firstNotesEnd - firstNotesAt);
      if (second) {
        // lines the second phase explains are taken from the first, which is refined again without them
        const bAll = evaluate(w, second.t, new Set(scope), opts, true);
        const claimed = new Set((bAll?.hkls ?? []).map((h) => h.peak));
        const own = new Set(scope.filter((i) => !claimed.has(i)));
        const again = own.size >= 2 ? evaluate(w, first.t, own, opts) : null;
        if (again && again.fom.fN >= first.fom.fN && again.hkls.length >= Math.min(first.hkls.length, 2)) first = again;
        // the smallest cell (de Wolff, J. Appl. Cryst. 1, 108, 1968): a cell with c or a doubled
        // indexes every line of the cell itself plus, by its half-integer indices, some lines of the
        // other phase; once those are the other phase's, a half cell that explains as many of the
        // lines left, the strong ones included, is the cell
        const ownLines = first.hkls.filter((h) => own.has(h.peak)).length;
        const parts = cellParameters(first.t.kind) === 2 ? [{ edge: 'c', n: 2 }, { edge: 'c', n: 3 }, { edge: 'a', n: 2 }] : [];
        for (const { edge, n } of parts) {
          const t = edge === 'c' ? { ...first.t, c: first.t.c / n } : { ...first.t, a: first.t.a / n };
          const half = own.size >= 2 ? evaluate(w, t, own, opts) : null;
          if (half && half.hkls.length >= ownLines && half.strongExplained >= first.hkls.filter((h) => own.has(h.peak) && strong.has(h.peak)).length && half.fom.fN >= minFom) {
            notes.push(`the ${LATTICE_WORDS[first.t.kind]} cell with ${edge} ${n === 2 ? 'doubled' : 'tripled'} (a ${first.t.a.toPrecision(6)} nm, c ${first.t.c.toPrecision(6)} nm) explains lines of the other phase too; without them the cell with ${edge}/${n} explains as many lines and is taken (the smallest cell)`);
            first = half;
            break;
          }
        }
      }
      // a line both phases' cells explain goes to the phase whose breadth it has (as for the pair that replaces one cell)
      let secondW = second;
      if (second) [first, secondW] = shareByWidth(w, first, second, scope, opts);
      const [settled, secondS] = secondW ? settleLeftLines(w, first, secondW, scope, opts, minFom) : [first, null];
      let firstS = settled;
      // once the other phase has its lines, the first may be a supercell of its own lines in more
      // than one edge at once (a and c doubled and the centring changed: a body-centred (2a, 2c)
      // cell whose lines all have even indices is the primitive (a, c)): the smallest cell of
      // what it keeps, when it explains as many of those lines, the strong ones included
      if (secondS) {
        const taken = new Set(secondS.hkls.map((h) => h.peak));
        const mine = new Set(scope.filter((i) => !taken.has(i)));
        const sm = smallestCell(w, firstS, mine, opts);
        if (sm !== firstS && sm.hkls.length >= firstS.hkls.length && sm.strongExplained >= firstS.strongExplained) firstS = sm;
      }
      phases.push(phaseOf(firstS, false, undefined, secondS ?? undefined));
      if (secondS) phases.push(phaseOf(secondS, false, undefined, firstS));
      const left = strongScope.length - bestPair!.key[0];
      if (left > 0) notes.push(`${left} strong line(s) explained by no phase found`);
    }
  } else notes.push('no lattice explains the strongest lines with a figure of merit F_N ≥ ' + minFom);
  const indexed = new Set(phases.flatMap((p) => p.lines.map((l) => l.peak)));
  // the zero shift of the pattern: the standard's, else that of the phase with the most lines
  const zSrc = phases.find((p) => p.standard && p.zeroShiftDeg !== null) ?? [...phases].filter((p) => p.zeroShiftDeg !== null).sort((a, b) => b.lines.length - a.lines.length)[0];
  return {
    phases,
    unindexed: peaks.map((_, i) => i).filter((i) => !indexed.has(i)),
    zeroShiftDeg: zSrc?.zeroShiftDeg ?? null,
    zeroShiftUncDeg: zSrc?.zeroShiftUncDeg ?? null,
    notes,
  };
}

