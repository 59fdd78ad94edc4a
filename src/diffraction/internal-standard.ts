/**
 * Internal standards for powder patterns: a phase of certified cell mixed into the sample, whose
 * lines measure the zero shift (and specimen displacement) of the very pattern being indexed.
 * Reference: Klug & Alexander, X-ray Diffraction Procedures, 2nd ed. (1974) (the internal-standard method of line positions).
 */
import type { LatticeCell } from './lattice';

/** A phase of known cell mixed into the sample. */
export interface InternalStandard {
  /** Name shown beside its lines and in the notes. */
  name: string;
  /** Its cell (held while the zero shift is fitted). */
  cell: LatticeCell;
  /** Relative standard uncertainty (k = 1) of the cell; carried into the zero shift's uncertainty (default 0). */
  relUncertainty?: number;
  /** Reflection conditions beyond the lattice centring (the space group's glides and screws), when the structure has them. */
  allows?: (h: number, k: number, l: number) => boolean;
  /** Where the cell comes from. */
  source?: string;
}

/** A built-in internal standard, chosen by its id. */
export interface BuiltInStandard extends InternalStandard {
  id: string;
  /** The certified a and its expanded uncertainty (k = 2), nm, as printed by the certificate. */
  aNm: number;
  expandedUNm: number;
  source: string;
}

/** d-glide of the diamond structure (Fd-3m): hk0-type lines with all indices even need h + k + l = 4n (ITC A, No. 227). */
const diamondAllows = (h: number, k: number, l: number): boolean => ([h, k, l].every((v) => v % 2 === 0) ? (h + k + l) % 4 === 0 : true);

/**
 * The built-in standards: NIST line-position SRMs, certified at 22.5 °C with expanded uncertainties
 * (k = 2). Values: tests/fixtures/reference-values.md §2.
 */
export const INTERNAL_STANDARDS: readonly BuiltInStandard[] = [
  {
    id: 'si',
    name: 'Si (SRM 640f)',
    aNm: 0.5431144,
    expandedUNm: 0.000008,
    cell: { kind: 'cubic-F', aNm: 0.5431144, cNm: 0.5431144 },
    relUncertainty: 0.000004 / 0.5431144,
    allows: diamondAllows,
    source: 'NIST SRM 640f, a = 0.5431144 ± 0.000008 nm (k = 2) at 22.5 °C; Black et al., Powder Diffr. 35 (2020)',
  },
  {
    id: 'lab6',
    name: 'LaB6 (SRM 660c)',
    aNm: 0.4156826,
    expandedUNm: 0.000008,
    cell: { kind: 'cubic-P', aNm: 0.4156826, cNm: 0.4156826 },
    relUncertainty: 0.000004 / 0.4156826,
    source: 'NIST SRM 660c, a = 0.4156826 ± 0.000008 nm (k = 2) at 22.5 °C; Black et al., Powder Diffr. 35 (2020)',
  },
];

/**
 * A built-in internal standard by id (case-insensitive), or a cubic cell of one's own given as
 * "cubic:A±U[:F|I|P]" (a and its standard uncertainty in nm; centring F by default).
 * @param text the id or the cubic cell
 * @returns the standard
 * @throws RangeError naming the text when it is neither a known id nor a valid cubic cell
 */
export function internalStandardFrom(text: string): InternalStandard {
  const t = text.trim();
  const m = /^cubic:([0-9]*\.?[0-9]+(?:[eE][-+]?\d+)?)\s*(?:±|\+-|\+\/-)\s*([0-9]*\.?[0-9]+(?:[eE][-+]?\d+)?)(?::([FIP]))?$/.exec(t);
  if (m) {
    const a = Number(m[1]);
    const u = Number(m[2]);
    if (!(a > 0.1 && a < 5)) throw new RangeError(`internal standard '${text}': a must be between 0.1 and 5 nm, got ${a}`);
    if (!(u > 0 && u < 0.01 * a)) throw new RangeError(`internal standard '${text}': the standard uncertainty of a must be positive and below 1 % of a, got ${u}`);
    const kind = `cubic-${m[3] ?? 'F'}` as LatticeCell['kind'];
    return { name: `cubic ${m[3] ?? 'F'} a = ${a} nm`, cell: { kind, aNm: a, cNm: a }, relUncertainty: u / a, source: `typed: a = ${a} ± ${u} nm (standard uncertainty)` };
  }
  const b = INTERNAL_STANDARDS.find((s) => s.id === t.toLowerCase());
  if (!b) throw new RangeError(`internal standard '${text}' is not known: give ${INTERNAL_STANDARDS.map((s) => s.id).join(', ')} or cubic:A±U[:F|I|P] (nm, standard uncertainty)`);
  return b;
}

/**
 * The part of a zero shift's standard uncertainty that comes from the standard's cell: with the cell
 * held, a relative error ε of a moves each line's calculated 2θ by −(360/π)·tan θ·ε degrees, and the
 * fitted zero shift takes their weighted mean.
 * @param twoThetaDeg the standard's lines used in the fit, degrees 2θ
 * @param weights their weights in the fit (1/σ²), same length
 * @param relUncertainty the cell's relative standard uncertainty
 * @returns the standard uncertainty it adds to the zero shift, degrees 2θ
 * Reference: Bragg's law differentiated, Δ(2θ) = −2 tan θ · Δd/d.
 */
export function zeroShiftCellPartDeg(twoThetaDeg: readonly number[], weights: readonly number[], relUncertainty: number): number {
  if (twoThetaDeg.length !== weights.length) throw new RangeError(`zeroShiftCellPartDeg: ${twoThetaDeg.length} angles but ${weights.length} weights`);
  if (!(relUncertainty >= 0)) throw new RangeError(`zeroShiftCellPartDeg: relUncertainty must be ≥ 0, got ${relUncertainty}`);
  let sw = 0;
  let s = 0;
  twoThetaDeg.forEach((tt, i) => {
    if (!(tt > 0 && tt < 180)) throw new RangeError(`zeroShiftCellPartDeg: 2θ must lie in (0, 180)°, got ${tt}`);
    sw += weights[i];
    s += weights[i] * (360 / Math.PI) * Math.tan((tt * Math.PI) / 360);
  });
  return sw > 0 ? (Math.abs(s) / sw) * relUncertainty : 0;
}
