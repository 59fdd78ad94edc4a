/**
 * Lattices of the indexer: cubic (P, I, F), tetragonal (P, I), hexagonal (P, and R in the
 * hexagonal setting) and lamellar (a stack known only by its period), with their d-spacings and
 * the reflections their centring allows.
 */

/** A lattice type: crystal family and centring. */
export type LatticeKind = 'cubic-P' | 'cubic-I' | 'cubic-F' | 'tetragonal-P' | 'tetragonal-I' | 'hexagonal-P' | 'hexagonal-R' | 'lamellar';

/** Every lattice kind, simplest description first within a family. */
export const LATTICE_KINDS: readonly LatticeKind[] = ['lamellar', 'cubic-F', 'cubic-I', 'cubic-P', 'tetragonal-I', 'tetragonal-P', 'hexagonal-R', 'hexagonal-P'];

/** A cell: a (cubic, tetragonal, hexagonal) and c (tetragonal, hexagonal; the period for lamellar), in nm. */
export interface LatticeCell {
  kind: LatticeKind;
  /** a in nm (NaN for lamellar). */
  aNm: number;
  /** c in nm (cubic: equal to a; lamellar: the period). */
  cNm: number;
}

/** One possible line of a lattice: a set of hkl with one d. */
export interface LatticeLine {
  /** A representative hkl (h ≥ k ≥ 0 where the family allows). */
  hkl: [number, number, number];
  dNm: number;
  /** Q = 1/d² in nm⁻². */
  q: number;
}

/** Number of free cell parameters: 1 for cubic and lamellar, 2 otherwise. */
export function cellParameters(kind: LatticeKind): 1 | 2 {
  return kind === 'lamellar' || kind.startsWith('cubic') ? 1 : 2;
}

/**
 * Q = 1/d² of (hkl): cubic (h²+k²+l²)/a²; tetragonal (h²+k²)/a² + l²/c²; hexagonal
 * 4(h²+hk+k²)/(3a²) + l²/c²; lamellar l²/c².
 * Reference: ITC A; reference-values §4 (forms).
 */
export function qOf(kind: LatticeKind, aNm: number, cNm: number, h: number, k: number, l: number): number {
  switch (kind) {
    case 'cubic-P':
    case 'cubic-I':
    case 'cubic-F':
      return (h * h + k * k + l * l) / (aNm * aNm);
    case 'tetragonal-P':
    case 'tetragonal-I':
      return (h * h + k * k) / (aNm * aNm) + (l * l) / (cNm * cNm);
    case 'hexagonal-P':
    case 'hexagonal-R':
      return (4 * (h * h + h * k + k * k)) / (3 * aNm * aNm) + (l * l) / (cNm * cNm);
    case 'lamellar':
      return (l * l) / (cNm * cNm);
  }
}

/**
 * Whether the lattice's centring allows (hkl) (integral reflection conditions): I h+k+l even;
 * F h, k, l all even or all odd; R (obverse, hexagonal axes) −h+k+l = 3n for some equivalent
 * of (hk) under the hexagonal rotations; P and lamellar every hkl.
 * Reference: International Tables for Crystallography Vol. A, Table 2.2.13.1 (integral conditions).
 */
export function centringAllows(kind: LatticeKind, h: number, k: number, l: number): boolean {
  switch (kind) {
    case 'cubic-I':
    case 'tetragonal-I':
      return (h + k + l) % 2 === 0;
    case 'cubic-F': {
      const p = [h, k, l].map((v) => Math.abs(v) % 2);
      return p[0] === p[1] && p[1] === p[2];
    }
    case 'hexagonal-R': {
      // (h, k) and its rotations about c: (h, k), (−h−k, h), (k, −h−k), and the negatives with −l
      const eq = [[h, k], [-h - k, h], [k, -h - k]];
      return eq.some(([a, b]) => ((((-a + b + l) % 3) + 3) % 3) === 0 || ((((a - b + l) % 3) + 3) % 3) === 0);
    }
    default:
      return true;
  }
}

