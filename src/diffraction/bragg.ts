/**
 * Wavelengths and Bragg's law: conversions between 2θ, d and q for any wavelength.
 *
 * All lengths are in nm; q = 4π sin θ / λ = 2π / d in nm⁻¹ (the crystallographic convention
 * with the 2π factor, as used in small-angle scattering).
 */

import { ANODES, optionStatements, resolveRadiation } from './radiation';

/** A named X-ray emission line. */
export interface XrayLine {
  /** Short key used on the command line, e.g. 'CuKa1'. */
  key: string;
  /** Readable name, e.g. 'Cu Kα1'. */
  label: string;
  /** Wavelength of the line (for a weighted mean, the mean), in nm. */
  wavelengthNm: number;
  /** Wavelength of the Kα2 companion in nm, when the line is Kα1 (for doublet fitting). */
  ka2Nm?: number;
  /** Where the value comes from. */
  source: string;
}

/**
 * Wavelength presets: the Kα1 line of every anode of `ANODES` (radiation.ts, with its sources),
 * and the Cu Kα weighted mean (2·Kα1 + Kα2)/3 computed from them.
 */
export const XRAY_LINES: readonly XrayLine[] = [
  ...ANODES.filter((a) => a.element === 'Cu').map((a) => ({ key: 'CuKa1', label: 'Cu Kα1', wavelengthNm: a.ka1Nm, ka2Nm: a.ka2Nm, source: a.source })),
  { key: 'CuKa', label: 'Cu Kα (weighted 2:1)', wavelengthNm: (2 * 0.154059292 + 0.15444274) / 3, source: '(2·Kα1 + Kα2)/3 from ITC C Table 4.2.2.6 and Hölzer et al. 1997' },
  ...ANODES.filter((a) => a.element !== 'Cu').map((a) => ({ key: `${a.element}Ka1`, label: `${a.element} Kα1`, wavelengthNm: a.ka1Nm, ka2Nm: a.ka2Nm, source: a.source })),
];

/** Kα2 : Kα1 intensity ratio by convention (Rachinger 1948, noted in ITC C §2.3.3.2). */
export const KA2_RATIO = 0.5;

/**
 * Parses a wavelength given by a user: a preset key ('CuKa1', case-insensitive; 'Cu' alone means
 * the Cu Kα1/Kα2 doublet), or a value with unit ('0.15406nm', '1.5406A', '154.06 pm',
 * '17.479 keV'). A bare number is taken as Å between 0.3 and 5 (the X-ray habit), as nm when it is
 * a tube line in nm, and refused otherwise to avoid a silent factor of ten.
 *
 * @param text the wavelength as typed
 * @returns the wavelength in nm (Kα1 for a tube), the Kα2 companion when a doublet is implied, and a label
 * @throws RangeError naming the text (see optionStatements and resolveRadiation in radiation.ts)
 */
export function parseWavelength(text: string): { wavelengthNm: number; ka2Nm?: number; label: string } {
  optionStatements(text);
  const r = resolveRadiation([], { wavelength: text })!;
  return { wavelengthNm: r.wavelengthNm, ka2Nm: r.ka2Nm ?? undefined, label: r.label };
}

function checkLambda(wavelengthNm: number): void {
  if (!(wavelengthNm > 0) || !Number.isFinite(wavelengthNm)) throw new RangeError(`wavelengthNm must be positive, got ${wavelengthNm}`);
}

/**
 * Bragg's law, first order: d = λ / (2 sin θ).
 * @param twoThetaDeg scattering angle 2θ in degrees, in (0, 180)
 * @param wavelengthNm wavelength in nm
 * @returns d in nm
 * Reference: W. L. Bragg, Proc. Camb. Phil. Soc. 17, 43 (1913).
 */
export function twoThetaToD(twoThetaDeg: number, wavelengthNm: number): number {
  checkLambda(wavelengthNm);
  if (!(twoThetaDeg > 0 && twoThetaDeg < 180)) throw new RangeError(`twoThetaDeg must be in (0, 180), got ${twoThetaDeg}`);
  return wavelengthNm / (2 * Math.sin((twoThetaDeg * Math.PI) / 360));
}

/**
 * Inverse Bragg's law: 2θ = 2 asin(λ / 2d).
 * @param dNm spacing in nm; must be above λ/2 (else no reflection exists)
 * @param wavelengthNm wavelength in nm
 * @returns 2θ in degrees
 */
