/**
 * The Lorentz–polarisation (LP) factor across a powder line's profile. It falls steeply at low
 * angle, so on a measured pattern it tilts a broad low-angle line towards low 2θ: a symmetric
 * profile fitted to it comes out low and its d long. The profile fit multiplies each line's shape
 * by LP(2θ)/LP(2θ₀), so its fitted centre 2θ₀ is the Bragg angle (as in clay-mineral profile
 * modelling: Reynolds, Acta Cryst. A24, 319, 1968; Moore & Reynolds, X-ray Diffraction and the
 * Identification and Analysis of Clay Minerals, 2nd ed., 1997, ch. 4; from memory).
 */

/** Specimens whose Lorentz factor the fit knows. */
export const LP_SPECIMENS = ['powder', 'oriented-film', 'none'] as const;

/** The diffraction geometry that sets the LP factor across a line. */
export interface LpGeometry {
  /**
   * 'powder': a random powder in Bragg–Brentano reflection, Lorentz factor 1/(sin²θ cos θ);
   * 'oriented-film': an oriented aggregate (a clay film on a slide, its layers parallel to the
   * surface), Lorentz factor of perfect orientation 1/sin 2θ; 'none': no factor across a line
   * (transmission or synchrotron data the user says need none, or data already corrected).
   */
  specimen: (typeof LP_SPECIMENS)[number];
  /** 2θ of a monochromator crystal in degrees (graphite 002 with Cu Kα: 26.6°), or null without one. */
  monochromatorTwoThetaDeg: number | null;
}

/** The default geometry: a random powder in Bragg–Brentano reflection, no monochromator. */
export const DEFAULT_LP_GEOMETRY: LpGeometry = { specimen: 'powder', monochromatorTwoThetaDeg: null };

/**
 * Checks a geometry and fills its defaults.
 * @param geometry the specimen and, optionally, the monochromator's 2θ in degrees (0 < 2θm < 180)
 * @returns the geometry with monochromatorTwoThetaDeg set (null without one)
 * @throws RangeError naming the value when the specimen is unknown or the monochromator angle is out of range
 */
export function lpGeometry(geometry: { specimen: string; monochromatorTwoThetaDeg?: number | null } = DEFAULT_LP_GEOMETRY): LpGeometry {
  if (!(LP_SPECIMENS as readonly string[]).includes(geometry.specimen)) throw new RangeError(`the LP specimen must be one of ${LP_SPECIMENS.join(', ')}, got '${geometry.specimen}'`);
  const m = geometry.monochromatorTwoThetaDeg ?? null;
  if (m !== null && !(m > 0 && m < 180)) throw new RangeError(`monochromatorTwoThetaDeg must be in (0, 180), got ${m}`);
  return { specimen: geometry.specimen as LpGeometry['specimen'], monochromatorTwoThetaDeg: m };
}

/**
 * The LP factor at 2θ (up to a constant): polarisation (1 + cos²2θm cos²2θ)/(1 + cos²2θm)
 * (1 + cos²2θ without a monochromator) times the Lorentz factor, 1/(sin²θ cos θ) for a random
 * powder or 1/sin 2θ for an oriented film; 1 for 'none'.
 * @param twoThetaDeg 2θ in degrees, in (0, 180)
 * @param geometry specimen and monochromator (checked by lpGeometry)
 * @returns the factor (dimensionless; only ratios matter)
 * Reference: Cullity & Stock, Elements of X-Ray Diffraction, 3rd ed. (2001), ch. 4 (powder,
 * monochromator); Moore & Reynolds (1997), ch. 4, and Reynolds, Clays Clay Miner. 34, 359 (1986)
 * (oriented aggregates; perfect orientation taken; from memory).
 */
export function lpFactor(twoThetaDeg: number, geometry: LpGeometry): number {
  if (!(twoThetaDeg > 0 && twoThetaDeg < 180)) throw new RangeError(`twoThetaDeg must be in (0, 180), got ${twoThetaDeg}`);
  if (geometry.specimen === 'none') return 1;
  const th = (twoThetaDeg * Math.PI) / 360;
  const c2 = Math.cos(2 * th) ** 2;
  const m = geometry.monochromatorTwoThetaDeg;
  const cm = m === null ? 1 : Math.cos((m * Math.PI) / 180) ** 2;
  const polarisation = m === null ? 1 + c2 : (1 + cm * c2) / (1 + cm);
  const lorentz = geometry.specimen === 'powder' ? 1 / (Math.sin(th) ** 2 * Math.cos(th)) : 1 / Math.sin(2 * th);
  return polarisation * lorentz;
}

/**
 * The geometry in words, printed with the results as the wavelength is.
 * @param geometry specimen and monochromator
 * @returns e.g. "oriented film, Bragg–Brentano, monochromator 2θm 26.6°", or "none"
 */
export function describeLpGeometry(geometry: LpGeometry): string {
  if (geometry.specimen === 'none') return 'none';
  const what = geometry.specimen === 'powder' ? 'random powder, Bragg–Brentano' : 'oriented film, Bragg–Brentano';
  const mono = geometry.monochromatorTwoThetaDeg === null ? 'no monochromator' : `monochromator 2θm ${geometry.monochromatorTwoThetaDeg}°`;
  return `${what}, ${mono}`;
}
