/**
 * The crystallite size of one phase from all of its lines.
 */
import { pm } from './format';
import { williamsonHall } from './instrument';

/** One line of a phase: its sample breadth (instrument removed) with its standard uncertainty. */
export interface PhaseSizeLine {
  /** Line position, degrees 2θ. */
  twoThetaDeg: number;
  /** Sample FWHM after the instrument correction, degrees 2θ (for averaging: see sampleBreadth's signedGaussian). */
  sampleFwhmDeg: number;
  /** Its standard uncertainty, degrees 2θ (weighs the line). */
  sampleFwhmUncDeg: number;
}

/** Options of phaseCrystalliteSize. */
export interface PhaseSizeOptions {
  /** Scherrer shape factor K (default 0.9). */
  k?: number;
  /** Δχ² a strain term must gain to be kept (default 10.83: a 0.1 % false-alarm rate for one added parameter, χ² with one degree of freedom); when the Williamson–Hall line's χ²/ν exceeds 1 the gain is divided by it first (the lines' own scatter). */
  strainDeltaChi2?: number;
  /** A line whose deleted residual (its distance from the others' mean, in its own and their standard uncertainty) exceeds this is left out, once (default 4). */
  outlierZ?: number;
  /** Whether the lines' breadths had an instrument profile or breadth removed (default false: then the size is a lower bound and a strain term takes the instrument's growth with angle, and both say so). */
  instrumentRemoved?: boolean;
}

/** Result of phaseCrystalliteSize. */
export interface PhaseSize {
  /** Volume-weighted column length of the phase, nm, and its standard uncertainty (k = 1). */
  sizeNm: number;
  sizeUncNm: number;
  /** 'mean': one size for every line (strain held at zero: the weighted mean of β cosθ); 'williamson-hall': a size and a strain term, kept because the strain term gained more than strainDeltaChi2. */
  model: 'mean' | 'williamson-hall';
  /** Whether a strain term could be tested (three lines or more spanning 0.1 in sin θ). */
  strainTested: boolean;
  /** Microstrain and its standard uncertainty with the Williamson–Hall model; null with 'mean'. */
  strain: number | null;
  strainUnc: number | null;
  /** Lines used, and the 2θ of a line left out as an outlier (null if none). */
  lines: number;
  leftOutTwoThetaDeg: number | null;
  /** χ² per degree of freedom of the chosen model; above 1 the ± is scaled by its square root (Birge ratio). */
  reducedChi2: number;
  /** True when the lines disagree beyond their ± at the 1 % level even after that: anisotropic crystallites, strain or a blend. */
  linesDisagree: boolean;
  /** Whether the instrument's breadth was removed from the lines (false: the size is a lower bound). */
  instrumentRemoved: boolean;
  /** What the ± contains, in words. */
  statement: string;
}

/** Upper 1 % point of χ²/ν for ν degrees of freedom (Wilson–Hilferty approximation; Wilson & Hilferty 1931). */
function chi2PerDofLimit(nu: number): number {
  const z = 2.326; // one-sided 1 %
  const a = 2 / (9 * nu);
  return (1 - a + z * Math.sqrt(a)) ** 3;
}

interface MeanFit {
  mean: number;
  varMean: number;
  chi2: number;
}

function weightedMean(ys: number[], us: number[]): MeanFit {
  let s = 0;
  let sy = 0;
  ys.forEach((y, i) => {
    const w = 1 / (us[i] * us[i]);
    s += w;
    sy += w * y;
  });
  const mean = sy / s;
  let chi2 = 0;
  ys.forEach((y, i) => (chi2 += ((y - mean) / us[i]) ** 2));
  return { mean, varMean: 1 / s, chi2 };
}

