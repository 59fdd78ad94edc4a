/**
 * Crystallite size from peak breadth (Scherrer) and the instrument's own breadth.
 */

/** How the instrumental breadth is removed from the observed one. */
export type BroadeningCorrection = 'gaussian' | 'lorentzian';

/** Options of scherrerSize. */
export interface ScherrerOptions {
  /** Shape factor K (default 0.9, "shape unknown"; 0.89 spheres, 0.94 cubes, for FWHM). */
  k?: number;
  /** Instrumental FWHM in degrees 2θ at this angle (default 0: no correction). */
  instrumentFwhmDeg?: number;
  /** Correction rule (default 'gaussian'): β² = β_obs² − β_inst² or β = β_obs − β_inst. */
  correction?: BroadeningCorrection;
  /** Standard uncertainty of the observed FWHM in degrees, propagated to the size (default 0). */
  fwhmUncDeg?: number;
}

/** Result of scherrerSize. */
export interface ScherrerResult {
  /** Mean crystallite size (column length normal to the planes) in nm, or null when not resolvable. */
  sizeNm: number | null;
  /** Standard uncertainty of sizeNm from the FWHM's uncertainty (null with sizeNm). */
  sizeUncNm: number | null;
  /** Sample breadth after the instrument correction, in degrees 2θ. */
  sampleFwhmDeg: number;
  /** The method, stated for the report. */
  method: string;
  /** Warnings (breadth not above the instrument's, size above ~100 nm...). */
  warnings: string[];
}

/**
 * Scherrer equation D = K λ / (β cos θ), β the sample FWHM in radians of 2θ after removing the
 * instrumental breadth (Gaussian: quadratic subtraction; Lorentzian: linear subtraction).
 *
 * @param fwhmDeg observed FWHM in degrees 2θ
 * @param twoThetaDeg peak position in degrees 2θ
 * @param wavelengthNm wavelength in nm
 * @param options shape factor, instrumental breadth and rule, FWHM uncertainty
 * @returns size in nm with uncertainty, the method and warnings
 *
 * Notes: a lower bound on the size when strain also broadens (strain is ignored; use a
 * Williamson–Hall analysis for that); meaningful only below ~100–200 nm, where the sample breadth
 * still clearly exceeds the instrument's. K depends on crystallite shape and on the breadth
 * definition (FWHM here), so it is an input.
 * Reference: Scherrer, Nachr. Ges. Wiss. Göttingen 26, 98 (1918); Langford & Wilson, J. Appl. Cryst. 11, 102 (1978).
 */
export function scherrerSize(fwhmDeg: number, twoThetaDeg: number, wavelengthNm: number, options: ScherrerOptions = {}): ScherrerResult {
  const k = options.k ?? 0.9;
  const inst = options.instrumentFwhmDeg ?? 0;
  const rule = options.correction ?? 'gaussian';
  if (!(fwhmDeg > 0)) throw new RangeError(`fwhmDeg must be positive, got ${fwhmDeg}`);
  if (!(twoThetaDeg > 0 && twoThetaDeg < 180)) throw new RangeError(`twoThetaDeg must be in (0, 180), got ${twoThetaDeg}`);
  if (!(wavelengthNm > 0)) throw new RangeError(`wavelengthNm must be positive, got ${wavelengthNm}`);
  if (!(k > 0 && k < 2)) throw new RangeError(`shape factor k must be in (0, 2), got ${k}`);
  if (!(inst >= 0)) throw new RangeError(`instrumentFwhmDeg must be ≥ 0, got ${inst}`);
  if (rule !== 'gaussian' && rule !== 'lorentzian') throw new RangeError(`correction must be 'gaussian' or 'lorentzian', got ${rule}`);
  const method = `Scherrer, K = ${k}, FWHM${inst > 0 ? `, instrument ${inst}° removed (${rule === 'gaussian' ? 'Gaussian, quadratic' : 'Lorentzian, linear'})` : ', no instrument correction'}; strain ignored`;
  const warnings: string[] = [];
  const sample = rule === 'gaussian' ? Math.sqrt(Math.max(0, fwhmDeg * fwhmDeg - inst * inst)) : fwhmDeg - inst;
  if (!(sample > 0) || sample < 0.1 * fwhmDeg) {
    warnings.push(`observed breadth ${fwhmDeg.toFixed(4)}° is not clearly above the instrument's ${inst.toFixed(4)}°: size not resolvable`);
    return { sizeNm: null, sizeUncNm: null, sampleFwhmDeg: Math.max(0, sample), method, warnings };
  }
  const cosT = Math.cos((twoThetaDeg * Math.PI) / 360);
  const betaRad = (sample * Math.PI) / 180;
  const size = (k * wavelengthNm) / (betaRad * cosT);
  const dSampleDObs = rule === 'gaussian' ? fwhmDeg / sample : 1;
  const sizeUnc = (size * (options.fwhmUncDeg ?? 0) * dSampleDObs) / sample;
  if (size > 100) warnings.push(`size ${size.toFixed(0)} nm is above ~100 nm, where the Scherrer estimate loses meaning`);
  return { sizeNm: size, sizeUncNm: sizeUnc, sampleFwhmDeg: sample, method, warnings };
}

