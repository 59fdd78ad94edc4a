/**
 * Internal lattice standards for magnification calibration: spacings whose value is known from
 * outside the microscope, measured in the same image (or at the same setting) to fix the pixel
 * size.
 */
import type { Calibration } from '../image/grey-image';

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
  /** Standard uncertainty (k = 1) of dNm in nm, or null when the source states none. */
  uncertaintyNm: number | null;
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

const cubicD = (a: number, h: number, k: number, l: number) => a / Math.sqrt(h * h + k * k + l * l);

/** The built-in standards, in order of increasing spacing. */
export const LATTICE_STANDARDS: readonly LatticeStandard[] = Object.freeze([
  {
    id: 'au-220',
    name: 'Au (220)',
    dNm: cubicD(AU_A_NM, 2, 2, 0),
    uncertaintyNm: null,
    source: 'computed from a = 0.40782 nm (from memory); 0.144 nm quoted in HREM work on Au bicrystals',
    status: 'from memory',
    derivation: 'd = a/√(h² + k² + l²), cubic',
  },
  {
    id: 'au-200',
    name: 'Au (200)',
    dNm: cubicD(AU_A_NM, 2, 0, 0),
    uncertaintyNm: null,
    source: 'computed from a = 0.40782 nm (from memory)',
    status: 'from memory',
    derivation: 'd = a/√(h² + k² + l²), cubic',
  },
  {
    id: 'au-111',
    name: 'Au (111)',
    dNm: cubicD(AU_A_NM, 1, 1, 1),
    uncertaintyNm: null,
    source: 'computed from a = 0.40782 nm (from memory)',
    status: 'from memory',
    derivation: 'd = a/√(h² + k² + l²), cubic',
  },
  {
    id: 'si-111',
    name: 'Si (111)',
    dNm: cubicD(SI_A_NM, 1, 1, 1),
    uncertaintyNm: SI_A_UNCERTAINTY_NM / Math.sqrt(3),
    source: 'computed from a = 0.5431020511(89) nm, CODATA 2018 (ideal crystal)',
    status: 'computed',
    derivation: 'd = a/√3, cubic',
  },
  {
    id: 'graphite-002',
    name: 'graphite (002)',
    dNm: 0.3354,
    uncertaintyNm: 0.0001,
    source: 'IUPAC Gold Book, "hexagonal graphite" (c = 0.6708 nm); uncertainty from Howe et al., Powder Diffr. (2003), doi 10.1154/1.1536926, d = 3.355(1) Å',
    status: 'published',
    derivation: 'd = c/2',
  },
  {
    id: 'graphitized-carbon-002',
    name: 'graphitized carbon (002), turbostratic',
    dNm: 0.344,
    uncertaintyNm: 0.344 * 0.008,
    source: 'EMSA abstract "Magnification determination for high resolution electron microscopy" (0.344 nm, ±1.6 % at 95 %)',
    status: 'published',
    derivation: 'as published; u = 1.6 %/2',
  },
  {
    id: 'mos2-002',
    name: '2H-MoS2 (002)',
    dNm: 0.6148,
    uncertaintyNm: null,
    source: 'c = 1.2295 nm (from memory; a secondary page gives c = 1.229 nm)',
    status: 'from memory',
    derivation: 'd = c/2',
  },
  {
    id: 'illite-001',
    name: 'muscovite / illite basal spacing',
    dNm: 1.0,
    uncertaintyNm: 0.0015 / Math.sqrt(3),
    source: 'illite d001 = 10 Å: Schroeder, GEOL 6550 notes, University of Georgia; muscovite 9.97–10.0 Å',
    status: 'published',
    derivation: 'as published (muscovite 2M1 (002) = 1M (001)); u: the 9.97–10.0 Å spread as a rectangular half-width, 0.15 Å/√3',
  },
  {
    id: 'catalase-b',
    name: 'catalase crystal, 8.75 nm fringes',
    dNm: 8.75,
    uncertaintyNm: null,
    source: 'Wrigley, J. Ultrastruct. Res. 24, 454 (1968) (from memory); consistent with b/2, b = 17.4 nm (Unwin 1975)',
    status: 'from memory',
    derivation: 'as published',
  },
  {
    id: 'catalase-a',
    name: 'catalase crystal, 6.85 nm fringes',
    dNm: 6.85,
    uncertaintyNm: null,
    source: 'Wrigley, J. Ultrastruct. Res. 24, 454 (1968) (from memory); consistent with a = 6.9 nm (Unwin 1975)',
    status: 'from memory',
    derivation: 'as published',
  },
  {
    id: 'grating-2160',
    name: 'cross-grating replica, 2160 lines/mm',
    dNm: 1e6 / 2160,
    uncertaintyNm: null,
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

/** A spacing the user types in, with its standard uncertainty when known. */
export interface CustomSpacing {
  /** The spacing, nm. */
  dNm: number;
  /** Standard uncertainty (k = 1), nm; 0 when absent. */
  uncertaintyNm?: number;
  /** What it is, for the record. */
  name?: string;
}

/**
 * The pixel size from the period of a known spacing measured in pixels.
 * @param measuredPeriodPx the spacing measured in the image, px (from a line profile or power spectrum)
 * @param uncertaintyPx its standard uncertainty (k = 1), px
 * @param standard a listed standard, its id, or a custom spacing
 * @returns a Calibration with source 'standard'
 * Notes: nm/px = d/p; u_rel = √((u_p/p)² + (u_d/d)²), root-sum-square of independent relative
 * uncertainties (JCGM 100:2008, GUM, §5.1.6). A standard without a stated uncertainty adds
 * none, and the detail says so. ISO 29301 calls for lattice images of 0.1–1 nm above 500 000×.
 */
export function calibrateFromStandard(
  measuredPeriodPx: number,
  uncertaintyPx: number,
  standard: LatticeStandard | string | CustomSpacing,
): Calibration {
  if (!(measuredPeriodPx > 0) || !Number.isFinite(measuredPeriodPx)) {
    throw new RangeError(`measuredPeriodPx must be a positive number, got ${measuredPeriodPx}`);
  }
  if (!(uncertaintyPx >= 0) || !Number.isFinite(uncertaintyPx)) {
    throw new RangeError(`uncertaintyPx must be a non-negative number, got ${uncertaintyPx}`);
  }
  const s: { name: string; dNm: number; uNm: number | null; source: string } =
    typeof standard === 'string'
      ? (() => {
          const l = latticeStandard(standard);
          return { name: l.name, dNm: l.dNm, uNm: l.uncertaintyNm, source: l.source };
        })()
      : 'id' in standard
        ? { name: standard.name, dNm: standard.dNm, uNm: standard.uncertaintyNm, source: standard.source }
        : { name: standard.name ?? 'custom spacing', dNm: standard.dNm, uNm: standard.uncertaintyNm ?? 0, source: 'entered by the user' };
  if (!(s.dNm > 0) || !Number.isFinite(s.dNm)) throw new RangeError(`the standard's spacing must be a positive number of nm, got ${s.dNm}`);
  if (s.uNm !== null && (!(s.uNm >= 0) || !Number.isFinite(s.uNm))) {
    throw new RangeError(`the standard's uncertainty must be a non-negative number of nm, got ${s.uNm}`);
  }
  const relPeriod = uncertaintyPx / measuredPeriodPx;
  const relStd = s.uNm === null ? 0 : s.uNm / s.dNm;
  const stdNote = s.uNm === null ? 'no uncertainty stated for the standard' : `standard ${(100 * relStd).toPrecision(2)} %`;
  return {
    nmPerPx: s.dNm / measuredPeriodPx,
    source: 'standard',
    relUncertainty: Math.hypot(relPeriod, relStd),
    detail: `${s.name} d = ${Number(s.dNm.toPrecision(6))} nm over ${measuredPeriodPx.toPrecision(6)} ± ${uncertaintyPx.toPrecision(2)} px (period ${(100 * relPeriod).toPrecision(2)} %, ${stdNote}); ${s.source}`,
  };
}
