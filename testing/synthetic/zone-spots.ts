/**
 * Seeded synthetic spot lists of crystals seen along a zone axis, with known truth, for the spot
 * indexing tests and benchmark: the zone's strongest reflections as a power spectrum of a lattice
 * image shows them (one of each Friedel pair, d ≥ a resolution limit), with a calibration error
 * and measurement scatter in d and direction.
 */
import { zoneSpots, type ZonePhase, type ZoneSpot } from '../../src/diffraction/zone-axis';
import { rng } from '../random';

/** Options of syntheticZoneSpots. */
export interface ZoneSpotOptions {
  /** Resolution limit: smallest d shown, nm (default 0.12). */
  dMinNm?: number;
  /** Most spots kept, largest d first (default 6). */
  maxSpots?: number;
  /** Relative standard scatter of d (default 0.003) and a common calibration factor error (default 0.005). */
  dRelSigma?: number;
  calibrationRelError?: number;
  /** Standard scatter of the directions, degrees (default 0.5). */
  angleSigmaDeg?: number;
  /** Image mirrored (default false). */
  mirrored?: boolean;
}

/**
 * Spots of a phase along [uvw], rotated at random in the image plane.
 * @param phase the structure
 * @param uvw the zone axis
 * @param seed the seed
 * @param options limits and scatter
 * @returns the spots, each with its true hkl
 */
export function syntheticZoneSpots(phase: ZonePhase, uvw: [number, number, number], seed: number, options: ZoneSpotOptions = {}): Array<ZoneSpot & { hkl: [number, number, number] }> {
  const r = rng(seed);
  const gauss = () => Math.sqrt(-2 * Math.log(Math.max(r(), 1e-300))) * Math.cos(2 * Math.PI * r());
  const rot = 360 * r();
  const all = zoneSpots(phase, uvw, rot, options.dMinNm ?? 0.12).filter((s) => s.intensity >= 0.5);
  // one of each Friedel pair: directions in [0, 180)
  const half = all.filter((s) => s.angleDeg < 180 - 1e-6);
  half.sort((a, b) => b.dNm - a.dNm || a.angleDeg - b.angleDeg);
  const kept = half.slice(0, options.maxSpots ?? 6);
  const cal = 1 + (options.calibrationRelError ?? 0.005) * (2 * r() - 1);
  const sd = options.dRelSigma ?? 0.003;
  const sa = options.angleSigmaDeg ?? 0.5;
  return kept.map((s) => {
    const d = s.dNm * cal * (1 + sd * gauss());
    const a = (options.mirrored ? -s.angleDeg : s.angleDeg) + sa * gauss();
    return { dNm: d, dUncNm: sd * s.dNm, angleDeg: ((a % 360) + 360) % 360, angleUncDeg: sa, hkl: s.hkl };
  });
}

/** Zone axes equivalent under the lattice's rotations and inversion (cubic: permutations and signs; tetragonal: u, v swapped and signed; hexagonal: the 6-fold about c). */
export function equivalentZones(kind: 'cubic' | 'tetragonal' | 'hexagonal', a: number[], b: number[]): boolean {
  const key = (v: number[]) => v.map(Math.abs);
  if (kind === 'cubic') return key(a).sort().join() === key(b).sort().join();
  if (kind === 'tetragonal') return Math.abs(a[2]) === Math.abs(b[2]) && key(a.slice(0, 2)).sort().join() === key(b.slice(0, 2)).sort().join();
  const orbit: number[][] = [];
  let v = [a[0], a[1]];
  for (let i = 0; i < 6; i++) {
    v = [v[0] - v[1], v[0]];
    orbit.push(v, [v[1], v[0]]);
  }
  return orbit.some((o) => [1, -1].some((s) => o[0] * s === b[0] && o[1] * s === b[1] && Math.abs(a[2]) === Math.abs(b[2])));
}

