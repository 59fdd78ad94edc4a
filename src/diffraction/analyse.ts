/**
 * One call from a pattern to peaks, crystallite sizes and series: what the command line and the
 * diffraction panel show.
 */
import type { Pattern } from './pattern';
import { fitPattern, type FitOptions, type FittedPeak } from './peaks';
import { instrumentFunction, scherrerSize, type BroadeningCorrection } from './scherrer';
import { indexSeries, type IndexedSeries } from './series';

/** Options of analysePattern. */
export interface AnalyseOptions extends FitOptions {
  /** Scherrer shape factor K (default 0.9). */
  k?: number;
  /** Instrumental FWHM in degrees 2θ, constant (default 0), or a function of 2θ (e.g. from a standard). */
  instrumentFwhmDeg?: number | ((twoThetaDeg: number) => number);
  /** Instrument correction rule (default 'gaussian'). */
  correction?: BroadeningCorrection;
}

/** A fitted peak with its crystallite size. */
export interface AnalysedPeak extends FittedPeak {
  /** Scherrer size in nm (null when the breadth does not exceed the instrument's or no wavelength). */
  crystalliteNm: number | null;
  crystalliteUncNm: number | null;
}

/** Result of analysePattern. */
export interface PatternAnalysis {
  wavelengthNm: number | null;
  ka2Nm: number | null;
  peaks: AnalysedPeak[];
  series: IndexedSeries[];
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
  let method = '';
  const warnings = new Set<string>();
  const peaks: AnalysedPeak[] = fit.peaks.map((p) => {
    if (p.fwhmUncInvNm > 0.5 * p.fwhmInvNm || p.atBound.includes('fwhm')) {
      const where = p.twoThetaDeg !== null ? `${p.twoThetaDeg.toFixed(3)}°` : `q ${p.qInvNm.toFixed(4)} nm⁻¹`;
      warnings.add(`peak at ${where}: FWHM too poorly determined for a size (${p.atBound.includes('fwhm') ? 'at its bound' : 'uncertainty above half its value'})`);
      return { ...p, crystalliteNm: null, crystalliteUncNm: null };
    }
    if (p.fwhmDeg !== null && p.twoThetaDeg !== null && (pattern.wavelengthNm ?? 0) > 0) {
      const r = scherrerSize(p.fwhmDeg, p.twoThetaDeg, pattern.wavelengthNm!, { k, instrumentFwhmDeg: instAt(p.twoThetaDeg), correction: options.correction, fwhmUncDeg: p.fwhmUncDeg ?? 0 });
      method = r.method.replace(/instrument [0-9.]+° removed/, typeof inst === 'function' ? 'instrument breadth from the standard removed' : `instrument ${inst}° removed`);
      for (const w of r.warnings) if (/above ~100 nm/.test(w)) warnings.add('some sizes exceed ~100 nm, where the Scherrer estimate loses meaning');
      else warnings.add('some peaks are not broader than the instrument: no size');
      return { ...p, crystalliteNm: r.sizeNm, crystalliteUncNm: r.sizeUncNm };
    }
    const size = (2 * Math.PI * k) / p.fwhmInvNm;
    method = `Scherrer in q, D = 2πK/Δq, K = ${k}; no instrument correction; strain ignored`;
    return { ...p, crystalliteNm: size, crystalliteUncNm: (size * p.fwhmUncInvNm) / p.fwhmInvNm };
  });
  const series = indexSeries(peaks.map((p) => ({ dNm: p.dNm, dUncNm: p.dUncNm, intensity: p.intensity })));
  return {
    wavelengthNm: pattern.wavelengthNm,
    ka2Nm: pattern.ka2Nm,
    peaks,
    series,
    sizeMethod: method,
    background: fit.background,
    model: fit.model,
    notes: [...pattern.notes, ...fit.notes, ...warnings],
  };
}

/** Instrumental FWHM as a function of 2θ from a standard's pattern (Caglioti fit of its peaks). */
export function instrumentFromStandard(standard: Pattern, options: FitOptions = {}): (twoThetaDeg: number) => number {
  const fit = fitPattern(standard, options);
  const peaks = fit.peaks.filter((p) => p.twoThetaDeg !== null && p.fwhmDeg !== null && p.atBound.length === 0);
  if (peaks.length === 0) throw new RangeError('no usable peak in the standard pattern');
  return instrumentFunction(peaks.map((p) => ({ twoThetaDeg: p.twoThetaDeg!, fwhmDeg: p.fwhmDeg! }))).fwhmAt;
}
