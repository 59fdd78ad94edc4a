/**
 * Internal lattice standards for magnification calibration: spacings whose value is known from
 * outside the microscope, measured in the same image (or at the same setting) to fix the pixel
 * size.
 */
import type { Calibration, CalibrationUncertaintyPart } from '../image/grey-image';
import { makeCalibration } from './calibration';
import { localSpread, randomEffectsMean } from '../measure/pool';

/** How far a listed value has been checked. */
export type StandardStatus = 'published' | 'computed' | 'from memory';

/** One spacing usable as a length standard. */
export interface LatticeStandard {
  /** Short stable id, e.g. 'si-111'. */
  id: string;
  /** Readable name with the reflection, e.g. "Si (111)". */
  name: string;
  /** The spacing, nm. */
  dNm: number;
  /**
   * Standard uncertainty (k = 1) of dNm in nm: the source's, or, for a value from memory or a
   * source that states none, a conservative allowance stated here (see `uncertaintyBasis`).
   */
  uncertaintyNm: number;
  /** Where the uncertainty comes from: the source itself, or our stated allowance. */
  uncertaintyBasis: string;
  /** Where the value comes from. */
  source: string;
  /** Whether the value was read in the source, computed from a read value, or is from memory. */
  status: StandardStatus;
  /** How the spacing follows from the source's numbers (lattice parameter, Miller indices...). */
  derivation: string;
}

/** Silicon lattice parameter of the ideal crystal, nm (CODATA 2018). */
export const SI_A_NM = 0.5431020511;
/** Its standard uncertainty, nm (CODATA 2018). */
export const SI_A_UNCERTAINTY_NM = 0.0000000089;
/** Gold lattice parameter, nm (room temperature; from memory). */
export const AU_A_NM = 0.40782;
/** Relative standard uncertainty allowed for that value from memory (0.1 %, conservative). */
const AU_A_U_REL = 0.001;

const cubicD = (a: number, h: number, k: number, l: number) => a / Math.sqrt(h * h + k * k + l * l);

