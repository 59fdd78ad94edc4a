/**
 * Polycrystalline ring standards for the camera constant of electron diffraction: their lattice
 * parameters, sources, standard uncertainties and allowed reflections.
 */

/** A cubic ring standard. */
export interface RingStandard {
  /** Short stable id, e.g. 'au'. */
  id: string;
  /** Readable name. */
  name: string;
  /** Cubic lattice parameter, nm. */
  aNm: number;
  /** Its standard uncertainty, nm (for a value from memory, a conservative allowance). */
  uANm: number;
  /** Where the value comes from. */
  source: string;
  /** 'published', or 'from memory' (then the allowance is stated in uncertaintyBasis). */
  status: 'published' | 'from memory';
  /** How the uncertainty was set. */
  uncertaintyBasis: string;
  /** Lattice centring, which sets the allowed reflections. */
  centring: 'F' | 'I' | 'P';
}

/**
 * The built-in ring standards. Gold and aluminium evaporated films are the usual camera-length
 * calibrants (common practice); their lattice parameters here are handbook values quoted from
 * memory (reference-values §6) with an allowance of 0.1 % of a as standard uncertainty, larger
 * than the spread between handbooks and the change of a over ±10 K of room temperature.
 */
export const RING_STANDARDS: readonly RingStandard[] = Object.freeze([
  {
    id: 'au',
    name: 'gold (fcc)',
    aNm: 0.40782,
    uANm: 0.00041,
    source: 'a = 0.40782 nm at room temperature, handbook value (from memory; reference-values §3, §6)',
    status: 'from memory',
    uncertaintyBasis: 'allowance: 0.1 % of a, for a value from memory',
    centring: 'F',
  },
  {
    id: 'al',
    name: 'aluminium (fcc)',
    aNm: 0.40495,
    uANm: 0.00040,
    source: 'a = 0.40495 nm at room temperature, handbook value (from memory; reference-values §6)',
    status: 'from memory',
    uncertaintyBasis: 'allowance: 0.1 % of a, for a value from memory',
    centring: 'F',
  },
]);

/** Looks a ring standard up by id; throws naming the id and the known ones when it is not listed. */
export function ringStandard(id: string): RingStandard {
  const s = RING_STANDARDS.find((x) => x.id === id);
  if (!s) throw new RangeError(`unknown ring standard '${id}' (known: ${RING_STANDARDS.map((x) => x.id).join(', ')}; or give a cubic lattice parameter)`);
  return s;
}

/** A cubic standard the user enters: lattice parameter with its standard uncertainty, and centring. */
export function userRingStandard(aNm: number, uANm: number, centring: 'F' | 'I' | 'P' = 'F'): RingStandard {
  if (!(aNm > 0) || !Number.isFinite(aNm)) throw new RangeError(`the lattice parameter must be a positive number of nm, got ${aNm}`);
  if (!(uANm >= 0) || !Number.isFinite(uANm)) throw new RangeError(`the lattice parameter's standard uncertainty must be a non-negative number of nm, got ${uANm}`);
  if (!['F', 'I', 'P'].includes(centring)) throw new RangeError(`centring must be 'F', 'I' or 'P', got ${String(centring)}`);
  return { id: 'user', name: `cubic ${centring}, a = ${aNm} ± ${uANm} nm`, aNm, uANm, source: 'entered by the user', status: 'published', uncertaintyBasis: 'stated by the user', centring };
}

/** One ring of a standard: its indices and spacing. */
export interface StandardRing {
  hkl: [number, number, number];
  /** h² + k² + l². */
  n: number;
  dNm: number;
  /** 1/d, nm⁻¹. */
  gInvNm: number;
}

/**
 * The rings a cubic standard gives, by increasing 1/d.
 * @param s the standard
 * @param count how many distinct rings (default 12)
 * Notes: extinction rules of the centred cubic lattices (common practice, reference-values §6):
 * F, h, k, l all even or all odd; I, h + k + l even; P, all.
 */
export function standardRings(s: RingStandard, count = 12): StandardRing[] {
  const allowed = (h: number, k: number, l: number) =>
    s.centring === 'P' ? true : s.centring === 'I' ? (h + k + l) % 2 === 0 : h % 2 === k % 2 && k % 2 === l % 2;
  const byN = new Map<number, [number, number, number]>();
  for (let h = 0; h <= 12; h++) for (let k = 0; k <= h; k++) for (let l = 0; l <= k; l++) {
    const n = h * h + k * k + l * l;
    if (n === 0 || !allowed(h, k, l) || byN.has(n)) continue;
    byN.set(n, [h, k, l]);
  }
  return [...byN.entries()].sort((a, b) => a[0] - b[0]).slice(0, count).map(([n, hkl]) => ({ hkl, n, dNm: s.aNm / Math.sqrt(n), gInvNm: Math.sqrt(n) / s.aNm }));
}
