/**
 * Indexing the spots of a power spectrum or an electron diffraction pattern with a known
 * structure: each spot's hkl, the zone axis [uvw] that the spots' d-spacings and the angles
 * between them require, the residuals, and the candidate zone axes ranked.
 */
import type { CifStructure } from './cif';
import { powderReflections } from './cif';
import { centringAllows, type LatticeCell } from './lattice';

/** A measured spot: its d-spacing and the direction of its reciprocal vector in the image. */
export interface ZoneSpot {
  /** d in nm and its standard uncertainty. */
  dNm: number;
  dUncNm: number;
  /** Direction of the spot (fringe normal) in degrees, counter-clockwise from +x as shown. */
  angleDeg: number;
  /** Standard uncertainty of the direction, degrees (default: the options' angleUncDeg). */
  angleUncDeg?: number;
}

/** A structure to index with: its cell and the reflections it allows (both signs). */
export interface ZonePhase {
  name: string;
  /** Direct cell: lengths in nm, angles in degrees. */
  cell: { aNm: number; bNm: number; cNm: number; alphaDeg: number; betaDeg: number; gammaDeg: number };
  /** Every allowed reflection in range (each hkl and its Friedel mate), with its relative intensity (0–100; kinematic). */
  reflections: Array<{ hkl: [number, number, number]; dNm: number; intensity: number }>;
}

/** Options of indexSpots. */
export interface ZoneAxisOptions {
  /** Relative d tolerance added to 3 standard uncertainties (default 0.02: a calibration good to about 1 %). */
  dRelTolerance?: number;
  /** Standard uncertainty of a spot direction when the spot gives none, degrees (default 1). */
  angleUncDeg?: number;
  /** Largest angle residual accepted, degrees (default 4). */
  angleToleranceDeg?: number;
  /** Candidates returned (default 5). */
  maxCandidates?: number;
  /** Reflections weaker than this (relative intensity, 0–100) are not offered (default 0.5). */
  minIntensity?: number;
}

/** One spot's assignment in a candidate zone. */
export interface SpotAssignment {
  spot: number;
  hkl: [number, number, number];
  dCalcNm: number;
  /** d measured − calculated, nm. */
  dResidualNm: number;
  /** Angle from the first spot measured − calculated, degrees (0 for the first spot). */
  angleResidualDeg: number;
}

/** A candidate zone axis. */
export interface ZoneCandidate {
  /** Zone axis [uvw] (smallest integers, first non-zero positive). */
  uvw: [number, number, number];
  /** Each spot's hkl (spots that fit no reflection of the zone are left out and listed in `unassigned`). */
  assignments: SpotAssignment[];
  unassigned: number[];
  /** χ² of the residuals over their uncertainties (d and angle), and per degree of freedom. */
  chi2: number;
  reducedChi2: number;
  /** Root-mean-square residuals. */
  rmsDResidualNm: number;
  rmsAngleResidualDeg: number;
  /** True when the spots match with the image mirrored (an odd number of reflections in the optics, or the camera read from behind). */
  mirrored: boolean;
}

/** Result of indexSpots. */
export interface ZoneAxisResult {
  phase: string;
  /** Candidates, best first: most spots assigned, then smallest χ², then the lowest-index zone. */
  candidates: ZoneCandidate[];
  /** True when the best two distinct candidates cannot be told apart (χ² within 2 of each other with the same spots). */
  ambiguous: boolean;
  notes: string[];
}

const RAD = Math.PI / 180;