/** The built-in standards, in order of increasing spacing. */
export const LATTICE_STANDARDS: readonly LatticeStandard[] = Object.freeze([
  {
    id: 'au-220',
    name: 'Au (220)',
    dNm: cubicD(AU_A_NM, 2, 2, 0),
    uncertaintyNm: AU_A_U_REL * cubicD(AU_A_NM, 2, 2, 0),
    uncertaintyBasis: 'allowance: 0.1 % of a (from memory, not from a certificate)',
    source: 'computed from a = 0.40782 nm (from memory); 0.144 nm quoted in HREM work on Au bicrystals',
    status: 'from memory',
    derivation: 'd = a/√(h² + k² + l²), cubic',
  },
  {
    id: 'au-200',
    name: 'Au (200)',
    dNm: cubicD(AU_A_NM, 2, 0, 0),
    uncertaintyNm: AU_A_U_REL * cubicD(AU_A_NM, 2, 0, 0),
    uncertaintyBasis: 'allowance: 0.1 % of a (from memory, not from a certificate)',
    source: 'computed from a = 0.40782 nm (from memory)',
    status: 'from memory',
    derivation: 'd = a/√(h² + k² + l²), cubic',
  },
  {
    id: 'au-111',
    name: 'Au (111)',
    dNm: cubicD(AU_A_NM, 1, 1, 1),
    uncertaintyNm: AU_A_U_REL * cubicD(AU_A_NM, 1, 1, 1),
    uncertaintyBasis: 'allowance: 0.1 % of a (from memory, not from a certificate)',
    source: 'computed from a = 0.40782 nm (from memory)',
    status: 'from memory',
    derivation: 'd = a/√(h² + k² + l²), cubic',
  },
  {
    id: 'si-111',
    name: 'Si (111)',
    dNm: cubicD(SI_A_NM, 1, 1, 1),
    uncertaintyNm: SI_A_UNCERTAINTY_NM / Math.sqrt(3),
    uncertaintyBasis: 'CODATA 2018 standard uncertainty of a, divided by √3',
    source: 'computed from a = 0.5431020511(89) nm, CODATA 2018 (ideal crystal)',
    status: 'computed',
    derivation: 'd = a/√3, cubic',
  },
  {
    id: 'graphite-002',
    name: 'graphite (002)',
    dNm: 0.3354,
    uncertaintyNm: 0.0001,
    uncertaintyBasis: 'Howe et al. 2003: d = 3.355(1) Å',
    source: 'IUPAC Gold Book, "hexagonal graphite" (c = 0.6708 nm); uncertainty from Howe et al., Powder Diffr. (2003), doi 10.1154/1.1536926, d = 3.355(1) Å',
    status: 'published',
    derivation: 'd = c/2',
  },
  {
    id: 'graphitized-carbon-002',
    name: 'graphitized carbon (002), turbostratic',
    dNm: 0.344,
    uncertaintyNm: 0.344 * 0.008,
    uncertaintyBasis: 'EMSA abstract: ±1.6 % at 95 %, halved',
    source: 'EMSA abstract "Magnification determination for high resolution electron microscopy" (0.344 nm, ±1.6 % at 95 %)',
    status: 'published',
    derivation: 'as published; u = 1.6 %/2',
  },
  {
    id: 'mos2-002',
    name: '2H-MoS2 (002)',
    dNm: 0.6148,
    uncertaintyNm: 0.002 * 0.6148,
    uncertaintyBasis: 'allowance: 0.2 % (c from memory)',
    source: 'c = 1.2295 nm (from memory; a secondary page gives c = 1.229 nm)',
    status: 'from memory',
    derivation: 'd = c/2',
  },
  {
    id: 'illite-001',
    name: 'muscovite / illite basal spacing',
    dNm: 1.0,
    uncertaintyNm: 0.0015 / Math.sqrt(3),
    uncertaintyBasis: 'the 9.97–10.0 Å spread of the source as a rectangular half-width, 0.15 Å/√3',
    source: 'illite d001 = 10 Å: Schroeder, GEOL 6550 notes, University of Georgia; muscovite 9.97–10.0 Å',
    status: 'published',
    derivation: 'as published (muscovite 2M1 (002) = 1M (001)); u: the 9.97–10.0 Å spread as a rectangular half-width, 0.15 Å/√3',
  },
  {
    id: 'catalase-b',
    name: 'catalase crystal, 8.75 nm fringes',
    dNm: 8.75,
    uncertaintyNm: 0.02 * 8.75,
    uncertaintyBasis: 'allowance: 2 % (from memory; protein crystal spacings change with hydration and stain)',
    source: 'Wrigley, J. Ultrastruct. Res. 24, 454 (1968) (from memory); consistent with b/2, b = 17.4 nm (Unwin 1975)',
    status: 'from memory',
    derivation: 'as published',
  },
  {
    id: 'catalase-a',
    name: 'catalase crystal, 6.85 nm fringes',
    dNm: 6.85,
    uncertaintyNm: 0.02 * 6.85,
    uncertaintyBasis: 'allowance: 2 % (from memory; protein crystal spacings change with hydration and stain)',
    source: 'Wrigley, J. Ultrastruct. Res. 24, 454 (1968) (from memory); consistent with a = 6.9 nm (Unwin 1975)',
    status: 'from memory',
    derivation: 'as published',
  },
  {
    id: 'grating-2160',
    name: 'cross-grating replica, 2160 lines/mm',
    dNm: 1e6 / 2160,
    uncertaintyNm: (0.01 / Math.sqrt(3)) * (1e6 / 2160),
    uncertaintyBasis: 'allowance: ±1 % rectangular (replicas are copies of a ruled master; no uncertainty stated by the source)',
    source: 'supplier user notes; Univ. Illinois ITG tech. rep. 98-012 (2160 lines/mm)',
    status: 'published',
    derivation: 'd = 1 mm / 2160',
  },
]);

/** Looks a standard up by id; throws, naming the id and the known ids, when it is not listed. */
export function latticeStandard(id: string): LatticeStandard {
  const s = LATTICE_STANDARDS.find((x) => x.id === id);
  if (!s) throw new RangeError(`unknown lattice standard '${id}' (known: ${LATTICE_STANDARDS.map((x) => x.id).join(', ')})`);
  return s;
}

/** A spacing the user types in, with its standard uncertainty. */
export interface CustomSpacing {
  /** The spacing, nm. */
  dNm: number;
  /** Its standard uncertainty (k = 1), nm: required, because a spacing with no stated uncertainty cannot calibrate honestly. */
  uncertaintyNm: number;
  /** What it is, for the record. */
  name?: string;
}

/** A measured period of a standard: the value in px with its uncertainty parts. */
export interface StandardPeriod {
  periodPx: number;
  /** Statistical standard uncertainty, px. */
  statisticalPx: number;
  /** Scatter between the spots of the family (scan distortion, strain) beyond their own precision, px. */
  spreadPx: number;
  /** Spots used. */
  spots: number;
}

/**
 * The period of a lattice standard from every spot of its family, not only the strongest.
 *
 * @param spots periods found in the region (px, with statistical and local-variation parts and
 *   directions), strongest first
 * @param relWindow spots within this fraction of the strongest spot's period belong to its family (default 0.06)
 * @returns the pooled period with its parts, or null when there is no spot
 * Notes: symmetry-equivalent reflections ({111} of silicon seen along [110], say) have one spacing;
 * in an image they differ by scan distortion and drift, by a few per cent. One spot alone would
 * give one direction's scale with a precision that ignores this. The family's periods are pooled
 * (weighted mean) and, when they differ beyond their own uncertainties (Cochran's Q at 1 %), their
 * spread τ is kept as its own part: an isotropic pixel size cannot be better than the spread of
 * the directions it averages. A two-axis calibration removes it.
 * Reference: Cochran, Biometrics 10, 101 (1954); DerSimonian & Laird (1986).
 */
