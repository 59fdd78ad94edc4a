/**
 * Two-axis (affine) calibration from a known lattice: the 2 × 2 metric of the pixel grid — nm per
 * pixel along x and along y and the shear between them — fitted to two or more non-parallel
 * lattice spots of known spacings and angles, with its uncertainty. The result is an ordinary
 * Calibration (nmPerPx, nmPerPxY, shearDeg) applied late by the measurement record
 * (nmPerPxAlong in src/measure/measurement.ts), so every period in every direction converts
 * through the same metric.
 */
import type { Calibration, CalibrationUncertaintyPart } from '../image/grey-image';
import { makeCalibration } from './calibration';
import { nmPerPxAlong } from '../measure/measurement';

/** A measured lattice spot of a power spectrum: a fringe period and the direction of its normal. */
export interface LatticeSpot {
  /** Period in px. */
  periodPx: number;
  /** Direction of the fringe normal, degrees counter-clockwise from +x as shown (y up), in [0, 180). */
  angleDeg: number;
  /** Standard uncertainty of the period, px (statistical and local variation combined). */
  uPeriodPx: number;
  /** Standard uncertainty of the direction, degrees (0 when not estimated: 0.5 × uPeriod/period rad is used). */
  uAngleDeg?: number;
}

/**
 * A lattice seen along a zone axis, as a two-dimensional reciprocal lattice: two basis
 * reflections (spacings and the angle between their plane normals). Every spot of the projection
 * is h·g₁ + k·g₂.
 */
export interface ProjectedLattice {
  /** Short stable id, e.g. 'si-110'. */
  id: string;
  /** Readable name, e.g. "Si [110]". */
  name: string;
  /** The first basis reflection: its spacing (nm) and name. */
  d1Nm: number;
  label1: string;
  /** The second basis reflection. */
  d2Nm: number;
  label2: string;
  /** Angle between the two plane normals, degrees (0–180). */
  angleDeg: number;
  /** Relative standard uncertainty of the spacings (the lattice parameter's; a scale common to all spots). */
  relUncertainty: number;
  /** Where the values come from. */
  source: string;
  /** 'published', 'computed' from a published parameter, or 'from memory' (then a conservative uncertainty). */
  status: 'published' | 'computed' | 'from memory';
  /** How the basis follows from the cell. */
  derivation: string;
}

const cubic = (a: number, h: number, k: number, l: number) => a / Math.hypot(h, k, l);
const angleBetween = (p: number[], q: number[]) => (180 / Math.PI) * Math.acos((p[0] * q[0] + p[1] * q[1] + p[2] * q[2]) / (Math.hypot(p[0], p[1], p[2]) * Math.hypot(q[0], q[1], q[2])));

/** Silicon, ideal crystal, nm (CODATA 2018: 0.5431020511(89) nm). */
const SI_A = 0.5431020511;
/** Gold, room temperature, nm (from memory; reference-values §6). */
const AU_A = 0.40782;
/** Aluminium, room temperature, nm (from memory; reference-values §6). */
const AL_A = 0.40495;
/** Graphite a, nm (from memory; the COD 1200017 cell of 1924 gives 0.247 nm). */
const GRAPHITE_A = 0.2464;