/** Cartesian direct basis (rows a, b, c) of a cell: a along x, b in the xy plane. */
function directBasis(cell: ZonePhase['cell']): number[][] {
  const { aNm: a, bNm: b, cNm: c } = cell;
  const ca = Math.cos(cell.alphaDeg * RAD);
  const cb = Math.cos(cell.betaDeg * RAD);
  const cg = Math.cos(cell.gammaDeg * RAD);
  const sg = Math.sin(cell.gammaDeg * RAD);
  const cx = c * cb;
  const cy = (c * (ca - cb * cg)) / sg;
  const cz = Math.sqrt(Math.max(0, c * c - cx * cx - cy * cy));
  if (!(cz > 0)) throw new RangeError(`cell angles ${cell.alphaDeg}, ${cell.betaDeg}, ${cell.gammaDeg}° do not make a cell`);
  return [
    [a, 0, 0],
    [b * cg, b * sg, 0],
    [cx, cy, cz],
  ];
}

const cross = (u: number[], v: number[]) => [u[1] * v[2] - u[2] * v[1], u[2] * v[0] - u[0] * v[2], u[0] * v[1] - u[1] * v[0]];
const dot = (u: number[], v: number[]) => u[0] * v[0] + u[1] * v[1] + u[2] * v[2];

/** Reciprocal basis (rows a*, b*, c*) of a direct basis. */
function reciprocalBasis(d: number[][]): number[][] {
  const vol = dot(d[0], cross(d[1], d[2]));
  return [cross(d[1], d[2]), cross(d[2], d[0]), cross(d[0], d[1])].map((r) => r.map((x) => x / vol));
}

const gcd = (a: number, b: number): number => (b === 0 ? Math.abs(a) : gcd(b, a % b));

/** [uvw] of the zone of two reflections: h1 × h2, reduced, first non-zero positive. */
function zoneOf(h1: number[], h2: number[]): [number, number, number] | null {
  const z = cross(h1, h2);
  const g = gcd(gcd(z[0], z[1]), z[2]);
  if (g === 0) return null;
  let out = z.map((v) => v / g);
  const first = out.find((v) => v !== 0)!;
  if (first < 0) out = out.map((v) => -v);
  return [out[0] + 0, out[1] + 0, out[2] + 0];
}

/**
 * A structure's reflections for spot indexing, from a parsed structure file: the powder
 * reflections (systematic absences applied, kinematic intensities) expanded to every symmetry
 * equivalent and its Friedel mate.
 * @param structure a parsed structure file
 * @param dMinNm smallest d (default 0.1 nm)
 * @returns the phase
 */
export function zonePhaseFromStructure(structure: CifStructure, dMinNm = 0.1): ZonePhase {
  const cell = {
    aNm: structure.cell.aNm.value,
    bNm: structure.cell.bNm.value,
    cNm: structure.cell.cNm.value,
    alphaDeg: structure.cell.alphaDeg.value,
    betaDeg: structure.cell.betaDeg.value,
    gammaDeg: structure.cell.gammaDeg.value,
  };
  const refl: ZonePhase['reflections'] = [];
  const seen = new Set<string>();
  for (const r of powderReflections(structure, { dMinNm })) {
    for (const op of structure.symops) {
      // hkl transforms with the transpose of the rotation: h' = h·R
      const h = [0, 1, 2].map((j) => r.hkl[0] * op.r[j] + r.hkl[1] * op.r[3 + j] + r.hkl[2] * op.r[6 + j]);
      for (const s of [1, -1]) {
        const hk = h.map((v) => s * v + 0) as [number, number, number];
        const key = hk.join(',');
        if (seen.has(key)) continue;
        seen.add(key);
        refl.push({ hkl: hk, dNm: r.dNm, intensity: r.intensity });
      }
    }
  }
  return { name: structure.name, cell, reflections: refl };
}

/**
 * A phase from a lattice of the indexer (centring extinctions only, every allowed reflection of
 * intensity 100), optionally with further conditions (e.g. the diamond glide).
 * @param name the phase's name
 * @param cell the lattice and its cell
 * @param dMinNm smallest d
 * @param allows further reflection conditions
 * @returns the phase
 */
