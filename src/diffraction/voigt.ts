/**
 * A pseudo-Voigt profile as a Voigt: its Gaussian and Lorentzian widths, and back. Breadths of
 * convolved profiles add this way: Lorentzian widths linearly, Gaussian widths in quadrature,
 * which is how the instrument's own breadth is removed from a peak's.
 */

/**
 * FWHM and mixing parameter η of the pseudo-Voigt that approximates a Voigt of Gaussian FWHM
 * gammaG and Lorentzian FWHM gammaL.
 *
 * @param gammaG Gaussian FWHM (≥ 0, any unit)
 * @param gammaL Lorentzian FWHM (≥ 0, same unit)
 * @returns the total FWHM and η (0 Gaussian … 1 Lorentzian)
 * Reference: Thompson, Cox & Hastings, J. Appl. Cryst. 20, 79 (1987), eqs. 3–4.
 */
export function voigtToPseudoVoigt(gammaG: number, gammaL: number): { fwhm: number; eta: number } {
  if (!(gammaG >= 0) || !(gammaL >= 0) || !Number.isFinite(gammaG + gammaL)) throw new RangeError(`widths must be finite and ≥ 0, got gammaG ${gammaG}, gammaL ${gammaL}`);
  if (gammaG === 0 && gammaL === 0) throw new RangeError('a profile needs a width: gammaG and gammaL are both 0');
  const g = gammaG;
  const l = gammaL;
  const fwhm = (g ** 5 + 2.69269 * g ** 4 * l + 2.42843 * g ** 3 * l ** 2 + 4.47163 * g ** 2 * l ** 3 + 0.07842 * g * l ** 4 + l ** 5) ** 0.2;
  const r = l / fwhm;
  const eta = 1.36603 * r - 0.47719 * r * r + 0.11116 * r ** 3;
  return { fwhm, eta: Math.min(1, Math.max(0, eta)) };
}

/**
 * The Gaussian and Lorentzian FWHMs of the Voigt whose pseudo-Voigt has this FWHM and η: the
 * exact inverse of voigtToPseudoVoigt (by bisection on both relations).
 *
 * @param fwhm total FWHM (> 0)
 * @param eta mixing parameter in [0, 1]
 * @returns gammaG and gammaL in the unit of fwhm
 * Reference: Thompson, Cox & Hastings, J. Appl. Cryst. 20, 79 (1987), inverted numerically.
 */
export function pseudoVoigtToVoigt(fwhm: number, eta: number): { gammaG: number; gammaL: number } {
  if (!(fwhm > 0) || !Number.isFinite(fwhm)) throw new RangeError(`fwhm must be positive, got ${fwhm}`);
  if (!(eta >= 0 && eta <= 1)) throw new RangeError(`eta must be in [0, 1], got ${eta}`);
  // η(r) = 1.36603 r − 0.47719 r² + 0.11116 r³ rises from 0 to 1 on [0, 1]
  let lo = 0;
  let hi = 1;
  for (let k = 0; k < 60; k++) {
    const r = 0.5 * (lo + hi);
    const e = 1.36603 * r - 0.47719 * r * r + 0.11116 * r ** 3;
    if (e < eta) lo = r;
    else hi = r;
  }
  const gammaL = 0.5 * (lo + hi) * fwhm;
  if (gammaL >= fwhm * (1 - 1e-12)) return { gammaG: 0, gammaL: fwhm };
  // total(γG) with γL fixed rises with γG
  lo = 0;
  hi = fwhm;
  for (let k = 0; k < 80; k++) {
    const g = 0.5 * (lo + hi);
    if (voigtToPseudoVoigt(g, gammaL).fwhm < fwhm) lo = g;
    else hi = g;
  }
  return { gammaG: 0.5 * (lo + hi), gammaL };
}