/** The built-in zone-axis projections, for two-axis calibration. */
export const PROJECTED_LATTICES: readonly ProjectedLattice[] = Object.freeze([
  {
    id: 'si-110',
    name: 'Si [110]',
    d1Nm: cubic(SI_A, 1, 1, 1), label1: '(1-11)',
    d2Nm: cubic(SI_A, 1, 1, 1), label2: '(1-1-1)',
    angleDeg: angleBetween([1, -1, 1], [1, -1, -1]),
    relUncertainty: 0.0000000089 / SI_A,
    source: 'a = 0.5431020511(89) nm, CODATA 2018 (ideal crystal)',
    status: 'computed',
    derivation: 'cubic d = a/√(h²+k²+l²); g₁ = (1-11), g₂ = (1-1-1) ⟂ [110], 70.53° apart; g₁ + g₂ = (2-20)',
  },
  {
    id: 'si-001',
    name: 'Si [001]',
    d1Nm: cubic(SI_A, 2, 2, 0), label1: '(220)',
    d2Nm: cubic(SI_A, 2, 2, 0), label2: '(2-20)',
    angleDeg: 90,
    relUncertainty: 0.0000000089 / SI_A,
    source: 'a = 0.5431020511(89) nm, CODATA 2018 (ideal crystal)',
    status: 'computed',
    derivation: 'cubic d = a/√(h²+k²+l²); g₁ = (220), g₂ = (2-20) ⟂ [001], 90° apart; {400} = g₁ ± g₂',
  },
  {
    id: 'au-001',
    name: 'Au [001]',
    d1Nm: cubic(AU_A, 2, 0, 0), label1: '(200)',
    d2Nm: cubic(AU_A, 0, 2, 0), label2: '(020)',
    angleDeg: 90,
    relUncertainty: 0.001,
    source: 'a = 0.40782 nm (from memory; reference-values §3, §6)',
    status: 'from memory',
    derivation: 'cubic; g₁ = (200), g₂ = (020) ⟂ [001]; {220} = g₁ ± g₂. u: 0.1 % of a (allowance for a value from memory)',
  },
  {
    id: 'au-110',
    name: 'Au [110]',
    d1Nm: cubic(AU_A, 1, 1, 1), label1: '(1-11)',
    d2Nm: cubic(AU_A, 1, 1, 1), label2: '(1-1-1)',
    angleDeg: angleBetween([1, -1, 1], [1, -1, -1]),
    relUncertainty: 0.001,
    source: 'a = 0.40782 nm (from memory; reference-values §3, §6)',
    status: 'from memory',
    derivation: 'cubic; g₁ = (1-11), g₂ = (1-1-1) ⟂ [110], 70.53° apart. u: 0.1 % of a (allowance for a value from memory)',
  },
  {
    id: 'al-001',
    name: 'Al [001]',
    d1Nm: cubic(AL_A, 2, 0, 0), label1: '(200)',
    d2Nm: cubic(AL_A, 0, 2, 0), label2: '(020)',
    angleDeg: 90,
    relUncertainty: 0.001,
    source: 'a = 0.40495 nm at room temperature (handbook value, from memory; reference-values §6)',
    status: 'from memory',
    derivation: 'cubic; g₁ = (200), g₂ = (020) ⟂ [001]; {220} = g₁ ± g₂. u: 0.1 % of a (allowance for a value from memory)',
  },
  {
    id: 'graphite-001',
    name: 'graphite [001]',
    d1Nm: (GRAPHITE_A * Math.sqrt(3)) / 2, label1: '(100)',
    d2Nm: (GRAPHITE_A * Math.sqrt(3)) / 2, label2: '(010)',
    angleDeg: 60,
    relUncertainty: 0.002,
    source: 'a = 0.2464 nm (from memory; COD 1200017, 1924, gives 0.247 nm)',
    status: 'from memory',
    derivation: 'hexagonal d₁₀₀ = a√3/2; a* and b* 60° apart; (110) = g₁ + g₂ (d = a/2). u: 0.2 % (allowance for a value from memory)',
  },
]);

/** Looks a projection up by id; throws, naming the id and the known ones, when it is not listed. */
export function projectedLattice(id: string): ProjectedLattice {
  const p = PROJECTED_LATTICES.find((x) => x.id === id);
  if (!p) throw new RangeError(`unknown zone-axis lattice '${id}' (known: ${PROJECTED_LATTICES.map((x) => x.id).join(', ')})`);
  return p;
}

/**
 * A two-dimensional cell the user enters: two spacings and the angle between their plane
 * normals, each with its standard uncertainty.
 * @returns a ProjectedLattice whose relUncertainty is the larger relative spacing uncertainty
 * @throws RangeError naming the bad value
 */