export function zonePhaseFromLattice(name: string, cell: LatticeCell, dMinNm: number, allows?: (h: number, k: number, l: number) => boolean): ZonePhase {
  const hex = cell.kind.startsWith('hexagonal');
  const c = cell.kind.startsWith('cubic') ? cell.aNm : cell.cNm;
  if (cell.kind === 'lamellar') throw new RangeError('a lamellar stack has no zone axes: give a crystal');
  if (!(cell.aNm > 0 && cell.aNm < 100) || !(c > 0 && c < 100)) throw new RangeError(`cell a ${cell.aNm} nm, c ${c} nm is not plausible`);
  if (!(dMinNm > 0)) throw new RangeError(`dMinNm must be positive, got ${dMinNm}`);
  const z: ZonePhase['cell'] = { aNm: cell.aNm, bNm: cell.aNm, cNm: c, alphaDeg: 90, betaDeg: 90, gammaDeg: hex ? 120 : 90 };
  const rec = reciprocalBasis(directBasis(z));
  const hMax = Math.ceil(cell.aNm / dMinNm) + 1;
  const lMax = Math.ceil(c / dMinNm) + 1;
  if ((2 * hMax + 1) ** 2 * (2 * lMax + 1) > 3e6) throw new RangeError(`d ≥ ${dMinNm} nm gives too many reflections for this cell: raise dMinNm`);
  const refl: ZonePhase['reflections'] = [];
  for (let h = -hMax; h <= hMax; h++) for (let k = -hMax; k <= hMax; k++) for (let l = -lMax; l <= lMax; l++) {
    if (h === 0 && k === 0 && l === 0) continue;
    const g = [0, 1, 2].map((j) => h * rec[0][j] + k * rec[1][j] + l * rec[2][j]);
    const d = 1 / Math.sqrt(dot(g, g));
    if (d < dMinNm) continue;
    if (!centringAllows(cell.kind, h, k, l)) continue;
    if (allows && !allows(h, k, l)) continue;
    refl.push({ hkl: [h, k, l], dNm: d, intensity: 100 });
  }
  return { name, cell: z, reflections: refl };
}

/**
 * Indexes spots with a structure: for every pair of reflections that matches the first two
 * spots in d and in the angle between them, the zone axis is their cross product; every other
 * spot is then matched to a reflection of that zone by d and by its angle from the first spot.
 * Candidates are ranked by the spots assigned, then by χ² (d and angle residuals over their
 * uncertainties), then by the lowest-index zone; symmetry-equivalent zones (the same d's and
 * angles) are reported once.
 *
 * @param spots at least two spots whose directions differ by more than 5° (mod 180°)
 * @param phase the structure's reflections
 * @param options tolerances
 * @returns ranked candidate zone axes with each spot's hkl and residuals
 * @throws RangeError for fewer than two usable spots or a bad value, naming it
 * Notes: a spot and its Friedel mate are one measurement: give either; directions are compared
 * modulo 180° through the mate. Both handednesses of the image are tried (mirrored flag).
 * Reference: the standard zone-axis method, e.g. Williams & Carter, Transmission Electron
 * Microscopy, 2nd ed. (2009), ch. 18 (indexing spot patterns), and Edington (1975).
 */