export function standardPeriodFromSpots(
  spots: readonly { periodPx: number; angleDeg: number; u: { statisticalPx: number; localVariationPx: number } }[],
  relWindow = 0.06,
): StandardPeriod | null {
  if (!(relWindow > 0 && relWindow < 0.5)) throw new RangeError(`relWindow must be in (0, 0.5), got ${relWindow}`);
  if (!spots.length) return null;
  const p0 = spots[0].periodPx;
  const family = spots.filter((s) => Math.abs(s.periodPx - p0) <= relWindow * p0);
  const items = family.map((s) => ({ value: s.periodPx, u: Math.max(1e-12, Math.hypot(s.u.statisticalPx, s.u.localVariationPx)) }));
  if (items.length === 1) return { periodPx: p0, statisticalPx: items[0].u, spreadPx: 0, spots: 1 };
  const re = randomEffectsMean(items);
  const spread = localSpread(items);
  return { periodPx: re.mean, statisticalPx: re.uWithin, spreadPx: spread.significant ? re.tau : 0, spots: items.length };
}

/**
 * The pixel size from the period of a known spacing measured in pixels.
 * @param measured the spacing measured in the image: period in px with its parts (or a plain
 *   period and standard uncertainty in px)
 * @param standard a listed standard, its id, or a custom spacing with its uncertainty
 * @returns a Calibration with source 'standard' and its uncertainty parts
 * Notes: nm/px = d/p; u_rel = √((u_p/p)² + (τ/p)² + (u_d/d)²), the root-sum-square of independent
 * relative uncertainties (JCGM 100:2008, GUM, §5.1.6): the period's statistical part, the spread
 * between the family's spots, and the standard's own spacing (its source's or our stated
 * allowance for a value from memory). ISO 29301 calls for lattice images of 0.1–1 nm above 500 000×.
 */
export function calibrateFromStandard(
  measured: StandardPeriod | { periodPx: number; uncertaintyPx: number },
  standard: LatticeStandard | string | CustomSpacing,
): Calibration {
  const m: StandardPeriod = 'uncertaintyPx' in measured
    ? { periodPx: measured.periodPx, statisticalPx: measured.uncertaintyPx, spreadPx: 0, spots: 1 }
    : measured;
  if (!(m.periodPx > 0) || !Number.isFinite(m.periodPx)) throw new RangeError(`the measured period must be a positive number of px, got ${m.periodPx}`);
  if (!(m.statisticalPx >= 0) || !Number.isFinite(m.statisticalPx)) throw new RangeError(`the period's uncertainty must be a non-negative number of px, got ${m.statisticalPx}`);
  const s: { name: string; dNm: number; uNm: number; source: string; basis: string } =
    typeof standard === 'string'
      ? (() => {
          const l = latticeStandard(standard);
          return { name: l.name, dNm: l.dNm, uNm: l.uncertaintyNm, source: l.source, basis: l.uncertaintyBasis };
        })()
      : 'id' in standard
        ? { name: standard.name, dNm: standard.dNm, uNm: standard.uncertaintyNm, source: standard.source, basis: standard.uncertaintyBasis }
        : { name: standard.name ?? 'custom spacing', dNm: standard.dNm, uNm: standard.uncertaintyNm, source: 'entered by the user', basis: 'stated by the user' };
  if (!(s.dNm > 0) || !Number.isFinite(s.dNm)) throw new RangeError(`the standard's spacing must be a positive number of nm, got ${s.dNm}`);
  if (typeof s.uNm !== 'number' || !(s.uNm >= 0) || !Number.isFinite(s.uNm)) {
    throw new RangeError(`the standard's uncertainty must be a non-negative number of nm, got ${String(s.uNm)}: give the spacing with its ±`);
  }
  const relPeriod = m.statisticalPx / m.periodPx;
  const relSpread = m.spreadPx / m.periodPx;
  const relStd = s.uNm / s.dNm;
  const parts: CalibrationUncertaintyPart[] = [
    { name: 'measured period', rel: relPeriod, type: 'A' },
    ...(m.spots > 1 ? [{ name: `spread of the ${m.spots} spots of the family`, rel: relSpread, type: 'A' as const }] : []),
    { name: "standard's spacing", rel: relStd, type: 'B' },
  ];
  const pct = (v: number) => `${(100 * v).toPrecision(2)} %`;
  return makeCalibration(
    s.dNm / m.periodPx,
    'standard',
    `${s.name} d = ${Number(s.dNm.toPrecision(6))} ± ${Number(s.uNm.toPrecision(2))} nm over ${m.periodPx.toPrecision(6)} px from ${m.spots} spot${m.spots === 1 ? '' : 's'} (period ${pct(relPeriod)}${m.spots > 1 ? `, spread ${pct(relSpread)}` : ''}, standard ${pct(relStd)}: ${s.basis}); ${s.source}`,
    parts,
  );
}
