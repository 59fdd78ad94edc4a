/**
 * One sample profile shape for all the lines of a phase: each line's breadth measured with the
 * shape its phase's lines share, instead of with a shape of its own.
 *
 * A weak line's fitted FWHM and η trade off (their correlation is typically −0.6 to −0.8): noise
 * that makes the line look more Gaussian makes it broader too, and its own Voigt split then puts a
 * large Gaussian part on top of the instrument's (measured on the benchmark's lines of significance
 * 20–30: η 0.70 ± 0.12 for a true 0.99, FWHM 20 % too broad, the size 20 % small). Crystallites
 * broaden every reflection of a phase with the same profile in reciprocal space (its Cauchy and
 * Gauss breadths scale together with 1/cos θ, Balzar & Ledbetter, J. Appl. Cryst. 26, 97, 1993), so
 * the sample's Lorentzian fraction is one number per phase: fitted from all its lines together, it
 * leaves each line one free breadth, measured from its fitted FWHM and η with their covariance.
 */
import { instrumentWidth, type InstrumentProfile } from './instrument';
import { pseudoVoigtToVoigt, voigtToPseudoVoigt } from './voigt';

/** A fitted line offered to the shared-shape breadth: FWHM and η with their standard uncertainties and correlation. */
export interface ShapeLine {
  twoThetaDeg: number;
  fwhmDeg: number;
  fwhmUncDeg: number;
  eta: number;
  etaUnc: number;
  fwhmEtaCorrelation: number;
}

/** A line's sample breadth with the phase's shape. */
export interface ShapeBreadth {
  /** Sample FWHM (instrument removed), degrees 2θ, and its standard uncertainty (with the shape's own uncertainty). */
  sampleFwhmDeg: number;
  sampleFwhmUncDeg: number;
  /** The line's misfit to the shape, χ² with one degree of freedom. */
  chi2: number;
}

/** The shape shared by a phase's lines. */
export interface SharedShape {
  /** The sample profile's pseudo-Voigt η (0 Gaussian … 1 Lorentzian) and its standard uncertainty. */
  eta: number;
  etaUnc: number;
  /** χ² of all lines about the shared shape, and its degrees of freedom (lines − 1). */
  chi2: number;
  dof: number;
  /** Whether the lines are consistent with one shape (χ² below its 1 % point). */
  consistent: boolean;
  /** Each line's breadth with this shape (null where the line is not broader than the instrument). */
  breadths: Array<ShapeBreadth | null>;
}

/**
 * The observed pseudo-Voigt (FWHM, η) of a line whose sample profile has FWHM b and shape η_s, on
 * the instrument at 2θ: Gaussian widths in quadrature, Lorentzian widths added.
 * Reference: de Keijser, Langford, Mittemeijer & Vogels, J. Appl. Cryst. 15, 308 (1982); Thompson, Cox & Hastings, J. Appl. Cryst. 20, 79 (1987).
 */
function observed(unitG: number, unitL: number, b: number, ins: { gammaG: number; gammaL: number }): { fwhm: number; eta: number } {
  const g = Math.hypot(ins.gammaG, unitG * b);
  const l = ins.gammaL + unitL * b;
  return g + l > 0 ? voigtToPseudoVoigt(g, l) : { fwhm: 0, eta: 0 };
}

/** The sample's Voigt widths per unit FWHM for a shape η_s. */
function unitWidths(etaS: number): { g: number; l: number } {
  const v = pseudoVoigtToVoigt(1, Math.min(1, Math.max(0, etaS)));
  return { g: v.gammaG, l: v.gammaL };
}

/**
 * A line's sample breadth for a given sample shape: the b whose observed (FWHM, η) lies nearest
 * to the fitted ones in the metric of their covariance (generalised least squares, one parameter;
 * Gauss–Newton). Null when the line's covariance is not usable or the breadth falls to zero.
 * Reference: restrained least squares, Waser, Acta Cryst. 16, 1091 (1963) (here the restraint is exact).
 */
function breadthForShape(line: ShapeLine, etaS: number, profile: InstrumentProfile): { b: number; varB: number; chi2: number } | null {
  const sw = line.fwhmUncDeg;
  const se = line.etaUnc;
  const r = Math.max(-0.999, Math.min(0.999, line.fwhmEtaCorrelation));
  if (!(sw > 0) || !(se > 0) || !Number.isFinite(sw + se + r)) return null;
  const c11 = sw * sw;
  const c22 = se * se;
  const c12 = r * sw * se;
  const det = c11 * c22 - c12 * c12;
  if (!(det > 0)) return null;
  const i11 = c22 / det;
  const i22 = c11 / det;
  const i12 = -c12 / det;
  const ins = instrumentWidth(profile, line.twoThetaDeg);
  const u = unitWidths(etaS);
  const d2 = (rw: number, re: number) => rw * (i11 * rw + i12 * re) + re * (i12 * rw + i22 * re);
  let b = Math.max(0.5 * line.fwhmDeg, 1e-4);
  let info = 0;
  for (let it = 0; it < 40; it++) {
    const o0 = observed(u.g, u.l, b, ins);
    const h = 1e-5 * b;
    const o1 = observed(u.g, u.l, b + h, ins);
    const jw = (o1.fwhm - o0.fwhm) / h;
    const je = (o1.eta - o0.eta) / h;
    const rw = line.fwhmDeg - o0.fwhm;
    const re = line.eta - o0.eta;
    info = jw * (i11 * jw + i12 * je) + je * (i12 * jw + i22 * je);
    const grad = jw * (i11 * rw + i12 * re) + je * (i12 * rw + i22 * re);
    if (!(info > 0)) return null;
    const next = Math.max(1e-3 * b, b + grad / info);
    const done = Math.abs(next - b) < 1e-9 * Math.max(b, 1e-6);
    b = next;
    if (done) break;
  }
  const o = observed(u.g, u.l, b, ins);
  const chi2 = d2(line.fwhmDeg - o.fwhm, line.eta - o.eta);
  // a breadth driven to the floor: the line is no broader than the instrument with this shape
  if (!(b > 1e-3 * line.fwhmDeg) || !(info > 0)) return null;
  return { b, varB: 1 / info, chi2 };
}