export function userLattice(d1Nm: number, u1Nm: number, d2Nm: number, u2Nm: number, angleDeg: number): ProjectedLattice {
  for (const [n, v] of [['d1Nm', d1Nm], ['d2Nm', d2Nm]] as const) if (!(v > 0) || !Number.isFinite(v)) throw new RangeError(`${n} must be a positive number of nm, got ${v}`);
  for (const [n, v] of [['u1Nm', u1Nm], ['u2Nm', u2Nm]] as const) if (!(v >= 0) || !Number.isFinite(v)) throw new RangeError(`${n} must be a non-negative number of nm (the spacing's standard uncertainty), got ${v}`);
  if (!(angleDeg > 5 && angleDeg < 175)) throw new RangeError(`the angle between the two plane normals must be between 5° and 175°, got ${angleDeg}`);
  return {
    id: 'user',
    name: `cell ${d1Nm} ± ${u1Nm} nm, ${d2Nm} ± ${u2Nm} nm, ${angleDeg}°`,
    d1Nm, label1: 'g₁', d2Nm, label2: 'g₂', angleDeg,
    relUncertainty: Math.max(u1Nm / d1Nm, u2Nm / d2Nm),
    source: 'entered by the user',
    status: 'published',
    derivation: 'two spacings and the angle between their plane normals, as entered',
  };
}

/** A spot assigned to a reflection h·g₁ + k·g₂ of the lattice. */
export interface IndexedSpot {
  spot: LatticeSpot;
  h: number;
  k: number;
  /** The reflection's spacing, nm. */
  dNm: number;
  /** Its reciprocal vector in an orthonormal frame with g₁ along x, nm⁻¹. */
  g: [number, number];
}

/**
 * The lattice spots of a measurement: its unflagged periodicities, strongest first.
 * @param periodicities a measurement's periods (periodPx, angleDeg, u parts, uAngleDeg)
 * @returns spots with the period's statistical and local-variation parts combined, and a
 *   direction uncertainty that includes the same relative local variation in radians
 * Notes: a distortion that varies over the region changes fringe directions as much as spacings
 * (both are first-order in the local strain), so the local variation found in the periods is
 * counted in the directions too; without it the angles, measured to thousandths of a degree,
 * would claim a two-axis precision the region does not have.
 */
export function latticeSpotsOf(
  periodicities: readonly { periodPx: number; angleDeg: number; u: { statisticalPx: number; localVariationPx: number }; uAngleDeg: number; flags: readonly string[] }[],
): LatticeSpot[] {
  return periodicities
    .filter((p) => p.flags.length === 0)
    .map((p) => ({
      periodPx: p.periodPx,
      angleDeg: p.angleDeg,
      uPeriodPx: Math.max(1e-9, Math.hypot(p.u.statisticalPx, p.u.localVariationPx)),
      uAngleDeg: Math.hypot(p.uAngleDeg || 0, ((180 / Math.PI) * p.u.localVariationPx) / p.periodPx),
    }));
}

/** A spot's frequency in pixel coordinates (x along columns, y along rows down), cycles/px. */
function freq(s: LatticeSpot): [number, number] {
  const a = (s.angleDeg * Math.PI) / 180;
  return [Math.cos(a) / s.periodPx, -Math.sin(a) / s.periodPx];
}

/** The reciprocal basis of a projection in an orthonormal frame, nm⁻¹. */
function basis(l: ProjectedLattice): [[number, number], [number, number]] {
  const phi = (l.angleDeg * Math.PI) / 180;
  return [[1 / l.d1Nm, 0], [Math.cos(phi) / l.d2Nm, Math.sin(phi) / l.d2Nm]];
}

function acuteAngle(a: number, b: number): number {
  let d = Math.abs(a - b) % 180;
  if (d > 90) d = 180 - d;
  return d;
}