export function dToTwoTheta(dNm: number, wavelengthNm: number): number {
  checkLambda(wavelengthNm);
  if (!(dNm > 0)) throw new RangeError(`dNm must be positive, got ${dNm}`);
  const s = wavelengthNm / (2 * dNm);
  if (s > 1) throw new RangeError(`d = ${dNm} nm is below λ/2 = ${wavelengthNm / 2} nm: no Bragg reflection`);
  return (360 / Math.PI) * Math.asin(s);
}

/** q = 2π/d in nm⁻¹ from d in nm. */
export function dToQ(dNm: number): number {
  if (!(dNm > 0)) throw new RangeError(`dNm must be positive, got ${dNm}`);
  return (2 * Math.PI) / dNm;
}

/** d = 2π/q in nm from q in nm⁻¹. */
export function qToD(qInvNm: number): number {
  if (!(qInvNm > 0)) throw new RangeError(`qInvNm must be positive, got ${qInvNm}`);
  return (2 * Math.PI) / qInvNm;
}

/** q = 4π sin θ / λ in nm⁻¹. */
export function twoThetaToQ(twoThetaDeg: number, wavelengthNm: number): number {
  return dToQ(twoThetaToD(twoThetaDeg, wavelengthNm));
}

/** 2θ in degrees from q in nm⁻¹. */
export function qToTwoTheta(qInvNm: number, wavelengthNm: number): number {
  return dToTwoTheta(qToD(qInvNm), wavelengthNm);
}

/**
 * Standard uncertainty of d from that of 2θ: σ_d = d · cot θ · σ_θ (σ_θ = σ_2θ / 2, in radians).
 * @param twoThetaDeg 2θ in degrees
 * @param sigmaTwoThetaDeg standard uncertainty of 2θ in degrees
 * @param wavelengthNm wavelength in nm
 * @returns σ_d in nm
 */
export function dUncertaintyNm(twoThetaDeg: number, sigmaTwoThetaDeg: number, wavelengthNm: number): number {
  const d = twoThetaToD(twoThetaDeg, wavelengthNm);
  const theta = (twoThetaDeg * Math.PI) / 360;
  return (d * Math.abs(sigmaTwoThetaDeg) * Math.PI) / 360 / Math.tan(theta);
}

/**
 * 2θ of the Kα2 companion of a Kα1 reflection at 2θ₁: the same d with the other wavelength.
 * @param twoThetaDeg Kα1 position in degrees
 * @param ka1Nm Kα1 wavelength in nm
 * @param ka2Nm Kα2 wavelength in nm
 * @returns Kα2 position in degrees (NaN when beyond 180°)
 */
export function ka2Position(twoThetaDeg: number, ka1Nm: number, ka2Nm: number): number {
  const s = (Math.sin((twoThetaDeg * Math.PI) / 360) * ka2Nm) / ka1Nm;
  return s >= 1 ? NaN : (360 / Math.PI) * Math.asin(s);
}

/**
 * Lorentz–polarisation factor of a powder line for an unpolarised beam without a monochromator:
 * (1 + cos²2θ) / (sin²θ cos θ).
 * @param twoThetaDeg the line's 2θ in degrees, in (0, 180)
 * @returns the factor (dimensionless)
 * Reference: Cullity & Stock, Elements of X-Ray Diffraction, 3rd ed. (2001), ch. 4.
 */
export function lorentzPolarisation(twoThetaDeg: number): number {
  if (!(twoThetaDeg > 0 && twoThetaDeg < 180)) throw new RangeError(`twoThetaDeg must be in (0, 180), got ${twoThetaDeg}`);
  const th = (twoThetaDeg * Math.PI) / 360;
  return (1 + Math.cos(2 * th) ** 2) / (Math.sin(th) ** 2 * Math.cos(th));
}

/**
 * Relativistic electron wavelength for an accelerating voltage:
 * λ = h / √(2 m₀ e U (1 + e U / (2 m₀ c²))).
 * @param voltageV accelerating voltage in volts (e.g. 200e3)
 * @returns wavelength in nm
 * Reference: relativistic de Broglie relation with CODATA 2018 constants.
 */
export function electronWavelengthNm(voltageV: number): number {
  if (!(voltageV > 0) || !Number.isFinite(voltageV)) throw new RangeError(`voltageV must be positive, got ${voltageV}`);
  const h = 6.62607015e-34;
  const m0 = 9.1093837015e-31;
  const e = 1.602176634e-19;
  const c = 299792458;
  const p = Math.sqrt(2 * m0 * e * voltageV * (1 + (e * voltageV) / (2 * m0 * c * c)));
  return (h / p) * 1e9;
}