/** Upper 1 % point of χ² with ν degrees of freedom (Wilson–Hilferty approximation; Wilson & Hilferty 1931). */
function chi2Limit(nu: number): number {
  const a = 2 / (9 * nu);
  return nu * (1 - a + 2.326 * Math.sqrt(a)) ** 3;
}

/**
 * The sample profile shape shared by a phase's lines, and each line's breadth with it: η_s is the
 * one that minimises the summed misfit of all lines (each line's breadth free), searched over
 * [0, 1]; its standard uncertainty from where that χ² rises by 1. A line's breadth carries its own
 * fit (FWHM, η, their correlation) and the shape's uncertainty; when the lines do not share one
 * shape (χ² beyond its 1 % point: strain broadening with another shape, anisotropic crystallites)
 * `consistent` is false and the caller keeps each line's own shape.
 *
 * @param lines the phase's resolved lines (at least 2) with their fitted FWHM, η and covariance
 * @param profile the instrument profile
 * @returns the shape and each line's breadth, or null with fewer than two usable lines
 * Reference: Balzar & Ledbetter, J. Appl. Cryst. 26, 97 (1993) (a size profile's Cauchy and Gauss
 * parts scale alike over the orders); de Keijser et al., J. Appl. Cryst. 15, 308 (1982) (Voigt
 * deconvolution); Waser, Acta Cryst. 16, 1091 (1963) (restrained least squares).
 */
export function sharedSampleShape(lines: ShapeLine[], profile: InstrumentProfile): SharedShape | null {
  for (const [i, l] of lines.entries()) {
    if (!(l.twoThetaDeg > 0 && l.twoThetaDeg < 180) || !(l.fwhmDeg > 0) || !(l.eta >= 0 && l.eta <= 1)) throw new RangeError(`shape line ${i}: 2θ ${l.twoThetaDeg}°, FWHM ${l.fwhmDeg}°, η ${l.eta} out of range`);
  }
  const total = (etaS: number) => {
    let s = 0;
    let n = 0;
    for (const l of lines) {
      const f = breadthForShape(l, etaS, profile);
      if (f) {
        s += f.chi2;
        n++;
      }
    }
    return { s, n };
  };
  // a coarse grid over [0, 1], then golden-section refinement around its best point
  let best = 0;
  let bestS = Infinity;
  for (let k = 0; k <= 20; k++) {
    const e = k / 20;
    const t = total(e);
    if (t.n >= 2 && t.s < bestS) {
      bestS = t.s;
      best = e;
    }
  }
  if (!Number.isFinite(bestS)) return null;
  let lo = Math.max(0, best - 0.05);
  let hi = Math.min(1, best + 0.05);
  const gr = (Math.sqrt(5) - 1) / 2;
  let a = hi - gr * (hi - lo);
  let b = lo + gr * (hi - lo);
  let fa = total(a).s;
  let fb = total(b).s;
  for (let it = 0; it < 30; it++) {
    if (fa < fb) {
      hi = b;
      b = a;
      fb = fa;
      a = hi - gr * (hi - lo);
      fa = total(a).s;
    } else {
      lo = a;
      a = b;
      fa = fb;
      b = lo + gr * (hi - lo);
      fb = total(b).s;
    }
  }
  let etaS = 0.5 * (lo + hi);
  let chi2 = total(etaS).s;
  for (const e of [0, 1]) {
    const s = total(e).s;
    if (s < chi2) {
      etaS = e;
      chi2 = s;
    }
  }
  // its uncertainty: where χ² rises by 1 (either side; at a bound, the side inside)
  const rise = (dir: number) => {
    let step = 0.002;
    let e = etaS;
    while (step < 1) {
      const next = Math.min(1, Math.max(0, e + dir * step));
      if (next === e) return null;
      if (total(next).s - chi2 >= 1) return Math.abs(next - etaS);
      e = next;
      step *= 1.5;
    }
    return null;
  };
  const ups = [rise(-1), rise(1)].filter((v): v is number => v !== null);
  const etaUnc = ups.length ? Math.max(...ups) : 1;
  const breadths = lines.map((l): ShapeBreadth | null => {
    const f = breadthForShape(l, etaS, profile);
    if (!f) return null;
    // the shape's uncertainty moves the breadth too: ∂b/∂η_s by central differences
    const h = Math.max(1e-3, Math.min(0.01, etaUnc));
    const f0 = breadthForShape(l, Math.max(0, etaS - h), profile);
    const f1 = breadthForShape(l, Math.min(1, etaS + h), profile);
    const span = Math.min(1, etaS + h) - Math.max(0, etaS - h);
    const db = f0 && f1 && span > 0 ? (f1.b - f0.b) / span : 0;
    return { sampleFwhmDeg: f.b, sampleFwhmUncDeg: Math.sqrt(f.varB + (db * etaUnc) ** 2), chi2: f.chi2 };
  });
  const n = breadths.filter((x) => x !== null).length;
  if (n < 2) return null;
  const dof = n - 1;
  return { eta: etaS, etaUnc, chi2, dof, consistent: chi2 <= chi2Limit(dof), breadths };
}
