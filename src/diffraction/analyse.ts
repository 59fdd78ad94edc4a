/**
 * One call from a pattern to peaks, crystallite sizes and series: what the command line and the
 * diffraction panel show.
 */
import { fitInstrumentProfile, instrumentWidth, sampleBreadth, sampleBreadthUncDeg, type InstrumentProfile } from './instrument';
import { indexPattern, type IndexOptions, type IndexResult } from './indexing';
import { latticeLines } from './lattice';
import { dToTwoTheta } from './bragg';
import { DEFAULT_LP_GEOMETRY, describeLpGeometry, lpGeometry } from './lorentz-polarisation';
import type { InternalStandard } from './internal-standard';
import type { Pattern } from './pattern';
import { fitPattern, type FitOptions, type FittedPeak } from './peaks';
import { phaseCrystalliteSize, type PhaseSize } from './phase-size';
import { sharedSampleShape } from './sample-shape';
import { scherrerSize, type BroadeningCorrection } from './scherrer';
import { indexSeries, type IndexedSeries } from './series';

/** Options of analysePattern. */
export interface AnalyseOptions extends FitOptions {
  /** Scherrer shape factor K (default 0.9). */
  k?: number;
  /** The instrument profile fitted from a standard (see instrumentFromStandard): removed from every line as a Voigt. */
  instrument?: InstrumentProfile;
  /** Instrumental FWHM in degrees 2θ, constant, or a function of 2θ (used when no instrument profile is given; default 0). */
  instrumentFwhmDeg?: number | ((twoThetaDeg: number) => number);
  /** Instrument correction rule with instrumentFwhmDeg (default 'gaussian'). */
  correction?: BroadeningCorrection;
  /** Index the peaks (default true for patterns with a wavelength). */
  index?: boolean;
  /** An internal standard mixed into the sample: its cell is held and the zero shift fitted from its lines. */
  internalStandard?: InternalStandard;
  /**
   * With an instrument profile, measure each resolved line of an indexed phase with the sample
   * profile shape its phase's lines share (sample-shape.ts) instead of its own fitted shape (default
   * false). It removes the per-line sizes' bias (about −2 %) and lowers their scatter, but a line whose
   * FWHM came out narrow by noise then shows its full error: on the benchmark the largest per-line
   * error fell on seeds 3, 5 and 43 and rose on seeds 4 and 6 (docs/validation.md, issue #16).
   */
  sharedShape?: boolean;
  /** Allowance for the zero shift and specimen displacement when neither a standard nor an indexed phase measures them, degrees 2θ, half-width of a uniform distribution (default 0.05°, common practice for a laboratory instrument without a standard). */
  zeroAllowanceDeg?: number;
}

/** What the ± of a d-spacing contains: standard uncertainties in nm (k = 1), by source. */
export interface DBudget {
  /** The peak position's fit uncertainty. */
  statisticalNm: number;
  /** Profile-shape allowance (0.002° 2θ, common practice) and, when not measured, the zero shift and specimen displacement allowance. */
  methodNm: number;
  /** The wavelength's uncertainty and a measured zero shift's uncertainty. */
  calibrationNm: number;
  /** Combined standard uncertainty. */
  combinedNm: number;
  /** What was applied: the zero shift removed (degrees), or null. */
  zeroShiftDeg: number | null;
  /** The budget in words. */
  statement: string;
}

/** A fitted peak with its crystallite size and its full d budget. */
export interface AnalysedPeak extends FittedPeak {
  /** Scherrer size in nm (null when the breadth does not exceed the instrument's, no wavelength, or a band). */
  crystalliteNm: number | null;
  crystalliteUncNm: number | null;
  /** Sample FWHM after the instrument correction, degrees (null without one or for q data). */
  sampleFwhmDeg: number | null;
  /** d corrected for the zero shift when one was measured, nm, and its full budget. */
  dCorrectedNm: number;
  budget: DBudget;
}

