/**
 * The plots of the Periods tools as data (PlotData): the line profile with its fringe extrema and
 * the radial average of a region's power spectrum with its rings. The app's plot element, the
 * exported figures and the report all draw these same plots.
 */
import type { Calibration } from '../image/grey-image';
import { DEFAULT_COVERAGE_FACTOR, nmPerPxAlong } from '../measure/measurement';
import { ringPeriodicity } from '../measure/spectrum';
import { periodBudgetLabel } from './budget-labels';
import type { ProfileView, SpectrumView } from '../measure/session';
import type { PlotData, PlotMark } from './plot';

/**
 * The line profile as a plot: width-averaged grey value against distance along the line (nm when
 * calibrated, px otherwise), the ± standard-error band, and the fringe extrema the real-space
 * estimate used (maxima and minima told apart by the local mean over one period).
 *
 * @param p the profile as the worker returns it
 * @param calibration the pixel size in force, or null
 * @param widthPx the averaging width of the line, px (for the description)
 * @returns the plot
 * @throws RangeError naming a profile with fewer than 2 samples
 */
export function profilePlot(p: Pick<ProfileView, 'distancePx' | 'mean' | 'standardError' | 'lengthPx' | 'angleDeg' | 'realSpace'>, calibration: Calibration | null, widthPx = 1): PlotData {
  const n = p.mean.length;
  if (!(n >= 2) || p.distancePx.length !== n) throw new RangeError(`a profile plot needs at least 2 samples with one distance each, got ${n} values and ${p.distancePx.length} distances`);
  const step = calibration ? nmPerPxAlong(calibration, 'line', p.angleDeg) : 1;
  const x = Array.from(p.distancePx, (d) => d * step);
  const se = p.standardError;
  const hasBand = se.length === n && Number.isFinite(se[0]);
  const marks: PlotMark[] = [];
  const rs = p.realSpace;
  if (rs) {
    const P = rs.periodPx;
    const dx = n > 1 ? x[1] - x[0] : 1;
    for (const xe of rs.extremaPx) {
      const i = Math.max(0, Math.min(n - 2, Math.floor(xe)));
      const f = xe - i;
      const y = p.mean[i] * (1 - f) + p.mean[i + 1] * f;
      let s = 0;
      let c = 0;
      for (let j = Math.max(0, Math.round(xe - P / 2)); j <= Math.min(n - 1, Math.round(xe + P / 2)); j++) { s += p.mean[j]; c++; }
      marks.push({ x: xe * dx, y, kind: y > s / c ? 'max' : 'min' });
    }
  }
  const unit = calibration ? 'nm' : 'px';
  return {
    id: 'line-profile',
    title: 'Line profile',
    xLabel: `distance along the line (${unit})`,
    yLabel: 'mean grey value',
    x,
    traces: [{ label: 'mean grey value', y: p.mean, style: 'data' }],
    band: hasBand ? { lo: Array.from(p.mean, (m, i) => m - se[i]), hi: Array.from(p.mean, (m, i) => m + se[i]), label: '± standard error of the mean' } : null,
    marks,
    description: `Line profile, ${p.lengthPx.toFixed(0)} px long at ${p.angleDeg.toFixed(1)}°, averaged over ${Math.max(1, Math.round(widthPx))} px${hasBand ? ', band: ± standard error of the mean' : ''}; ${rs ? `${rs.extremaPx.length} fringe extrema marked (filled: maxima, open: minima)` : 'no fringe extrema found'}.`,
  };
}

/**
 * The radial average of a region's power spectrum as a plot: log₁₀ mean power against spatial
 * frequency (nm⁻¹ when calibrated, with the mean scale of the two pixel axes, as for rings), the
 * significant rings as labelled rules. The two lowest rings (zero frequency) are left out.
 *
 * @param s the spectrum as the worker returns it
 * @param calibration the pixel size in force, or null
 * @param maxFrequencyPerPx the highest frequency shown, cycles/px (default: Nyquist, 0.5); widened to show the strongest ring
 * @param k coverage factor of the ± in the rings' labels (default 2)
 * @returns the plot; each ring's rule is labelled "d 1.25 ± 0.03 nm (k = 2)" (periodBudgetLabel:
 *   the ring's statistical part and, in nm, the calibration's), and the description lists them
 * @throws RangeError naming a maximum frequency that is not positive, or a bad k
 */
export function radialPlot(s: Pick<SpectrumView, 'radialFrequencyPerPx' | 'radialPower' | 'rings'>, calibration: Calibration | null, maxFrequencyPerPx = 0.5, k = DEFAULT_COVERAGE_FACTOR): PlotData {
  if (!(maxFrequencyPerPx > 0)) throw new RangeError(`the highest frequency shown must be positive, got ${maxFrequencyPerPx}`);
  const perPx = calibration ? 1 / nmPerPxAlong(calibration, 'ring', 0) : 1;
  const rings = s.rings.slice(0, 4);
  const fMax = Math.min(0.5, Math.max(maxFrequencyPerPx, 1.2 * (rings[0]?.frequencyPerPx ?? 0)));
  const x: number[] = [];
  const y: number[] = [];
  for (let i = 2; i < s.radialFrequencyPerPx.length; i++) {
    const f = s.radialFrequencyPerPx[i];
    if (f > fMax) break;
    x.push(f * perPx);
    y.push(s.radialPower[i] > 0 ? Math.log10(s.radialPower[i]) : NaN);
  }
  const unit = calibration ? 'nm⁻¹' : 'px⁻¹';
  const d = (r: (typeof rings)[number]) => periodBudgetLabel(ringPeriodicity(r), calibration, k);
  return {
    id: 'radial-average',
    title: 'Radial average of the power spectrum',
    xLabel: `spatial frequency (${unit})`,
    yLabel: 'log₁₀ mean power',
    x,
    traces: [{ label: 'log₁₀ mean power', y, style: 'data' }],
    rules: rings.map((r) => ({ x: r.frequencyPerPx * perPx, label: d(r) })),
    description: `Radial average of the power spectrum of the region; ${rings.length ? `rings at ${rings.map(d).join(', ')}` : 'no significant ring'}.`,
  };
}