/**
 * Indexes spots against a projected lattice: the two strongest non-parallel spots are matched to
 * the pair of low-index reflections whose spacing ratio and angle they show (within the
 * distortion allowed), and every other spot is expressed in that pair.
 * @param spots measured spots, strongest first
 * @param lattice the projection
 * @param options largest relative and angular departure allowed (scan distortion), defaults 6 % and 4°
 * @returns the indexed spots (at least two, non-parallel), or an error message saying what is missing
 * Notes: a 2 × 2 change of basis; reflections up to index 3. Spot indexing by ratio and
 * interplanar angle (common practice in diffraction).
 */
export function indexSpots(
  spots: readonly LatticeSpot[],
  lattice: ProjectedLattice,
  options: { relTolerance?: number; angleToleranceDeg?: number } = {},
): { indexed: IndexedSpot[]; unindexed: LatticeSpot[] } | { error: string } {
  const relTol = options.relTolerance ?? 0.06;
  const angTol = options.angleToleranceDeg ?? 4;
  if (spots.length < 2) return { error: `${spots.length} spot${spots.length === 1 ? '' : 's'} measured: a two-axis calibration needs at least two non-parallel spots of the lattice` };
  const first = spots[0];
  const second = spots.find((s) => acuteAngle(s.angleDeg, first.angleDeg) >= 15);
  if (!second) return { error: `all ${spots.length} spots are parallel (within 15°): a two-axis calibration needs two non-parallel spot directions` };
  const [b1, b2] = basis(lattice);
  const refl: { h: number; k: number; g: [number, number] }[] = [];
  for (let h = -3; h <= 3; h++) {
    for (let k = -3; k <= 3; k++) {
      if (h === 0 && k === 0) continue;
      refl.push({ h, k, g: [h * b1[0] + k * b2[0], h * b1[1] + k * b2[1]] });
    }
  }
  const len = (g: [number, number]) => Math.hypot(g[0], g[1]);
  const dirDeg = (g: [number, number]) => (((Math.atan2(g[1], g[0]) * 180) / Math.PI) % 180 + 180) % 180;
  const ratio = first.periodPx / second.periodPx; // = |g2|/|g1|
  const measuredAngle = acuteAngle(first.angleDeg, second.angleDeg);
  let best: { r1: (typeof refl)[number]; r2: (typeof refl)[number]; score: number } | null = null;
  for (const r1 of refl) {
    for (const r2 of refl) {
      const ang = acuteAngle(dirDeg(r1.g), dirDeg(r2.g));
      if (ang < 15) continue;
      const relErr = Math.abs(len(r2.g) / len(r1.g) / ratio - 1);
      const angErr = Math.abs(ang - measuredAngle);
      if (relErr > relTol || angErr > angTol) continue;
      // low indices first, then the better fit
      const order = Math.abs(r1.h) + Math.abs(r1.k) + Math.abs(r2.h) + Math.abs(r2.k);
      const score = order + relErr / relTol + angErr / angTol;
      if (!best || score < best.score) best = { r1, r2, score };
    }
  }
  if (!best) return { error: `the two strongest spot directions (periods ${first.periodPx.toPrecision(4)} and ${second.periodPx.toPrecision(4)} px, ${measuredAngle.toFixed(1)}° apart) match no pair of reflections of ${lattice.name}: check the zone axis and the region` };
  const f1 = freq(first);
  const f2 = freq(second);
  const indexed: IndexedSpot[] = [];
  const unindexed: LatticeSpot[] = [];
  const det = f1[0] * f2[1] - f1[1] * f2[0];
  // a spot's direction has no sign (a spot and its Friedel mate): give r2 the sign that makes the
  // angle between r1 and r2 acute or obtuse as the image shows it, so that f1 ± f2 index as r1 ± r2
  // (a mirror between image and specimen changes neither lengths nor angles)
  const fdot = f1[0] * f2[0] + f1[1] * f2[1];
  const gdot = best.r1.g[0] * best.r2.g[0] + best.r1.g[1] * best.r2.g[1];
  const r2 = Math.sign(fdot) === Math.sign(gdot) || Math.abs(gdot) < 1e-12 ? best.r2 : { h: -best.r2.h, k: -best.r2.k, g: [-best.r2.g[0], -best.r2.g[1]] as [number, number] };
  for (const s of spots) {
    const f = freq(s);
    const alpha = (f[0] * f2[1] - f[1] * f2[0]) / det;
    const beta = (f1[0] * f[1] - f1[1] * f[0]) / det;
    // a spot and its Friedel mate are one; round to the nearest reflection
    const hk = [alpha * best.r1.h + beta * r2.h, alpha * best.r1.k + beta * r2.k];
    const h = Math.round(hk[0]);
    const k = Math.round(hk[1]);
    const off = Math.hypot(hk[0] - h, hk[1] - k);
    if ((h === 0 && k === 0) || off > 0.2) {
      unindexed.push(s);
      continue;
    }
    const g: [number, number] = [h * b1[0] + k * b2[0], h * b1[1] + k * b2[1]];
    indexed.push({ spot: s, h, k, dNm: 1 / len(g), g });
  }
  if (indexed.length < 2) return { error: `only ${indexed.length} spot could be indexed against ${lattice.name}` };
  return { indexed, unindexed };
}