/** Result of analysePattern. */
export interface PatternAnalysis {
  wavelengthNm: number | null;
  ka2Nm: number | null;
  /** Wavelength label and where it came from (quoted), for every result. */
  radiationLabel: string;
  radiationSource: string;
  /** The Lorentz–polarisation geometry modelled across each line, in words, for every result ('none' for q data). */
  lpLabel: string;
  peaks: AnalysedPeak[];
  /** Series of q data (lamellar, 2D-hexagonal, cubic mesophases); for 2θ data those with a strong line that no indexed phase contradicts. */
  series: IndexedSeries[];
  /** The indexing of the peaks (lattices, cells, zero shift, figures of merit). */
  indexing: IndexResult;
  /** Crystallite size of each indexed phase from all its own lines (strain held at zero, or Williamson–Hall when a strain term is significant); null where fewer than two of its lines have a size, or for q data. */
  phaseSizes: Array<PhaseSize | null>;
  /** Scherrer method statement. */
  sizeMethod: string;
  background: Float64Array;
  model: Float64Array;
  notes: string[];
}

/**
 * Fits a pattern's peaks, computes each peak's Scherrer size and looks for reflection series.
 * @param pattern the pattern
 * @param options fit settings, shape factor and instrumental breadth
 * @returns wavelength, peaks with sizes, series, background and model curves, notes
 * Notes: no size is given for a peak whose FWHM ended on its bound or has an uncertainty above
 * half its value (noted). For q data without a wavelength the size is D = 2πK/Δq, the same Scherrer relation
 * written in q (Δq = FWHM in nm⁻¹).
 * Reference: see fitPattern, scherrerSize and indexSeries.
 */