/**
 * Instrumental FWHM as a function of angle from a standard's fitted peaks, by the Caglioti form
 * FWHM² = U tan²θ + V tanθ + W (least squares); with fewer than 3 peaks, their mean FWHM.
 *
 * @param peaks fitted peaks of a line-broadening standard: 2θ and FWHM in degrees
 * @returns a function giving the instrumental FWHM in degrees at 2θ, and U, V, W
 * Reference: Caglioti, Paoletti & Ricci, Nucl. Instrum. 3, 223 (1958).
 */
export function instrumentFunction(peaks: Array<{ twoThetaDeg: number; fwhmDeg: number }>): {
  fwhmAt: (twoThetaDeg: number) => number;
  u: number;
  v: number;
  w: number;
} {
  if (peaks.length === 0) throw new RangeError('instrumentFunction needs at least one standard peak');
  for (const p of peaks) if (!(p.fwhmDeg > 0) || !(p.twoThetaDeg > 0 && p.twoThetaDeg < 180)) throw new RangeError(`bad standard peak ${JSON.stringify(p)}`);
  if (peaks.length < 3) {
    const mean = peaks.reduce((s, p) => s + p.fwhmDeg, 0) / peaks.length;
    return { fwhmAt: () => mean, u: 0, v: 0, w: mean * mean };
  }
  const a = [0, 0, 0, 0, 0, 0, 0, 0, 0];
  const b = [0, 0, 0];
  for (const p of peaks) {
    const t = Math.tan((p.twoThetaDeg * Math.PI) / 360);
    const row = [t * t, t, 1];
    for (let i = 0; i < 3; i++) {
      b[i] += row[i] * p.fwhmDeg ** 2;
      for (let j = 0; j < 3; j++) a[i * 3 + j] += row[i] * row[j];
    }
  }
  // Cramer's rule for the 3×3 normal equations
  const det = (m: number[]) => m[0] * (m[4] * m[8] - m[5] * m[7]) - m[1] * (m[3] * m[8] - m[5] * m[6]) + m[2] * (m[3] * m[7] - m[4] * m[6]);
  const d0 = det(a);
  if (Math.abs(d0) < 1e-30) {
    const mean = peaks.reduce((s, p) => s + p.fwhmDeg, 0) / peaks.length;
    return { fwhmAt: () => mean, u: 0, v: 0, w: mean * mean };
  }
  const col = (i: number) => a.map((v, idx) => (idx % 3 === i ? b[Math.floor(idx / 3)] : v));
  const [u, v, w] = [0, 1, 2].map((i) => det(col(i)) / d0);
  const fwhmAt = (tt: number) => {
    const t = Math.tan((tt * Math.PI) / 360);
    return Math.sqrt(Math.max(0, u * t * t + v * t + w));
  };
  return { fwhmAt, u, v, w };
}