/** The result of a two-axis fit. */
export interface AffineCalibration {
  calibration: Calibration;
  /** nm per px along x and along y, with standard uncertainties. */
  nmPerPxX: number;
  uNmPerPxX: number;
  nmPerPxY: number;
  uNmPerPxY: number;
  /** Shear (deviation of the pixel axes from a right angle on the specimen), degrees, and its standard uncertainty. */
  shearDeg: number;
  uShearDeg: number;
  /** Stretch sy/sx − 1 in per cent, and its standard uncertainty. */
  stretchPct: number;
  uStretchPct: number;
  /** Each spot after correction: its spacing through the fitted metric against the lattice's. */
  residuals: { label: string; periodPx: number; angleDeg: number; dNm: number; correctedNm: number; uCorrectedNm: number }[];
  /** Birge ratio of the fit (√(χ²/ν)); 1 when the fit has no redundancy. */
  birgeRatio: number;
  /** Equations used: spot lengths and pair angles. */
  equations: number;
}

/**
 * Fits the pixel metric to indexed spots (or spots of one known spacing).
 *
 * @param spots indexed spots (IndexedSpot[]: lengths and pair angles are used), or plain spots
 *   with one known spacing (then lengths only: at least three non-parallel spots)
 * @param scale the lattice's relative spacing uncertainty (a scale common to all spots) and its name
 * @param options which pair angles to use (default: all pairs of indexed spots)
 * @returns the two-axis calibration with its uncertainty and the spots' spacings after correction
 * @throws RangeError naming what is missing (too few spots, all parallel)
 * Notes: a fringe of frequency f (cycles/px, x along columns, y along rows) has |g|² = fᵀMf, M the
 * inverse of the pixel metric G = [[sx², sx·sy·sin γ], [sx·sy·sin γ, sy²]] (the convention of
 * nmPerPxAlong). Each spot gives fᵢᵀMfᵢ = 1/dᵢ² and each pair fᵢᵀMfⱼ = gᵢ·gⱼ, linear in the three
 * entries of M: weighted linear least squares, each equation weighted by its propagated standard
 * uncertainty (period and direction); the covariance is scaled by the Birge ratio² when above 1.
 * sx, sy, γ and their uncertainties follow from M by first-order propagation (GUM §5.1.2, numerical
 * derivatives). The calibration's relative uncertainty: the largest over directions of the fitted
 * scale's relative uncertainty, and the lattice's spacing uncertainty.
 * Reference: metric tensor of an oblique lattice; least squares, Birge, Phys. Rev. 40, 207 (1932).
 */
