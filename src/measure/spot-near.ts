/**
 * A spectrum spot picked by the user: the brightest bin near a clicked frequency, refined below
 * one bin the same way the automatic search refines its spots.
 */
import { logParabolaOffset, magnitudeRatioOffset } from './interpolate';
import type { Periodicity } from './measurement';
import { frequencyCrbStd } from './period-profile';
import { frequencyAngleDeg, radialBackground, type PowerSpectrum, type RadialBackground, type Spot } from './spectrum';
import { windowVarianceFactor } from './window';

/** Options of {@link spotNear}. */
export interface SpotNearOptions {
  /** Chebyshev search radius around the clicked bin, in bins (integer ≥ 0, default 3). */
  radiusBins?: number;
  /** The spectrum's radial background when already computed (a session reuses it from click to click); default computed here. */
  background?: RadialBackground;
}

/**
 * The spot nearest a clicked frequency.
 *
 * Parameters: spectrum; fx, fy, the clicked frequency in cycles/px (fx along x, fy along the row
 * index; |f| ≤ 0.5); options (search radius).
 * Returns: a Spot with refined frequency, period, angle, uncertainties and normalised power, or
 * null when the click lies on the DC bin or every bin nearby is at or below the background.
 * Notes: the brightest bin within the radius is taken (the DC bin excluded); its offset below one
 * bin comes from the background-subtracted magnitudes of its neighbours along u and v (Grandke's
 * ratio for Hann and rectangular windows, Gaussian log-parabola for Tukey). The SNR is the spot's
 * energy over the radial background in a 5 × 5 neighbourhood, and the uncertainty the 2D
 * Cramér–Rao bound times the window's variance factor, as for automatically found spots. No
 * significance test is made: the user asked for this spot, and its normalised power says how
 * strong it is.
 * Reference: Grandke, IEEE Trans. Instrum. Meas. 32(2), 350 (1983); bound: Rife & Boorstyn, IEEE Trans. Inf. Theory 20(5), 591 (1974).
 */
export function spotNear(spectrum: PowerSpectrum, fx: number, fy: number, options: SpotNearOptions = {}): Spot | null {
  if (!Number.isFinite(fx) || Math.abs(fx) > 0.5) throw new RangeError(`fx must be within ±0.5 cycles/px, got ${fx}`);
  if (!Number.isFinite(fy) || Math.abs(fy) > 0.5) throw new RangeError(`fy must be within ±0.5 cycles/px, got ${fy}`);
  const radius = options.radiusBins ?? 3;
  if (!(Number.isInteger(radius) && radius >= 0)) throw new RangeError(`radiusBins must be a non-negative integer, got ${radius}`);
  const { width: w, height: h, power, window } = spectrum;
  const cu = Math.round(fx * w);
  const cv = Math.round(fy * h);
  let best = -1;
  let bu = 0;
  let bv = 0;
  for (let dv = -radius; dv <= radius; dv++) {
    for (let du = -radius; du <= radius; du++) {
      const su = cu + du;
      const sv = cv + dv;
      if (su === 0 && sv === 0) continue;
      if (Math.abs(su) > w / 2 || Math.abs(sv) > h / 2) continue;
      const p = power[(((sv % h) + h) % h) * w + (((su % w) + w) % w)];
      if (p > best) {
        best = p;
        bu = su;
        bv = sv;
      }
    }
  }
  if (best < 0) return null;
  const bg = (options.background ?? radialBackground(spectrum)).background;
  const nMax = Math.max(w, h);
  const ring = Math.round(Math.hypot(bu / w, bv / h) * nMax);
  const b = bg[Math.min(ring, bg.length - 1)];
  if (!(b > 0) || !(best > b)) return null;
  const at = (du: number, dv: number) => power[((((bv + dv) % h) + h) % h) * w + ((((bu + du) % w) + w) % w)];
  const amp = (du: number, dv: number) => Math.sqrt(Math.max(at(du, dv) - b, 1e-30));
  let du: number;
  let dv: number;
  if (window === 'tukey') {
    du = logParabolaOffset(Math.max(at(-1, 0) - b, 1e-30), at(0, 0) - b, Math.max(at(1, 0) - b, 1e-30));
    dv = logParabolaOffset(Math.max(at(0, -1) - b, 1e-30), at(0, 0) - b, Math.max(at(0, 1) - b, 1e-30));
  } else {
    du = magnitudeRatioOffset(amp(-1, 0), amp(0, 0), amp(1, 0), window);
    dv = magnitudeRatioOffset(amp(0, -1), amp(0, 0), amp(0, 1), window);
  }
  du = Math.max(-0.5, Math.min(0.5, du));
  dv = Math.max(-0.5, Math.min(0.5, dv));
  let energy = 0;
  for (let j = -2; j <= 2; j++) for (let i = -2; i <= 2; i++) energy += at(i, j) - b;
  const snr = (Math.max(energy, 0) / b / (w * h)) * 2;
  const sfx = (bu + du) / w;
  const sfy = (bv + dv) / h;
  const f = Math.hypot(sfx, sfy);
  const sx = frequencyCrbStd(snr, w, h) * Math.sqrt(windowVarianceFactor(spectrum.windowX, spectrum.windowY));
  const sy = frequencyCrbStd(snr, h, w) * Math.sqrt(windowVarianceFactor(spectrum.windowY, spectrum.windowX));
  const sRad = Math.sqrt((sfx * sfx * sx * sx + sfy * sfy * sy * sy) / (f * f));
  const sTan = Math.sqrt((sfy * sfy * sx * sx + sfx * sfx * sy * sy) / (f * f));
  return {
    fx: sfx,
    fy: sfy,
    periodPx: 1 / f,
    angleDeg: frequencyAngleDeg(sfx, sfy),
    geometry: 'normal',
    u: { statisticalPx: sRad / (f * f), localVariationPx: 0, methodPx: 0 },
    uAngleDeg: ((sTan / f) * 180) / Math.PI,
    strength: best / b,
    flags: [],
    normalisedPower: best / b,
    snr,
    peakPower: best,
  };
}

/**
 * A spot as the record's Periodicity: the same numbers without the frequency vector and SNR.
 *
 * Parameters: spot.
 * Returns: the Periodicity (px, with its uncertainty parts); nm follow late through expressPeriod.
 */
export function spotPeriodicity(spot: Spot): Periodicity {
  return {
    periodPx: spot.periodPx,
    angleDeg: spot.angleDeg,
    geometry: 'normal',
    u: { ...spot.u },
    uAngleDeg: spot.uAngleDeg,
    strength: spot.strength,
    flags: [...spot.flags],
  };
}