export function indexSpots(spots: ZoneSpot[], phase: ZonePhase, options: ZoneAxisOptions = {}): ZoneAxisResult {
  const relTol = options.dRelTolerance ?? 0.02;
  const angU = options.angleUncDeg ?? 1;
  const angTol = options.angleToleranceDeg ?? 4;
  const maxC = options.maxCandidates ?? 5;
  const minI = options.minIntensity ?? 0.5;
  if (!(relTol >= 0 && relTol < 0.5)) throw new RangeError(`dRelTolerance must be in [0, 0.5), got ${relTol}`);
  if (!(angU > 0)) throw new RangeError(`angleUncDeg must be positive, got ${angU}`);
  if (!(angTol > 0 && angTol <= 45)) throw new RangeError(`angleToleranceDeg must be in (0, 45], got ${angTol}`);
  spots.forEach((s, i) => {
    if (!(s.dNm > 0 && s.dNm < 100)) throw new RangeError(`spot ${i + 1}: d ${s.dNm} nm is not plausible`);
    if (!(s.dUncNm >= 0)) throw new RangeError(`spot ${i + 1}: d uncertainty ${s.dUncNm} must be ≥ 0`);
    if (!Number.isFinite(s.angleDeg)) throw new RangeError(`spot ${i + 1}: angle ${s.angleDeg} is not a number`);
  });
  if (spots.length < 2) throw new RangeError(`a zone axis needs at least two spots, got ${spots.length}`);
  const notes: string[] = [];
  const rec = reciprocalBasis(directBasis(phase.cell));
  const dir = directBasis(phase.cell);
  const refl = phase.reflections.filter((r) => r.intensity >= minI).map((r) => ({ ...r, g: [0, 1, 2].map((j) => r.hkl[0] * rec[0][j] + r.hkl[1] * rec[1][j] + r.hkl[2] * rec[2][j]) }));
  const sd = (s: ZoneSpot) => Math.hypot(s.dUncNm, 0.25 * relTol * s.dNm);
  const matchesD = (s: ZoneSpot, d: number) => Math.abs(d - s.dNm) <= 3 * s.dUncNm + relTol * s.dNm;
  const cands = spots.map((s) => refl.filter((r) => matchesD(s, r.dNm)));
  // reference spots: those whose direction is known within the angle tolerance first, then by fewest
  // candidates; the second of a pair is one whose direction differs by > 5° (mod 180). Several pairs
  // are tried (a spurious or smeared spot taken as the reference must not hide the zone: sampling
  // reference sets, Fischler & Bolles, Commun. ACM 24, 381 (1981))
  const vague = (i: number) => ((spots[i].angleUncDeg ?? angU) > angTol ? 1 : 0);
  const order = spots.map((_, i) => i).filter((i) => cands[i].length > 0).sort((a, b) => vague(a) - vague(b) || cands[a].length - cands[b].length);
  spots.forEach((s, i) => {
    if (cands[i].length === 0) notes.push(`spot ${i + 1} (d ${s.dNm.toPrecision(4)} nm) matches no reflection of ${phase.name} within ${(100 * relTol).toFixed(0)} % + 3σ`);
  });
  const mod180 = (a: number) => ((a % 180) + 180) % 180;
  const angDiff = (a: number, b: number) => {
    const d = (((a - b) % 360) + 540) % 360 - 180;
    return d;
  };
  const apart = (i: number, j: number) => Math.min(mod180(spots[j].angleDeg - spots[i].angleDeg), 180 - mod180(spots[j].angleDeg - spots[i].angleDeg)) > 5;
  const pairs: Array<[number, number]> = [];
  for (const i of order.slice(0, 3)) for (const j of order.filter((j) => j !== i && apart(i, j)).slice(0, 3)) pairs.push([i, j]);
  if (pairs.length === 0) {
    return { phase: phase.name, candidates: [], ambiguous: false, notes: [...notes, 'fewer than two spots in different directions match the structure: no zone axis'] };
  }
  const results = new Map<string, ZoneCandidate>();
  const signedAngle = (g1: number[], g2: number[], n: number[]) => Math.atan2(dot(cross(g1, g2), n), dot(g1, g2)) / RAD;
  for (const [i0, i1] of pairs) {
    for (const r0 of cands[i0]) {
      for (const r1 of cands[i1]) {
        const uvw = zoneOf(r0.hkl, r1.hkl);
        if (!uvw) continue;
        const nCart = [0, 1, 2].map((j) => uvw[0] * dir[0][j] + uvw[1] * dir[1][j] + uvw[2] * dir[2][j]);
        const nl = Math.sqrt(dot(nCart, nCart));
        const n = nCart.map((v) => v / nl);
        for (const mirror of [false, true]) {
          const sgn = mirror ? -1 : 1;
          const measured = (i: number) => sgn * angDiff(spots[i].angleDeg, spots[i0].angleDeg);
          // the second spot must agree in angle (its Friedel mate is also a candidate)
          if (Math.abs(angDiff(measured(i1), signedAngle(r0.g, r1.g, n))) > angTol) continue;
          const assignments: SpotAssignment[] = [];
          const unassigned: number[] = [];
          let chi2 = 0;
          spots.forEach((s, i) => {
            let best: SpotAssignment | null = null;
            let bestC = Infinity;
            const pool = i === i0 ? [r0] : cands[i];
            for (const r of pool) {
              if (r.hkl[0] * uvw[0] + r.hkl[1] * uvw[1] + r.hkl[2] * uvw[2] !== 0) continue;
              const da = i === i0 ? 0 : angDiff(measured(i), signedAngle(r0.g, r.g, n));
              if (Math.abs(da) > angTol) continue;
              const c = ((s.dNm - r.dNm) / sd(s)) ** 2 + (i === i0 ? 0 : (da / (s.angleUncDeg ?? angU)) ** 2);
              if (c < bestC) {
                bestC = c;
                best = { spot: i, hkl: r.hkl, dCalcNm: r.dNm, dResidualNm: s.dNm - r.dNm, angleResidualDeg: da };
              }
            }
            if (best) {
              assignments.push(best);
              chi2 += bestC;
            } else unassigned.push(i);
          });
          const key = `${assignments.length}|${[...assignments].map((a) => a.dCalcNm.toPrecision(5) + ':' + Math.round(a.angleResidualDeg * 10)).sort().join(',')}|${Math.round(nl * 1e4)}`;
          const dof = Math.max(1, 2 * assignments.length - 1 - 1);
          const cand: ZoneCandidate = {
            uvw,
            assignments,
            unassigned,
            chi2,
            reducedChi2: chi2 / dof,
            rmsDResidualNm: Math.sqrt(assignments.reduce((s, a) => s + a.dResidualNm ** 2, 0) / assignments.length),
            rmsAngleResidualDeg: Math.sqrt(assignments.reduce((s, a) => s + a.angleResidualDeg ** 2, 0) / Math.max(1, assignments.length - 1)),
            mirrored: mirror,
          };
          const old = results.get(key);
          if (!old || better(cand, old) < 0) results.set(key, cand);
        }
      }
    }
  }
  const all = [...results.values()].sort(better);
  // one candidate per zone axis (its best assignment)
  const seenZone = new Set<string>();
  const distinct = all.filter((c) => {
    const k = c.uvw.join(',');
    if (seenZone.has(k)) return false;
    seenZone.add(k);
    return true;
  });
  // symmetry-equivalent zones give the same spots, d's and angles: only the lowest-index one is kept
  const shown: ZoneCandidate[] = [];
  for (const c of distinct) {
    const sig = c.assignments.map((a) => a.dCalcNm.toPrecision(5)).sort().join(',') + '|' + c.chi2.toPrecision(6);
    if (shown.some((s) => s.assignments.map((a) => a.dCalcNm.toPrecision(5)).sort().join(',') + '|' + s.chi2.toPrecision(6) === sig)) continue;
    shown.push(c);
  }
  const top = shown.slice(0, maxC);
  const ambiguous = top.length > 1 && top[1].assignments.length === top[0].assignments.length && top[1].chi2 - top[0].chi2 < 2;
  if (ambiguous) notes.push(`zone axes [${top[0].uvw.join(' ')}] and [${top[1].uvw.join(' ')}] fit about equally well (Δχ² ${(top[1].chi2 - top[0].chi2).toFixed(2)}): more spots, or a tilt, would tell them apart`);
  if (top.length === 0) notes.push('no zone axis explains two spots with their angle');
  return { phase: phase.name, candidates: top, ambiguous, notes };
}