export function fitPixelMetric(
  spots: readonly IndexedSpot[] | { spots: readonly LatticeSpot[]; dNm: number },
  scale: { relUncertainty: number; name: string },
): AffineCalibration {
  if (!(scale.relUncertainty >= 0 && scale.relUncertainty < 1)) throw new RangeError(`the lattice's relative uncertainty must be in [0, 1), got ${scale.relUncertainty}`);
  const items: { f: [number, number]; s: LatticeSpot; g: [number, number] | null; dNm: number; label: string }[] = Array.isArray(spots)
    ? (spots as IndexedSpot[]).map((x) => ({ f: freq(x.spot), s: x.spot, g: x.g, dNm: x.dNm, label: `(${x.h},${x.k})` }))
    : (() => {
        const one = spots as { spots: readonly LatticeSpot[]; dNm: number };
        if (!(one.dNm > 0) || !Number.isFinite(one.dNm)) throw new RangeError(`the known spacing must be a positive number of nm, got ${one.dNm}`);
        return one.spots.map((s, i) => ({ f: freq(s), s, g: null, dNm: one.dNm, label: `spot ${i + 1}` }));
      })();
  for (const it of items) {
    if (!(it.s.periodPx > 0) || !Number.isFinite(it.s.periodPx)) throw new RangeError(`a spot's period must be a positive number of px, got ${it.s.periodPx}`);
    if (!(it.s.uPeriodPx > 0) || !Number.isFinite(it.s.uPeriodPx)) throw new RangeError(`a spot's period uncertainty must be a positive number of px, got ${it.s.uPeriodPx}`);
  }
  const withAngles = items.every((it) => it.g !== null);
  const dirs = items.map((it) => it.s.angleDeg);
  const distinct: number[] = [];
  for (const d of dirs) if (!distinct.some((e) => acuteAngle(d, e) < 10)) distinct.push(d);
  if (withAngles && distinct.length < 2) throw new RangeError(`the ${items.length} spots are parallel (within 10°): a two-axis calibration needs at least two non-parallel spots`);
  if (!withAngles && distinct.length < 3) {
    throw new RangeError(`${distinct.length} non-parallel spot direction${distinct.length === 1 ? '' : 's'} of one spacing: with a spacing alone, a two-axis calibration needs three (or give the lattice, whose angles make two enough)`);
  }
  // equations: rows (a, b, c) with a·m11 + b·m12 + c·m22 = y ± u
  const rows: { a: number; b: number; c: number; y: number; u: number }[] = [];
  const uAngRad = (s: LatticeSpot) => ((s.uAngleDeg && s.uAngleDeg > 0 ? s.uAngleDeg : (0.5 * 180 * s.uPeriodPx) / (Math.PI * s.periodPx)) * Math.PI) / 180;
  for (const it of items) {
    const [fx, fy] = it.f;
    const y = 1 / it.dNm ** 2;
    rows.push({ a: fx * fx, b: 2 * fx * fy, c: fy * fy, y, u: 2 * y * (it.s.uPeriodPx / it.s.periodPx) });
  }
  if (withAngles) {
    for (let i = 0; i < items.length; i++) {
      for (let j = i + 1; j < items.length; j++) {
        const p = items[i];
        const q = items[j];
        if (acuteAngle(p.s.angleDeg, q.s.angleDeg) < 10) continue;
        const gp = p.g!;
        const gq = q.g!;
        let dot = gp[0] * gq[0] + gp[1] * gq[1];
        // the measured pair's sign: the angle between the spots' frequency vectors in the image
        const fdot = p.f[0] * q.f[0] + p.f[1] * q.f[1];
        if (Math.sign(fdot) !== Math.sign(dot) && Math.abs(dot) > 1e-12) dot = -dot;
        const lp = Math.hypot(gp[0], gp[1]);
        const lq = Math.hypot(gq[0], gq[1]);
        const sinPhi = Math.sqrt(Math.max(0, 1 - (dot / (lp * lq)) ** 2));
        const u = Math.hypot(Math.abs(dot) * Math.hypot(p.s.uPeriodPx / p.s.periodPx, q.s.uPeriodPx / q.s.periodPx), lp * lq * sinPhi * Math.hypot(uAngRad(p.s), uAngRad(q.s)));
        rows.push({ a: p.f[0] * q.f[0], b: p.f[0] * q.f[1] + p.f[1] * q.f[0], c: p.f[1] * q.f[1], y: dot, u: Math.max(u, 1e-12) });
      }
    }
  }
  // weighted normal equations
  const N = [[0, 0, 0], [0, 0, 0], [0, 0, 0]];
  const r = [0, 0, 0];
  for (const e of rows) {
    const w = 1 / (e.u * e.u);
    const v = [e.a, e.b, e.c];
    for (let i = 0; i < 3; i++) {
      r[i] += w * v[i] * e.y;
      for (let j = 0; j < 3; j++) N[i][j] += w * v[i] * v[j];
    }
  }
  const cov = inverse3(N);
  if (!cov) throw new RangeError('the spots do not determine the metric (directions too close): measure spots in more directions');
  const m = [0, 1, 2].map((i) => cov[i][0] * r[0] + cov[i][1] * r[1] + cov[i][2] * r[2]);
  let chi2 = 0;
  for (const e of rows) chi2 += ((e.a * m[0] + e.b * m[1] + e.c * m[2] - e.y) / e.u) ** 2;
  const dof = rows.length - 3;
  const birge = dof > 0 ? Math.sqrt(chi2 / dof) : 1;
  const inflate = Math.max(1, birge) ** 2;
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) cov[i][j] *= inflate;
  const derived = (mm: number[]) => {
    const det = mm[0] * mm[2] - mm[1] * mm[1];
    const g11 = mm[2] / det;
    const g22 = mm[0] / det;
    const g12 = -mm[1] / det;
    const sx = Math.sqrt(g11);
    const sy = Math.sqrt(g22);
    return { sx, sy, gammaDeg: (Math.asin(Math.max(-1, Math.min(1, g12 / (sx * sy)))) * 180) / Math.PI };
  };
  const det = m[0] * m[2] - m[1] * m[1];
  if (!(det > 0) || !(m[0] > 0)) throw new RangeError('the fitted metric is not positive definite: the spots are inconsistent with the lattice (wrong zone axis or mis-indexed spots)');
  const d0 = derived(m);
  // first-order propagation by numerical derivatives
  const prop = (fn: (mm: number[]) => number): number => {
    const grad = [0, 1, 2].map((i) => {
      const h = 1e-6 * (Math.abs(m[i]) + 1e-9 * (Math.abs(m[0]) + Math.abs(m[2])));
      const up = [...m];
      const dn = [...m];
      up[i] += h;
      dn[i] -= h;
      return (fn(up) - fn(dn)) / (2 * h);
    });
    let v = 0;
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) v += grad[i] * cov[i][j] * grad[j];
    return Math.sqrt(Math.max(0, v));
  };
  const uSx = prop((mm) => derived(mm).sx);
  const uSy = prop((mm) => derived(mm).sy);
  const uGamma = prop((mm) => derived(mm).gammaDeg);
  const uStretch = prop((mm) => 100 * (derived(mm).sy / derived(mm).sx - 1));
  // the fitted scale's relative uncertainty, at its largest over directions (fringe normals)
  let relFit = 0;
  for (let t = 0; t < 180; t += 5) {
    const along = (mm: number[]) => {
      const d = derived(mm);
      return nmPerPxAlong({ nmPerPx: d.sx, nmPerPxY: d.sy, shearDeg: d.gammaDeg, relUncertainty: 0, source: 'standard', detail: '' }, 'normal', t);
    };
    relFit = Math.max(relFit, prop(along) / along(m));
  }
  const parts: CalibrationUncertaintyPart[] = [
    { name: `two-axis fit of ${items.length} spots (largest over directions)`, rel: relFit, type: 'A' },
    { name: `${scale.name}: spacing`, rel: scale.relUncertainty, type: 'B' },
  ];
  const stretchPct = 100 * (d0.sy / d0.sx - 1);
  const calibration = makeCalibration(
    d0.sx,
    'standard',
    `two-axis calibration on ${scale.name}, ${items.length} spots: ${fmt(d0.sx)} ± ${Number(uSx.toPrecision(2))} nm/px along x, ${fmt(d0.sy)} ± ${Number(uSy.toPrecision(2))} nm/px along y (stretch ${stretchPct.toFixed(3)} ± ${uStretch.toFixed(3)} %), shear ${d0.gammaDeg.toFixed(3)} ± ${uGamma.toFixed(3)}° (k = 1)`,
    parts,
    { nmPerPxY: d0.sy, shearDeg: Math.abs(d0.gammaDeg) < 1e-9 ? undefined : d0.gammaDeg },
  );
  const residuals = items.map((it) => {
    const geo = nmPerPxAlong(calibration, 'normal', it.s.angleDeg);
    return { label: it.label, periodPx: it.s.periodPx, angleDeg: it.s.angleDeg, dNm: it.dNm, correctedNm: it.s.periodPx * geo, uCorrectedNm: it.s.periodPx * geo * Math.hypot(it.s.uPeriodPx / it.s.periodPx, calibration.relUncertainty) };
  });
  return {
    calibration,
    nmPerPxX: d0.sx,
    uNmPerPxX: uSx,
    nmPerPxY: d0.sy,
    uNmPerPxY: uSy,
    shearDeg: d0.gammaDeg,
    uShearDeg: uGamma,
    stretchPct,
    uStretchPct: uStretch,
    residuals,
    birgeRatio: birge,
    equations: rows.length,
  };
}