export function analysePattern(pattern: Pattern, options: AnalyseOptions = {}): PatternAnalysis {
  const fit = fitPattern(pattern, options);
  const k = options.k ?? 0.9;
  const inst = options.instrumentFwhmDeg ?? 0;
  const instAt = typeof inst === 'function' ? inst : () => inst;
  const profile = options.instrument ?? null;
  const lambda = pattern.wavelengthNm;
  const zAllow = options.zeroAllowanceDeg ?? 0.05;
  if (!(zAllow >= 0 && zAllow < 5)) throw new RangeError(`zeroAllowanceDeg must be in [0, 5), got ${zAllow}`);
  if (profile && lambda !== null && Math.abs(profile.wavelengthNm / lambda - 1) > 0.01) throw new RangeError(`the instrument profile was measured at ${profile.wavelengthNm} nm, the pattern at ${lambda} nm: measure the standard with the same radiation`);
  let method = '';
  const warnings = new Set<string>();
  // for each sized line also the breadth to average over a phase (a negative squared Gaussian sample width kept)
  const pooled: Array<{ sampleFwhmDeg: number; sampleFwhmUncDeg: number } | null> = fit.peaks.map(() => null);
  const sizes = fit.peaks.map((p, i): { size: number | null; unc: number | null; sample: number | null } => {
    if (p.kind === 'band') return { size: null, unc: null, sample: null };
    if (!p.given && p.fwhmUncInvNm === 0) {
      warnings.add('weak lines were fitted with their width held at the pattern\'s width trend: no size from them');
      return { size: null, unc: null, sample: null };
    }
    if (p.fwhmUncInvNm > 0.5 * p.fwhmInvNm || p.atBound.includes('fwhm')) {
      const where = p.twoThetaDeg !== null ? `${p.twoThetaDeg.toFixed(3)}°` : `q ${p.qInvNm.toFixed(4)} nm⁻¹`;
      warnings.add(`peak at ${where}: FWHM too poorly determined for a size (${p.atBound.includes('fwhm') ? 'at its bound' : 'uncertainty above half its value'})`);
      return { size: null, unc: null, sample: null };
    }
    if (p.fwhmDeg !== null && p.twoThetaDeg !== null && (lambda ?? 0) > 0) {
      if (profile) {
        const sb = sampleBreadth(p.fwhmDeg, p.eta, p.twoThetaDeg, profile);
        method = `Scherrer, K = ${k}, FWHM of the sample's own profile: the instrument profile of the standard ${profile.source} removed as a Voigt (Gaussian widths in quadrature, Lorentzian linearly); strain ignored`;
        const ins = instrumentWidth(profile, p.twoThetaDeg).fwhmDeg;
        if (!(sb.fwhmDeg > 0.1 * p.fwhmDeg) || p.fwhmDeg < 1.05 * ins) {
          warnings.add('some peaks are not broader than the instrument: no size');
          return { size: null, unc: null, sample: sb.fwhmDeg };
        }
        const r = scherrerSize(sb.fwhmDeg, p.twoThetaDeg, lambda!, { k });
        const unc = r.sizeNm! * sampleBreadthUncDeg(p, profile, sb.fwhmDeg) / sb.fwhmDeg;
        const signed = sampleBreadth(p.fwhmDeg, p.eta, p.twoThetaDeg, profile, true).fwhmDeg;
        if (signed > 0) pooled[i] = { sampleFwhmDeg: signed, sampleFwhmUncDeg: sampleBreadthUncDeg(p, profile, signed, true) };
        if (r.sizeNm! > 100) warnings.add('some sizes exceed ~100 nm, where the Scherrer estimate loses meaning');
        return { size: r.sizeNm, unc, sample: sb.fwhmDeg };
      }
      const r = scherrerSize(p.fwhmDeg, p.twoThetaDeg, lambda!, { k, instrumentFwhmDeg: instAt(p.twoThetaDeg), correction: options.correction, fwhmUncDeg: p.fwhmUncDeg ?? 0 });
      method = r.method.replace(/instrument [0-9.]+° removed/, typeof inst === 'function' ? 'instrument breadth from the standard removed' : `instrument ${inst}° removed`);
      for (const w of r.warnings) if (/above ~100 nm/.test(w)) warnings.add('some sizes exceed ~100 nm, where the Scherrer estimate loses meaning');
      else warnings.add('some peaks are not broader than the instrument: no size');
      if (r.sizeNm !== null && r.sizeUncNm !== null && r.sampleFwhmDeg > 0) pooled[i] = { sampleFwhmDeg: r.sampleFwhmDeg, sampleFwhmUncDeg: (r.sampleFwhmDeg * r.sizeUncNm) / r.sizeNm };
      return { size: r.sizeNm, unc: r.sizeUncNm, sample: r.sampleFwhmDeg };
    }
    const size = (2 * Math.PI * k) / p.fwhmInvNm;
    method = `Scherrer in q, D = 2πK/Δq, K = ${k}; no instrument correction; strain ignored`;
    return { size, unc: (size * p.fwhmUncInvNm) / p.fwhmInvNm, sample: null };
  });
  if (fit.peaks.some((p) => p.kind === 'band')) warnings.add('asymmetric (hk) bands of turbostratic layers: no Scherrer size (their breadth is not a column length)');
  // indexing: lines only (bands have no hkl)
  const lines = fit.peaks.map((p, i) => ({ p, i })).filter((e) => e.p.kind === 'peak');
  const doIndex = (options.index ?? true) && lines.length > 0;
  const idxOpts: IndexOptions = { wavelengthNm: pattern.axis === 'twoTheta' ? lambda : null, wavelengthRelU: pattern.radiation?.relUncertainty ?? 0, standard: options.internalStandard };
  const raw = doIndex
    ? indexPattern(lines.map((e) => ({ dNm: e.p.dNm, dUncNm: e.p.dUncNm, twoThetaDeg: e.p.twoThetaDeg, twoThetaUncDeg: e.p.twoThetaUncDeg, intensity: e.p.area, fwhmDeg: e.p.fwhmDeg })), idxOpts)
    : { phases: [], unindexed: [], zeroShiftDeg: null, zeroShiftUncDeg: null, notes: [] };
  // peak indices of the indexing refer to `lines`: mapped back to the pattern's peaks
  const back = (j: number) => lines[j].i;
  const indexing: IndexResult = {
    ...raw,
    phases: raw.phases.map((ph) => ({ ...ph, lines: ph.lines.map((l) => ({ ...l, peak: back(l.peak) })), unexplainedStrong: ph.unexplainedStrong.map(back) })),
    unindexed: raw.unindexed.map(back),
  };
  // the d budget
  const z = indexing.zeroShiftDeg;
  const zU = indexing.zeroShiftUncDeg ?? 0;
  const relL = pattern.radiation?.relUncertainty ?? 0;
  const zWords = z !== null ? `zero shift ${z.toFixed(4)}° ± ${zU.toPrecision(2)}° measured ${indexing.phases.some((p) => p.standard) ? 'on the internal standard' : 'from the indexed lines'} and removed` : `zero shift and specimen displacement not measured: allowance ±${zAllow}° 2θ (uniform) in the method part`;
  const peaks: AnalysedPeak[] = fit.peaks.map((p, i) => {
    const base = { ...p, crystalliteNm: sizes[i].size, crystalliteUncNm: sizes[i].unc, sampleFwhmDeg: sizes[i].sample };
    if (p.twoThetaDeg === null || lambda === null || pattern.axis !== 'twoTheta') {
      const stat = p.dUncNm;
      return { ...base, dCorrectedNm: p.dNm, budget: { statisticalNm: stat, methodNm: 0, calibrationNm: 0, combinedNm: stat, zeroShiftDeg: null, statement: 'fit only (q data: no angle to correct)' } };
    }
    const th = (p.twoThetaDeg - (z ?? 0)) * (Math.PI / 360);
    const d = lambda / (2 * Math.sin(th));
    const perDeg = (d / Math.tan(th)) * (Math.PI / 360); // |∂d/∂(2θ)| per degree
    const stat = perDeg * (p.twoThetaUncDeg ?? 0);
    const methodDeg = Math.hypot(0.002, z === null ? zAllow / Math.sqrt(3) : 0);
    const methodNm = perDeg * methodDeg;
    const calibrationNm = Math.hypot(d * relL, perDeg * (z !== null ? zU : 0));
    const combinedNm = Math.hypot(stat, methodNm, calibrationNm);
    return { ...base, dCorrectedNm: d, budget: { statisticalNm: stat, methodNm, calibrationNm, combinedNm, zeroShiftDeg: z, statement: `fit; profile shape 0.002°; ${zWords}; wavelength relative ${relL.toPrecision(2)}` } };
  });
  // the size of each phase from its own lines that overlap nothing: a line with another reflection of
  // an indexed phase, or another fitted line, within its FWHM has a breadth that is not one reflection's
  // (two lines fitted as one, or two fits trading width)
  const overlapped = overlappedLines(peaks, indexing, lambda, z ?? 0);
  // each resolved line of a phase measured with the sample profile shape the phase's lines share
  // (one Lorentzian fraction per phase; Balzar & Ledbetter 1993): a weak line's own η trades with its
  // FWHM, and left to itself it takes the size along
  if (profile && lambda !== null && pattern.axis === 'twoTheta' && (options.sharedShape ?? false)) {
    indexing.phases.forEach((ph, j) => {
      const shared = new Set(indexing.phases.flatMap((o, i) => (i === j ? [] : o.lines.map((l) => l.peak))));
      const own = [...new Set(ph.lines.map((l) => l.peak))].filter((i) => !shared.has(i) && !overlapped.has(i) && peaks[i].kind === 'peak' && peaks[i].crystalliteNm !== null && peaks[i].fwhmUncDeg !== null);
      if (own.length < 2) return;
      const shape = sharedSampleShape(own.map((i) => ({ twoThetaDeg: peaks[i].twoThetaDeg!, fwhmDeg: peaks[i].fwhmDeg!, fwhmUncDeg: peaks[i].fwhmUncDeg!, eta: peaks[i].eta, etaUnc: peaks[i].etaUnc, fwhmEtaCorrelation: peaks[i].fwhmEtaCorrelation })), profile);
      if (!shape) return;
      if (!shape.consistent) {
        warnings.add(`phase ${j + 1}: its lines do not share one profile shape (χ² ${shape.chi2.toFixed(1)} for ${shape.dof} degrees of freedom: strain or anisotropic crystallites); each line's size uses its own shape`);
        return;
      }
      own.forEach((i, n) => {
        const b = shape.breadths[n];
        if (!b) return;
        const r = scherrerSize(b.sampleFwhmDeg, peaks[i].twoThetaDeg!, lambda, { k });
        peaks[i] = { ...peaks[i], crystalliteNm: r.sizeNm, crystalliteUncNm: (r.sizeNm! * b.sampleFwhmUncDeg) / b.sampleFwhmDeg, sampleFwhmDeg: b.sampleFwhmDeg };
      });
      warnings.add(`phase ${j + 1}: its ${shape.breadths.filter(Boolean).length} resolved lines' sizes use the sample profile shape they share (η ${shape.eta.toFixed(2)} ± ${shape.etaUnc.toFixed(2)}), each line's breadth its own`);
    });
  }
  const phaseSizes = indexing.phases.map((ph, j) => {
    if (lambda === null || pattern.axis !== 'twoTheta') return null;
    const shared = new Set(indexing.phases.flatMap((o, i) => (i === j ? [] : o.lines.map((l) => l.peak))));
    const own = [...new Set(ph.lines.map((l) => l.peak))].filter((i) => !shared.has(i) && !overlapped.has(i));
    const pts = own.flatMap((i) => {
      const q = peaks[i];
      const b = pooled[i];
      if (q.kind !== 'peak' || q.crystalliteNm === null || q.twoThetaDeg === null || b === null) return [];
      return [{ twoThetaDeg: q.twoThetaDeg, ...b }];
    });
    const r = phaseCrystalliteSize(pts, lambda, { k, instrumentRemoved: profile !== null || typeof inst === 'function' || inst > 0 });
    if (r?.leftOutTwoThetaDeg != null) warnings.add(`phase ${j + 1}: the line at ${r.leftOutTwoThetaDeg.toFixed(3)}° is far broader or narrower than the phase's other lines (a blend or another phase?) and is left out of the phase's size`);
    if (r?.linesDisagree) warnings.add(`phase ${j + 1}: its lines' sizes disagree beyond their ± (χ²/ν = ${r.reducedChi2.toFixed(1)}): anisotropic crystallites or strain; the phase's ± is widened by √(χ²/ν), and the per-line sizes tell more`);
    return r;
  });
  // series: for q data as before; for 2θ data only those carrying a strong line and not contradicted by an indexed crystal
  const top = Math.max(0, ...peaks.map((p) => p.area));
  let series = indexSeries(peaks.filter((p) => p.kind === 'peak').map((p) => ({ dNm: p.dNm, dUncNm: p.dUncNm, intensity: p.intensity })));
  if (pattern.axis === 'twoTheta') {
    // a lamellar period must be that of a lamellar phase or the c (or c/3 for R) of a layered
    // crystal found; never offered beside a cubic crystal that explains its lines
    const agrees = (period: number) =>
      indexing.phases.length === 0 ||
      indexing.phases.some((ph) => !ph.kind.startsWith('cubic') && [1, 2, 3].some((n) => Math.abs(ph.cNm / n / period - 1) < 0.005));
    series = series.filter((s) => {
      const strong = s.members.some((m) => peaks.some((p) => Math.abs(p.dNm - m.dNm) < 1e-9 && p.area >= 0.1 * top));
      return strong && (s.kind !== 'lamellar' || agrees(s.cellNm));
    });
  }
  const notes = [...pattern.notes, ...fit.notes, ...warnings, ...indexing.notes];
  const std = options.internalStandard;
  const stdPhase = indexing.phases.find((p) => p.standard);
  if (std && stdPhase) notes.push(`internal standard ${std.name}${std.source ? ` (${std.source})` : ''}: its cell held, the zero shift fitted from its ${stdPhase.lines.length} lines; its ± contains the fit and the cell's uncertainty`);
  if (z !== null && Math.abs(z) > 2 * zU && Math.abs(z) > 0.005) notes.push(`zero shift ${z.toFixed(4)}° ± ${zU.toPrecision(2)}° found and removed from the d-spacings (dCorrectedNm)`);
  return {
    wavelengthNm: lambda,
    ka2Nm: pattern.ka2Nm,
    radiationLabel: pattern.radiation?.label ?? (lambda !== null ? `${lambda} nm` : 'none'),
    radiationSource: pattern.radiation?.source ?? pattern.wavelengthFrom,
    lpLabel: pattern.axis === 'twoTheta' ? describeLpGeometry(lpGeometry(options.lp ?? DEFAULT_LP_GEOMETRY)) : describeLpGeometry({ specimen: 'none', monochromatorTwoThetaDeg: null }),
    peaks,
    series,
    indexing,
    phaseSizes,
    sizeMethod: method,
    background: fit.background,
    model: fit.model,
    notes,
  };
}