/** Ranking: more spots assigned, then smaller χ², then lower index sum. */
function better(a: ZoneCandidate, b: ZoneCandidate): number {
  if (a.assignments.length !== b.assignments.length) return b.assignments.length - a.assignments.length;
  if (Math.abs(a.chi2 - b.chi2) > 1e-9 * Math.max(1, a.chi2)) return a.chi2 - b.chi2;
  const s = (c: ZoneCandidate) => Math.abs(c.uvw[0]) + Math.abs(c.uvw[1]) + Math.abs(c.uvw[2]);
  if (s(a) !== s(b)) return s(a) - s(b);
  return (a.mirrored ? 1 : 0) - (b.mirrored ? 1 : 0);
}

/**
 * The spots a zone would show: its reflections in the image plane with their directions, for
 * synthetic tests and for drawing the expected pattern.
 * @param phase the structure
 * @param uvw the zone axis
 * @param rotationDeg in-plane rotation of the first reflection's direction
 * @param dMinNm smallest d shown
 * @returns each reflection of the zone with d and direction (degrees, counter-clockwise)
 */
export function zoneSpots(phase: ZonePhase, uvw: [number, number, number], rotationDeg: number, dMinNm: number): Array<{ hkl: [number, number, number]; dNm: number; angleDeg: number; intensity: number }> {
  const rec = reciprocalBasis(directBasis(phase.cell));
  const dir = directBasis(phase.cell);
  const nCart = [0, 1, 2].map((j) => uvw[0] * dir[0][j] + uvw[1] * dir[1][j] + uvw[2] * dir[2][j]);
  const nl = Math.sqrt(dot(nCart, nCart));
  const n = nCart.map((v) => v / nl);
  const inZone = phase.reflections.filter((r) => r.dNm >= dMinNm && r.hkl[0] * uvw[0] + r.hkl[1] * uvw[1] + r.hkl[2] * uvw[2] === 0);
  if (inZone.length === 0) return [];
  const gOf = (h: number[]) => [0, 1, 2].map((j) => h[0] * rec[0][j] + h[1] * rec[1][j] + h[2] * rec[2][j]);
  const ref = [...inZone].sort((a, b) => b.dNm - a.dNm)[0];
  const g0 = gOf(ref.hkl);
  return inZone.map((r) => {
    const g = gOf(r.hkl);
    const ang = Math.atan2(dot(cross(g0, g), n), dot(g0, g)) / RAD;
    return { hkl: r.hkl, dNm: r.dNm, angleDeg: ((rotationDeg + ang) % 360 + 360) % 360, intensity: r.intensity };
  });
}