function fmt(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

function inverse3(a: number[][]): number[][] | null {
  const [[a0, a1, a2], [b0, b1, b2], [c0, c1, c2]] = a;
  const det = a0 * (b1 * c2 - b2 * c1) - a1 * (b0 * c2 - b2 * c0) + a2 * (b0 * c1 - b1 * c0);
  const scale = Math.abs(a0 * b1 * c2) + 1e-300;
  if (!Number.isFinite(det) || Math.abs(det) < 1e-14 * scale) return null;
  return [
    [(b1 * c2 - b2 * c1) / det, (a2 * c1 - a1 * c2) / det, (a1 * b2 - a2 * b1) / det],
    [(b2 * c0 - b0 * c2) / det, (a0 * c2 - a2 * c0) / det, (a2 * b0 - a0 * b2) / det],
    [(b0 * c1 - b1 * c0) / det, (a1 * c0 - a0 * c1) / det, (a0 * b1 - a1 * b0) / det],
  ];
}

/**
 * Two-axis calibration of a region's spots against a zone-axis lattice: index, then fit.
 * @param spots the region's spots, strongest first (periods, directions, uncertainties)
 * @param lattice a built-in projection, its id, or a user cell (userLattice)
 * @returns the fit, or throws RangeError saying what is missing
 */
export function calibrateTwoAxis(spots: readonly LatticeSpot[], lattice: ProjectedLattice | string): AffineCalibration & { indexed: IndexedSpot[]; unindexed: LatticeSpot[] } {
  const l = typeof lattice === 'string' ? projectedLattice(lattice) : lattice;
  const ix = indexSpots(spots, l);
  if ('error' in ix) throw new RangeError(ix.error);
  const fit = fitPixelMetric(ix.indexed, { relUncertainty: l.relUncertainty, name: l.name });
  return { ...fit, indexed: ix.indexed, unindexed: ix.unindexed };
}