/**
 * The instrument profile from a line-profile standard's pattern: its lines fitted (each alone
 * significant, none at a bound, no band) and the Caglioti and Lorentzian width functions fitted to them.
 * @param standard the standard's pattern (same instrument and radiation as the samples)
 * @param source a name for the report
 * @param options fit settings
 * @returns the instrument profile (plain JSON, to be stored)
 * @throws RangeError when the standard has no usable line
 * Reference: see fitInstrumentProfile.
 */
export function instrumentFromStandard(standard: Pattern, source = 'standard', options: FitOptions = {}): InstrumentProfile {
  if (standard.axis !== 'twoTheta' || standard.wavelengthNm === null) throw new RangeError(`${source}: an instrument profile needs a 2θ pattern with a wavelength`);
  const fit = fitPattern(standard, options);
  const peaks = fit.peaks.filter((p) => p.kind === 'peak' && p.twoThetaDeg !== null && p.fwhmDeg !== null && p.atBound.length === 0 && p.significance > 3 * fit.test.zCritical);
  if (peaks.length === 0) throw new RangeError(`${source}: no usable peak in the standard pattern`);
  return fitInstrumentProfile(peaks.map((p) => ({ twoThetaDeg: p.twoThetaDeg!, fwhmDeg: p.fwhmDeg!, eta: p.eta, fwhmUncDeg: p.fwhmUncDeg ?? undefined, etaUnc: p.etaUnc, fwhmEtaCorrelation: p.fwhmEtaCorrelation })), standard.wavelengthNm, source);
}