/**
 * Every distinct line a lattice allows between dMin and dMax, by decreasing d (lines of equal Q
 * merged, the representative with the smallest indices kept).
 *
 * @param cell the lattice and its cell
 * @param dMinNm smallest d
 * @param dMaxNm largest d (default ∞)
 * @returns the lines
 * @throws RangeError for a non-positive or absurd cell or range, naming the value
 */
export function latticeLines(cell: LatticeCell, dMinNm: number, dMaxNm = Infinity): LatticeLine[] {
  const { kind } = cell;
  const a = kind === 'lamellar' ? cell.cNm : cell.aNm;
  const c = kind.startsWith('cubic') ? cell.aNm : cell.cNm;
  if (!(a > 0 && a < 1e3) || !(c > 0 && c < 1e3)) throw new RangeError(`cell a ${cell.aNm} nm, c ${cell.cNm} nm is not a plausible ${kind} cell`);
  if (!(dMinNm > 0) || !(dMaxNm > dMinNm)) throw new RangeError(`d range ${dMinNm}–${dMaxNm} nm is empty`);
  const qMax = 1 / (dMinNm * dMinNm);
  const qMin = Number.isFinite(dMaxNm) ? 1 / (dMaxNm * dMaxNm) : 0;
  const hMax = kind === 'lamellar' ? 0 : Math.floor(a * Math.sqrt(qMax) * (kind.startsWith('hexagonal') ? 1 : 1)) + 1;
  const lMax = Math.floor(c * Math.sqrt(qMax)) + 1;
  if ((hMax + 1) * (hMax + 1) * (lMax + 1) > 2e6) throw new RangeError(`d ≥ ${dMinNm} nm gives too many lines for a ${a} nm, ${c} nm cell: raise dMinNm`);
  const byQ = new Map<string, LatticeLine>();
  const cubic = kind.startsWith('cubic');
  for (let h = 0; h <= hMax; h++) {
    for (let k = 0; k <= (kind === 'lamellar' ? 0 : h); k++) {
      for (let l = cubic ? 0 : 0; l <= (cubic ? k : lMax); l++) {
        if (h === 0 && k === 0 && l === 0) continue;
        const q = qOf(kind, a, c, h, k, l);
        if (q > qMax * (1 + 1e-12) || q < qMin * (1 - 1e-12)) continue;
        if (!centringAllows(kind, h, k, l)) continue;
        const key = q.toPrecision(12);
        const old = byQ.get(key);
        if (!old) byQ.set(key, { hkl: [h, k, l], dNm: 1 / Math.sqrt(q), q });
      }
    }
  }
  return [...byQ.values()].sort((x, y) => x.q - y.q);
}

/**
 * Integer triples (h, k, l) with h² + k² + l² = n that a cubic lattice's centring allows: the multiplicities of every family of reflections at that d, summed.
 * @param kind a cubic lattice kind
 * @param n h² + k² + l²
 * @returns the multiplicity of the line (0 when the centring allows no triple)
 */
export function cubicMultiplicity(kind: LatticeKind, n: number): number {
  if (!kind.startsWith('cubic')) throw new RangeError(`cubicMultiplicity needs a cubic lattice, got ${kind}`);
  if (!(Number.isInteger(n) && n >= 1)) throw new RangeError(`h² + k² + l² must be a positive integer, got ${n}`);
  const m = Math.floor(Math.sqrt(n));
  let count = 0;
  for (let h = -m; h <= m; h++) for (let k = -m; k <= m; k++) {
    const r = n - h * h - k * k;
    if (r < 0) continue;
    const l = Math.round(Math.sqrt(r));
    if (l * l !== r) continue;
    for (const ll of l === 0 ? [0] : [l, -l]) if (centringAllows(kind, Math.abs(h), Math.abs(k), Math.abs(ll))) count++;
  }
  return count;
}