/**
 * The crystallite size of a phase from all of its lines: each line's sample breadth β (radians of
 * 2θ, instrument removed) gives y = β cosθ = Kλ/D; the phase's size is Kλ over the weighted mean of
 * y (Scherrer's relation pooled over the lines), or over the intercept of the Williamson–Hall line
 * when a strain term lowers χ² by more than strainDeltaChi2, the gain judged on the lines' own
 * scatter when they scatter beyond their ± (divided by the Williamson–Hall line's χ²/ν when that
 * exceeds 1: the Birge ratio that scales the size's ± too, and the F test for an added term).
 *
 * @param lines the phase's lines with their sample breadths and uncertainties (at least 2)
 * @param wavelengthNm the wavelength the lines were measured with
 * @param options shape factor, the strain test, the outlier limit
 * @returns the phase's size with its standard uncertainty, or null with fewer than 2 usable lines
 * Notes: a phase's lines share its crystallites, so pooling them divides the counting noise of
 * each line's breadth (the largest part of a weak line's size error) by about √n. Each line weighs
 * by its breadth's uncertainty, which carries its FWHM, η and their correlation through the
 * instrument correction; the breadths to pass are those kept unbiased for averaging (a negative
 * squared Gaussian part kept, sampleBreadth's signedGaussian). One line far from the others (deleted residual above outlierZ, with
 * four lines or more) is left out and named: a blend of two lines or a line of another phase. When
 * the lines still disagree (χ²/ν above its 1 % point), the ± is scaled by √(χ²/ν) and
 * linesDisagree is set: the crystallites may be anisotropic (plates: the 00l lines narrower or
 * broader than the others) and the per-line sizes say more than the mean.
 * Reference: Scherrer, Gött. Nachr. 1918, 98; Williamson & Hall, Acta Metall. 1, 22 (1953);
 * Birge, Phys. Rev. 40, 207 (1932) for the scaled uncertainty; Bevington & Robinson, Data Reduction
 * and Error Analysis for the Physical Sciences, 3rd ed. (2003), ch. 11, the F test for an added term
 * (from memory). Strain-free lines scattering 1.7 times beyond their stated ± took a strain term in
 * 1.9 % of seeded phases with χ² on the stated ±, 0.6 % so (tests/diffraction/phase-size.test.ts).
 */