/** Built-in phases for spot indexing, with the source of each cell. */
export const BUILT_IN_PHASES: ReadonlyArray<{ name: string; cell: LatticeCell; allows?: (h: number, k: number, l: number) => boolean; source: string }> = [
  { name: 'Si', cell: { kind: 'cubic-F', aNm: 0.5431020511, cNm: 0.5431020511 }, allows: (h, k, l) => ([h, k, l].every((v) => v % 2 === 0) ? (h + k + l) % 4 === 0 : true), source: 'CODATA 2018 lattice parameter; diamond glide (ITC A, Fd-3m)' },
  { name: 'LaB6', cell: { kind: 'cubic-P', aNm: 0.4156826, cNm: 0.4156826 }, source: 'NIST SRM 660c certificate' },
  { name: 'Au', cell: { kind: 'cubic-F', aNm: 0.40782, cNm: 0.40782 }, source: 'fcc, a from memory (handbook value 0.4078 nm)' },
  { name: 'Al', cell: { kind: 'cubic-F', aNm: 0.40495, cNm: 0.40495 }, source: 'fcc, a from memory (handbook value 0.4050 nm)' },
  { name: 'Cu', cell: { kind: 'cubic-F', aNm: 0.36149, cNm: 0.36149 }, source: 'fcc, a from memory (handbook value 0.3615 nm)' },
  { name: 'alpha-Fe', cell: { kind: 'cubic-I', aNm: 0.28665, cNm: 0.28665 }, source: 'bcc, a from memory (handbook value 0.2867 nm)' },
];