/**
 * The fitted lines whose FWHM holds another reflection of an indexed phase (beside the one the line
 * is indexed as) or another fitted line: their breadth is not one reflection's.
 * Reference: common practice in line-profile analysis (only resolved, single reflections carry a size;
 * Langford & Louër, Rep. Prog. Phys. 59, 131 (1996)).
 */
function overlappedLines(peaks: Array<{ kind: string; twoThetaDeg: number | null; fwhmDeg: number | null }>, indexing: IndexResult, lambda: number | null, zeroShiftDeg: number): Set<number> {
  const out = new Set<number>();
  const tts = peaks.map((p) => p.twoThetaDeg).filter((t): t is number => t !== null);
  if (lambda === null || tts.length === 0) return out;
  const ttMax = Math.min(179, Math.max(...tts) + 5);
  const dMin = lambda / (2 * Math.sin((ttMax * Math.PI) / 360));
  // every reflection of every indexed phase, by 2θ, with the peak it is indexed as (or -1)
  const calc: Array<{ tt: number; peak: number }> = [];
  for (const ph of indexing.phases) {
    let lines: ReturnType<typeof latticeLines> = [];
    try {
      lines = latticeLines({ kind: ph.kind, aNm: ph.aNm, cNm: ph.cNm }, dMin);
    } catch {
      continue;
    }
    for (const l of lines) {
      if (l.dNm < lambda / 2) continue;
      const mine = ph.lines.find((x) => Math.abs(x.dCalcNm / l.dNm - 1) < 1e-9);
      calc.push({ tt: dToTwoTheta(l.dNm, lambda) + zeroShiftDeg, peak: mine ? mine.peak : -1 });
    }
  }
  peaks.forEach((p, i) => {
    if (p.twoThetaDeg === null || p.fwhmDeg === null) return;
    const w = p.fwhmDeg;
    const near = (t: number) => Math.abs(t - p.twoThetaDeg!) < w;
    const ownCalc = calc.filter((c) => c.peak === i).length;
    const calcNear = calc.filter((c) => near(c.tt) && c.peak !== i).length;
    const peakNear = peaks.some((o, j) => j !== i && o.twoThetaDeg !== null && near(o.twoThetaDeg));
    if (calcNear > 0 || ownCalc > 1 || peakNear) out.add(i);
  });
  return out;
}