export function phaseCrystalliteSize(lines: PhaseSizeLine[], wavelengthNm: number, options: PhaseSizeOptions = {}): PhaseSize | null {
  const k = options.k ?? 0.9;
  const dChi = options.strainDeltaChi2 ?? 10.83;
  const zOut = options.outlierZ ?? 4;
  const instrumentRemoved = options.instrumentRemoved ?? false;
  if (!(wavelengthNm > 0 && Number.isFinite(wavelengthNm))) throw new RangeError(`wavelengthNm must be positive and finite, got ${wavelengthNm}`);
  if (!(k > 0 && k < 2)) throw new RangeError(`k must be in (0, 2), got ${k}`);
  if (!(dChi >= 0)) throw new RangeError(`strainDeltaChi2 must be non-negative, got ${dChi}`);
  if (!(zOut > 0)) throw new RangeError(`outlierZ must be positive, got ${zOut}`);
  let pts = lines.filter((l) => l.sampleFwhmDeg > 0 && l.sampleFwhmUncDeg > 0 && Number.isFinite(l.sampleFwhmUncDeg) && l.twoThetaDeg > 0 && l.twoThetaDeg < 180);
  if (pts.length < 2) return null;
  const yOf = (l: PhaseSizeLine) => ((l.sampleFwhmDeg * Math.PI) / 180) * Math.cos((l.twoThetaDeg * Math.PI) / 360);
  const uOf = (l: PhaseSizeLine) => (yOf(l) * l.sampleFwhmUncDeg) / l.sampleFwhmDeg;
  // one outlier at most: the line farthest from the mean of the others
  let leftOut: number | null = null;
  if (pts.length >= 4) {
    let worst = -1;
    let worstZ = 0;
    pts.forEach((l, i) => {
      const others = pts.filter((_, j) => j !== i);
      const m = weightedMean(others.map(yOf), others.map(uOf));
      const z = Math.abs(yOf(l) - m.mean) / Math.sqrt(uOf(l) ** 2 + m.varMean);
      if (z > worstZ) {
        worstZ = z;
        worst = i;
      }
    });
    if (worstZ > zOut) {
      leftOut = pts[worst].twoThetaDeg;
      pts = pts.filter((_, j) => j !== worst);
    }
  }
  const ys = pts.map(yOf);
  const us = pts.map(uOf);
  const m = weightedMean(ys, us);
  let model: PhaseSize['model'] = 'mean';
  let intercept = m.mean;
  let varIntercept = m.varMean;
  let chi2 = m.chi2;
  let dof = pts.length - 1;
  let strain: number | null = null;
  let strainVar: number | null = null;
  let strainTested = false;
  if (pts.length >= 3) {
    const wh = williamsonHall(pts, wavelengthNm, k);
    strainTested = wh !== null;
    // the gain in χ² judged on the lines' own scatter when they scatter beyond their ± (the Birge
    // ratio of the larger model, as the size's ± is scaled): the F test for an added term
    if (wh && wh.strain > 0 && (m.chi2 - wh.reducedChi2 * (pts.length - 2)) / Math.max(1, wh.reducedChi2) > dChi) {
      model = 'williamson-hall';
      chi2 = wh.reducedChi2 * (pts.length - 2);
      dof = pts.length - 2;
      intercept = (k * wavelengthNm) / wh.sizeNm;
      // williamsonHall scales by its χ²/ν already; undo that here, scaled once below
      const s = Math.sqrt(Math.max(1, wh.reducedChi2));
      varIntercept = ((wh.sizeUncNm / s / wh.sizeNm) * intercept) ** 2;
      strain = wh.strain;
      strainVar = (wh.strainUnc / s) ** 2;
    }
  }
  if (!(intercept > 0)) return null;
  const red = dof > 0 ? chi2 / dof : 0;
  const disagree = dof > 0 && red > chi2PerDofLimit(dof);
  const scale = Math.max(1, red);
  const size = (k * wavelengthNm) / intercept;
  const sizeUnc = (size * Math.sqrt(varIntercept * scale)) / intercept;
  const parts = [instrumentRemoved ? `the ${pts.length} lines' breadth fits (FWHM, η and their correlation through the instrument correction)` : `the ${pts.length} lines' breadth fits (FWHM, η and their correlation); no instrument correction`];
  if (scale > 1) parts.push(`scaled by √(χ²/ν) = ${Math.sqrt(red).toFixed(2)} for their scatter`);
  parts.push(model === 'williamson-hall' ? 'with a strain term (Williamson–Hall)' : 'strain held at zero');
  parts.push(`K = ${k}`);
  return {
    sizeNm: size,
    sizeUncNm: sizeUnc,
    model,
    strainTested,
    strain,
    strainUnc: strainVar === null ? null : Math.sqrt(strainVar * scale),
    lines: pts.length,
    leftOutTwoThetaDeg: leftOut,
    reducedChi2: red,
    linesDisagree: disagree,
    instrumentRemoved,
    statement: parts.join('; '),
  };
}

/**
 * One line of text for a phase's size, for reports and the panel.
 * @param ps the phase's size
 * @param coverageK the coverage factor of the ± shown (e.g. 2)
 * @returns e.g. "crystallite size 24.6 ± 1.2 nm (± 2u) from 7 lines, strain held at zero (a strain term was not significant)"
 */
export function describePhaseSize(ps: PhaseSize, coverageK: number): string {
  if (!(coverageK > 0)) throw new RangeError(`coverageK must be positive, got ${coverageK}`);
  const size = `crystallite size ${pm(ps.sizeNm, coverageK * ps.sizeUncNm)} nm (± ${coverageK}u) from ${ps.lines} lines`;
  const model = ps.model === 'williamson-hall'
    ? `Williamson–Hall, microstrain ${pm(ps.strain!, coverageK * ps.strainUnc!)}`
    : ps.strainTested ? 'strain held at zero (a strain term was not significant at 0.1 %)' : 'strain held at zero (too few lines, or too short a range, to test a strain term)';
  const extra = [
    ps.leftOutTwoThetaDeg !== null ? `the line at ${ps.leftOutTwoThetaDeg.toFixed(3)}° left out` : '',
    ps.instrumentRemoved ? '' : 'no instrument correction: a lower bound (give an instrument profile)',
    ps.linesDisagree ? `lines disagree (χ²/ν ${ps.reducedChi2.toFixed(1)}): anisotropic or strained, see each line` : '',
  ].filter(Boolean);
  return `${size}, ${model}${extra.length ? `; ${extra.join('; ')}` : ''}`;
}
