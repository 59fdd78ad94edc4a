/**
 * Every edge-on stack of layers in an image, with its layer count, thickness, period, length,
 * orientation, outline and the confidence of its count.
 *
 * 1. Candidate axes: ridges of the scale-normalised Hessian over scale space (./ridges): a stack
 *    is a band darker than the film (mass-thickness contrast) or a band of fringes; crossing
 *    stacks are followed through the crossing, bent ones along their curvature. Once the
 *    image's periods are known, regions of coherent fringe energy at each period add candidates
 *    (./fringe-regions): stacks that show fringes but hardly darken the film.
 * 2. Along each axis, profiles across the stack follow its local normal (./stack-profile); the
 *    band where it lies is found on the profile averaged over its whole length, touching stacks
 *    being separate bands; a band holding a stack already measured and its touching neighbour,
 *    when it yields no stack, is measured again beyond the measured stack's band; a band that
 *    still yields none is, after the other looks, measured again on a straight axis along its
 *    own fringes (their direction within ±20° of the candidate's normal, found by projection).
 * 3. The layer period: given (e.g. from X-ray diffraction), or the peaks of the summed
 *    periodograms of all the candidates' profiles (one or more phases); each stack takes the
 *    period whose comb of layer lines fits it best and refines it from its own fringes; a band
 *    too faint at the image's period is tried within ±4 % of it, and a stack counted at a
 *    period p is tested against the image's finer phase near p/2 on its own axis (a comb of
 *    every other layer), or, when the image has none there, against its own fringes near p/2
 *    (searched down to the countable limit; a fundamental found so must clear that limit and
 *    pass the lattice test), and, once all are measured, against the fundamental the stacks
 *    counted at p share (their comb's evidence at p/2 over p, summed); a stack whose own refined
 *    period is off its phase's is counted at the phase's period unless its own fits clearly
 *    better (by Akaike's criterion: weak fringes trade a layer for a wider period).
 * 4. Layers are counted by fitting that comb on width-averaged profiles at several positions
 *    along the stack; the count is the most frequent one, and the share of positions that agree
 *    is its confidence. Mono- and bilayers are combs of one or two lines: found by their contrast.
 * 5. Rejected: a period below the smallest countable one (2.5 px) or outside the user's range, a
 *    two-dimensional lattice (the band is periodic along its axis as well, or its comb's lines go
 *    on, in phase, beyond both outer layers), a band without resolved layers (film texture), a
 *    band that does not persist along its axis, a short stack whose positions agree on no count,
 *    a faint comb alongside a stronger stack at its period (that stack's edge).
 */
import type { GreyImage } from '../image/grey-image';
import type { UncertaintyPx } from '../measure/measurement';
import { periodCandidates, profilePeriodogram } from './profile';
import { MIN_COUNTABLE_PERIOD_PX } from './limits';
import { polylineLength, resamplePolyline, ridgeAxes, type RidgeAxis } from './ridges';
import { TURN_MIN_LAYERS, turnedCandidate } from './fringe-direction';
import { fringeRegionAxes } from './fringe-regions';
import { acrossFringePower, bestPeriod, solve3, combContinues, combNearPeriod, edgeToEdge, fringePowerAt, indexAt, layersResolved, periodicAlongAxis, refinePeriod, secondFringeSetFills, splitBand } from './count';
import { acrossProfile, axisFrame, robustAcrossProfile, fitLayerComb, profileBands, smoothProfile, type AcrossProfile, type AxisFrame, type CombFit, type ProfileBand } from './stack-profile';

/** Review state of a sheet: automatic, accepted or rejected by the user, drawn by hand, or its count corrected by the user. */
export type SheetStatus = 'auto' | 'accepted' | 'rejected' | 'manual' | 'corrected';

export { MIN_COUNTABLE_PERIOD_PX };

/** Options for {@link detectSheets}. */
export interface AutoSheetOptions {
  /** The layer period, px, when known (e.g. from the basal X-ray reflection); default: found in the image. */
  periodPx?: number;
  /** Sheets with a period below this are rejected, px (default 2.5, the least that is countable). */
  minPeriodPx?: number;
  /** Sheets with a period above this are rejected, px (default 40). */
  maxPeriodPx?: number;
  /** Layers are dark lines ('dark', bright-field, default) or bright ones. */
  polarity?: 'dark' | 'bright';
  /** A box [x, y, width, height] in px that is not searched (e.g. the information strip under a scale bar). */
  exclude?: [number, number, number, number] | null;
  /** Shortest stack reported, px along its axis (default 30). */
  minLengthPx?: number;
  /** Profiles along each stack: one per this many px of its length, at least 3 and at most 9 (default 40). */
  positionSpacingPx?: number;
  /** Evidence (Δχ² of the comb over the bare background on the length-averaged profile) a stack needs (default 60). */
  minEvidence?: number;
}

/** One position along a stack where its layers were counted. */
export interface SheetPosition {
  /** Centre of the stack at this position, image px [x, y] (y = row). */
  centerPx: [number, number];
  /** Direction of the local layer normal, degrees in [0, 180), counter-clockwise from +x as shown. */
  angleDeg: number;
  /** Layer count here (null: no comb fitted). */
  layers: number | null;
  /** Evidence for a stack here (Δχ² over the bare background). */
  evidence: number;
}

/** A sheet (stack of layers) found automatically, or drawn or reviewed by the user. Lengths in px. */
export interface AutoSheet {
  /** Identifier unique within one detection run. */
  id: string;
  status: SheetStatus;
  /** Number of layers: the most frequent count over the positions. */
  layers: number;
  /** Thickness by the n·d convention (layers × period), px. */
  thicknessPx: number;
  /** Its standard uncertainties (k = 1) by part, px: the period's uncertainty times n; the spread of the positions' n·d over √positions. */
  uThicknessPx: UncertaintyPx;
  /** Edge-to-edge width of the band (where its darkening falls to half), px: the other convention; mean over the positions. */
  edgeToEdgePx: number;
  /** The layer period used, px, and its standard uncertainties. */
  periodPx: number;
  uPeriodPx: UncertaintyPx;
  /** Where the period came from: given by the user, refined from this stack's own fringes, or the image's period (thin stacks). */
  periodSource: 'given' | 'stack' | 'image';
  /** Direction of the layer normal at the centre, degrees in [0, 180), counter-clockwise from +x as shown (x right, y up). */
  angleDeg: number;
  /** Centre of the stack, image px [x, y] (y = row). */
  centerPx: [number, number];
  /** The stack's axis (middle of its thickness), image px, about 2 px apart. */
  axisPx: [number, number][];
  /** Outline polygon, image px: one edge along the axis, then the other back. */
  outlinePx: [number, number][];
  /** Length along the axis, px. */
  lengthPx: number;
  /** Share of the counted positions that agree with the count (0–1). */
  confidence: number;
  /** Evidence for the stack on its length-averaged profile (Δχ² over the bare background). */
  evidence: number;
  /** The positions where layers were counted. */
  positions: SheetPosition[];
  /** Notes on this sheet (e.g. a period near the sampling limit). */
  notes: string[];
}

/** A stack-like band that was not reported, with why. */
export interface RejectedBand {
  centerPx: [number, number];
  angleDeg: number;
  /** Its layer count and period where one was fitted. */
  layers: number | null;
  periodPx: number | null;
  reason: string;
}

/** One layer period of the image. */
export interface ImagePeriod {
  periodPx: number;
  /** 'given' by the user or 'found' in the image. */
  source: 'given' | 'found';
  /** Stacks that use it. */
  sheets: number;
}

/** The result of {@link detectSheets}. */
export interface AutoSheetsResult {
  sheets: AutoSheet[];
  /** Bands examined and not reported, with the reason (amorphous texture, crossed lattice, period out of range...). */
  rejected: RejectedBand[];
  /** The layer periods found in (or given for) the image. */
  periods: ImagePeriod[];
  /** Number of candidate axes examined. */
  candidates: number;
  /** A plain statement when nothing was found ('no stacks found'), else null. */
  message: string | null;
  /** The settings used (defaults resolved). */
  settings: Record<string, unknown>;
}

const DEG = 180 / Math.PI;

function screenAngleDeg(nx: number, ny: number): number {
  const a = Math.atan2(-ny, nx) * DEG;
  return ((a % 180) + 180) % 180;
}

function axialDiff(a: number, b: number): number {
  const d = Math.abs((((a - b) % 180) + 180) % 180);
  return Math.min(d, 180 - d);
}

function inBox(x: number, y: number, box: [number, number, number, number] | null | undefined): boolean {
  return !!box && x >= box[0] && x < box[0] + box[2] && y >= box[1] && y < box[1] + box[3];
}

/** Most frequent value; ties go to `prefer` when it is among them, else to the larger. */
function modeCount(v: number[], prefer: number): number {
  const counts = new Map<number, number>();
  for (const x of v) counts.set(x, (counts.get(x) ?? 0) + 1);
  const top = Math.max(...counts.values());
  const tied = [...counts].filter(([, c]) => c === top).map(([x]) => x);
  if (tied.includes(prefer)) return prefer;
  return Math.max(...tied);
}

/** A polyline shifted along its normals by offsets (one per point, or one for all). */
function shiftAxis(frame: AxisFrame, offset: (i: number) => number): [number, number][] {
  return frame.points.map((p, i) => [p[0] + offset(i) * frame.normals[i][0], p[1] + offset(i) * frame.normals[i][1]]);
}

/**
 * A coarse grid of the measured stacks' bands, to skip candidates that lie on one already
 * measured. A piece too short to be a stack by itself (shorter than 30 px or than its thickness)
 * covers its band only softly: a candidate on it is still measured (it may be the real, longer
 * stack), and kept only if it is long enough by itself.
 */
class Coverage {
  private cells = new Map<number, { sheet: number; angleDeg: number }[]>();
  /** Pieces whose coverage is soft. */
  private soft = new Set<number>();
  constructor(private cellPx: number) {}
  private key(x: number, y: number): number {
    return Math.floor(y / this.cellPx) * 100003 + Math.floor(x / this.cellPx);
  }
  add(sheet: number, frame: AxisFrame, centreOffset: number, halfWidth: number, angleAt: (i: number) => number, soft: boolean): void {
    if (soft) this.soft.add(sheet);
    for (let i = 0; i < frame.points.length; i++) {
      const [px, py] = frame.points[i];
      const [nx, ny] = frame.normals[i];
      for (let u = -halfWidth; u <= halfWidth; u += this.cellPx / 2) {
        const k = this.key(px + (centreOffset + u) * nx, py + (centreOffset + u) * ny);
        let list = this.cells.get(k);
        if (!list) this.cells.set(k, (list = []));
        if (!list.some((e) => e.sheet === sheet)) list.push({ sheet, angleDeg: angleAt(i) });
      }
    }
  }
  /** Share of the points that lie on one sheet of similar orientation (only pieces that cover firmly, when `firmOnly`), and that sheet. */
  covered(points: [number, number][], angleAt: (i: number) => number, toleranceDeg: number, firmOnly: boolean): { share: number; sheet: number } {
    const hits = new Map<number, number>();
    points.forEach((p, i) => {
      const list = this.cells.get(this.key(p[0], p[1]));
      if (!list) return;
      for (const e of list) if ((!firmOnly || !this.soft.has(e.sheet)) && axialDiff(e.angleDeg, angleAt(i)) < toleranceDeg) hits.set(e.sheet, (hits.get(e.sheet) ?? 0) + 1);
    });
    let best = -1;
    let bestN = 0;
    for (const [s, n] of hits) if (n > bestN) { best = s; bestN = n; }
    return { share: points.length ? bestN / points.length : 0, sheet: best };
  }
}

/** The length-averaged profile of a candidate, grown until its band has background on both sides. */
interface Survey {
  axis: RidgeAxis;
  frame: AxisFrame;
  profile: AcrossProfile;
  band: ProfileBand | null;
  others: ProfileBand[];
}

export function survey(image: GreyImage, axis: RidgeAxis, polarity: 'dark' | 'bright', periodPx: number | null, frame = axisFrame(axis.points)): Survey {
  const from = 0.1 * frame.lengthPx;
  const to = 0.9 * frame.lengthPx;
  const smoothPx = Math.max(1, 0.5 * (periodPx ?? MIN_COUNTABLE_PERIOD_PX));
  const widthGuess = 2.45 * axis.scalePx;
  let U = Math.min(150, Math.max(24, 1.5 * widthGuess + 10, periodPx ? 6 * periodPx : 0));
  for (let round = 0; ; round++) {
    const profile = robustAcrossProfile(image, frame, { fromPx: from, toPx: to, halfWidthPx: U });
    const dark = smoothProfile(profile.values, profile.weights, smoothPx / profile.binPx);
    const sets: ProfileBand[][] = [profileBands(profile, 2 * smoothPx, { polarity, maxBands: 3, minSignificance: 4, signal: dark })];
    if (periodPx) {
      // fringe energy: the profile minus its smoothed self (the fringes), squared and smoothed
      const r2 = new Float64Array(profile.values.length);
      for (let i = 0; i < r2.length; i++) r2[i] = Number.isFinite(dark[i]) && Number.isFinite(profile.values[i]) ? (profile.values[i] - dark[i]) ** 2 : NaN;
      const energy = smoothProfile(r2, profile.weights, smoothPx / profile.binPx);
      sets.push(profileBands(profile, 2 * smoothPx, { polarity: 'bright', maxBands: 3, minSignificance: 4, signal: energy }));
    }
    // the band on the axis (or the nearest), from the signal where it stands out more
    let band: ProfileBand | null = null;
    let others: ProfileBand[] = [];
    for (const bands of sets) {
      let near: ProfileBand | null = null;
      let bestD = Infinity;
      for (const b of bands) {
        const d = b.fromPx <= 0 && b.toPx >= 0 ? 0 : Math.min(Math.abs(b.fromPx), Math.abs(b.toPx));
        if (d < bestD) { bestD = d; near = b; }
      }
      if (near && bestD > Math.max(4, 0.5 * (near.toPx - near.fromPx))) near = null;
      if (near && (!band || near.significance > band.significance)) {
        band = near;
        others = bands.filter((q) => q !== near);
      }
    }
    const touches = band && (band.fromPx < -U + 6 || band.toPx > U - 6);
    if (!touches || round >= 2 || U >= 150) return { axis, frame, profile, band, others };
    U = Math.min(150, 2 * U);
  }
}

/**
 * The longest stretch of a band (offsets across the axis, px, in 1 px steps) whose lines along
 * the axis do not lie on a stack already measured; the band itself when none of it does.
 */
function uncoveredRun(band: { fromPx: number; toPx: number }, onMeasured: (u: number) => boolean): { fromPx: number; toPx: number } | null {
  let best: { fromPx: number; toPx: number } | null = null;
  let start: number | null = null;
  const n = Math.max(1, Math.ceil(band.toPx - band.fromPx));
  for (let k = 0; k <= n; k++) {
    const u = band.fromPx + ((band.toPx - band.fromPx) * k) / n;
    const free = !onMeasured(u);
    if (free && start === null) start = u;
    if ((!free || k === n) && start !== null) {
      const end = free ? u : band.fromPx + ((band.toPx - band.fromPx) * (k - 1)) / n;
      if (!best || end - start > best.toPx - best.fromPx) best = { fromPx: start, toPx: end };
      start = null;
    }
  }
  return best;
}

/** A stack measured from one candidate, before pieces of the same stack are merged. */
interface Piece {
  /** The stack's axis (middle of its thickness), image px. */
  axisPx: [number, number][];
  periodPx: number;
  /** Standard uncertainty of the period, px, and which part of the budget it is: the fit on the stack's own fringes (statistical), the spread of its phase's refined periods (local variation), or the periodograms' reading (method). */
  uPeriodPx: number;
  uPeriodPart: 'statisticalPx' | 'localVariationPx' | 'methodPx';
  periodSource: AutoSheet['periodSource'];
  /** Count on the length-averaged profile (breaks ties of the positions). */
  fitLayers: number;
  /** Counts at the positions where the stack was seen. */
  counted: number[];
  /** Edge-to-edge widths at those positions, px. */
  edges: number[];
  positions: SheetPosition[];
  evidence: number;
}

/**
 * The layer normal at the middle of an axis, from the chord over its middle third (at least 20 px):
 * on a circular arc a chord runs parallel to the tangent at its midpoint, and a chord does not
 * follow the kink where two pieces of a stack were joined across a crossing.
 */
function middleNormalDeg(frame: ReturnType<typeof axisFrame>): number {
  const half = Math.min(frame.lengthPx / 2, Math.max(10, frame.lengthPx / 6));
  const i0 = indexAt(frame, frame.lengthPx / 2 - half);
  const i1 = indexAt(frame, frame.lengthPx / 2 + half);
  const tx = frame.points[i1][0] - frame.points[i0][0];
  const ty = frame.points[i1][1] - frame.points[i0][1];
  const len = Math.hypot(tx, ty);
  if (!(len > 0)) {
    const mid = indexAt(frame, frame.lengthPx / 2);
    return screenAngleDeg(frame.normals[mid][0], frame.normals[mid][1]);
  }
  return screenAngleDeg(ty / len, -tx / len);
}

/**
 * A piece's sheet fields: the count is the most frequent over its positions, the confidence
 * the share that agree; thickness n·d with the period's uncertainty times n and the spread of
 * the positions' n·d over √positions; the outline is the axis ± half the thickness.
 */
function finishPiece(pc: Piece, minPeriodPx: number): Omit<AutoSheet, 'id'> {
  const frame = axisFrame(pc.axisPx.length >= 2 ? pc.axisPx : [pc.axisPx[0], pc.axisPx[0]]);
  const layers = modeCount(pc.counted, pc.fitLayers);
  const d = pc.periodPx;
  const thicknessPx = layers * d;
  const half = thicknessPx / 2;
  const nd = pc.counted.map((c) => c * d);
  const sdNd = nd.length > 1 ? Math.sqrt(nd.reduce((acc, v) => acc + (v - mean(nd)) ** 2, 0) / (nd.length - 1)) : 0;
  const mid = indexAt(frame, frame.lengthPx / 2);
  // the period's uncertainty, times n, in its own part of the budget
  const uPeriod = (n: number): UncertaintyPx => ({ statisticalPx: 0, localVariationPx: 0, methodPx: 0, [pc.uPeriodPart]: n * pc.uPeriodPx });
  const uPeriodTimesN = uPeriod(layers);
  const outlinePx: [number, number][] = [
    ...frame.points.map((q, i) => [q[0] + half * frame.normals[i][0], q[1] + half * frame.normals[i][1]] as [number, number]),
    ...frame.points.map((q, i) => [q[0] - half * frame.normals[i][0], q[1] - half * frame.normals[i][1]] as [number, number]).reverse(),
  ];
  const notes: string[] = [];
  if (d < minPeriodPx) notes.push(`period ${d.toFixed(2)} px is at the sampling limit (not significantly below ${minPeriodPx} px)`);
  if (layers <= 2 && pc.periodSource === 'image') notes.push("period taken from the image's thicker stacks (a stack this thin shows none of its own)");
  if (pc.periodSource === 'given') notes.push("the given period's own uncertainty is not included");
  return {
    status: 'auto',
    layers,
    thicknessPx,
    uThicknessPx: { ...uPeriodTimesN, localVariationPx: Math.hypot(uPeriodTimesN.localVariationPx, nd.length ? sdNd / Math.sqrt(nd.length) : 0) },
    edgeToEdgePx: pc.edges.length ? mean(pc.edges) : thicknessPx,
    periodPx: d,
    uPeriodPx: uPeriod(1),
    periodSource: pc.periodSource,
    angleDeg: middleNormalDeg(frame),
    centerPx: [frame.points[mid][0], frame.points[mid][1]],
    axisPx: frame.points,
    outlinePx,
    lengthPx: frame.lengthPx,
    confidence: agreement(pc.counted, pc.fitLayers),
    evidence: pc.evidence,
    positions: pc.positions,
    notes,
  };
}

/** Along-axis and signed normal offset of a point from a polyline extended straight beyond its ends. */
function polylineCoords(pts: [number, number][], x: number, y: number): { s: number; u: number } {
  let bestS = 0;
  let bestD2 = Infinity;
  let bestSign = 1;
  let cum = 0;
  const n = pts.length;
  for (let i = 0; i + 1 < n; i++) {
    const a = pts[i];
    const b = pts[i + 1];
    const ax = a[0];
    const ay = a[1];
    const dx = b[0] - ax;
    const dy = b[1] - ay;
    const len = Math.sqrt(dx * dx + dy * dy) || 1e-9;
    const tx = dx / len;
    const ty = dy / len;
    let t = (x - ax) * tx + (y - ay) * ty;
    if (i > 0 && t < 0) t = 0;
    if (i + 2 < n && t > len) t = len;
    const ex = x - (ax + t * tx);
    const ey = y - (ay + t * ty);
    const d2 = ex * ex + ey * ey;
    if (d2 < bestD2) {
      bestD2 = d2;
      bestS = cum + t;
      // +90° as shown: (ty, −tx) in image axes
      bestSign = ex * ty - ey * tx >= 0 ? 1 : -1;
    }
    cum += len;
  }
  return { s: bestS, u: bestSign * Math.sqrt(bestD2) };
}

/** Pieces whose ends lie further apart than this along the axis join only when their counts agree, px. */
export const FAR_JOIN_PX = 90;

/**
 * Joins pieces of one stack: the candidate axes break where another stack crosses, and a stack
 * may be met twice. Two pieces are one stack when their periods agree within 6 %, their counts
 * within one layer (the same count when either has one or two: one line is not two, and when
 * their ends lie more than {@link FAR_JOIN_PX} apart: a stack one layer thinner that far along
 * the same line is another stack), and the nearer end of each lies on the other's axis or its straight
 * extension (within a quarter of the thinner one's thickness plus half a period, and 12° in
 * direction), at most 90 px (a crossing stack may hide that much) or four thicknesses beyond it;
 * or, when short pieces extrapolated that far miss by their own direction's error, both axes lie
 * end to end within that tolerance of one gently bent line (a parabola fitted to both), with the
 * same count, chords within 12° and another piece crossing the gap between them. Closest
 * pairs first, repeated until none is left.
 */
function mergePieces(input: Piece[]): Piece[] {
  // pieces by id; pair gaps computed once, and again only for a newly merged piece
  const alive = new Map<number, Piece>();
  input.forEach((p, i) => alive.set(i, p));
  let nextId = input.length;
  const box = (p: Piece) => {
    let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
    for (const [x, y] of p.axisPx) { x0 = Math.min(x0, x); y0 = Math.min(y0, y); x1 = Math.max(x1, x); y1 = Math.max(y1, y); }
    const m = Math.max(90, 4 * pieceThickness(p));
    return [x0 - m, y0 - m, x1 + m, y1 + m];
  };
  const boxes = new Map<number, number[]>();
  for (const [i, p] of alive) boxes.set(i, box(p));
  const overlap = (a: number[], b: number[]) => a[0] <= b[2] && b[0] <= a[2] && a[1] <= b[3] && b[1] <= a[3];
  const gaps: { i: number; j: number; gap: number }[] = [];
  const pairWith = (i: number) => {
    const bi = boxes.get(i)!;
    for (const [j, q] of alive) {
      if (j === i || !overlap(bi, boxes.get(j)!)) continue;
      const g = mergeGap(alive.get(i)!, q, alive.values());
      if (g !== null) gaps.push({ i: Math.min(i, j), j: Math.max(i, j), gap: g });
    }
  };
  const ids = [...alive.keys()];
  for (const i of ids) {
    const bi = boxes.get(i)!;
    for (const j of ids) {
      if (j <= i || !overlap(bi, boxes.get(j)!)) continue;
      const g = mergeGap(alive.get(i)!, alive.get(j)!, alive.values());
      if (g !== null) gaps.push({ i, j, gap: g });
    }
  }
  for (;;) {
    let k = -1;
    for (let q = 0; q < gaps.length; q++) {
      const e = gaps[q];
      if (!alive.has(e.i) || !alive.has(e.j)) continue;
      if (k < 0 || e.gap < gaps[k].gap) k = q;
    }
    if (k < 0) break;
    const { i, j } = gaps[k];
    const merged = joinPieces(alive.get(i)!, alive.get(j)!);
    alive.delete(i);
    alive.delete(j);
    const id = nextId++;
    alive.set(id, merged);
    boxes.set(id, box(merged));
    pairWith(id);
  }
  return [...alive.values()];
}

/** The share of counts that agree with their most frequent one (a piece's confidence). */
function agreement(counted: number[], fitLayers: number): number {
  if (counted.length === 0) return 0;
  const n = modeCount(counted, fitLayers);
  return counted.filter((c) => c === n).length / counted.length;
}

function pieceThickness(p: Piece): number {
  return modeCount(p.counted, p.fitLayers) * p.periodPx;
}

/** The gap between two pieces of one stack, or null when they are not one stack. */
function mergeGap(a: Piece, b: Piece, others: Iterable<Piece> = []): number | null {
  if (Math.abs(a.periodPx - b.periodPx) > 0.06 * Math.max(a.periodPx, b.periodPx)) return null;
  const na = modeCount(a.counted, a.fitLayers);
  const nb = modeCount(b.counted, b.fitLayers);
  if (Math.abs(na - nb) > 1 || (Math.min(na, nb) <= 2 && na !== nb)) return null;
  const ta = pieceThickness(a);
  const tb = pieceThickness(b);
  const tol = 0.25 * Math.min(ta, tb) + 0.5 * Math.max(a.periodPx, b.periodPx) + 1.5;
  const maxGap = Math.max(90, 4 * Math.max(ta, tb));
  const la = polylineLength(a.axisPx);
  const lb = polylineLength(b.axisPx);
  // one lies mostly inside the other's band: the same stack met twice
  for (const [p, q, lp, tp] of [[a, b, la, ta], [b, a, lb, tb]] as const) {
    let inside = 0;
    let tried = 0;
    for (let k = 0; k < q.axisPx.length; k += 4) {
      const pt = q.axisPx[k];
      const c = polylineCoords(p.axisPx, pt[0], pt[1]);
      tried++;
      if (c.s >= -2 && c.s <= lp + 2 && Math.abs(c.u) <= tp / 2 + 0.5 * p.periodPx) inside++;
    }
    if (inside >= 0.6 * tried) return 0;
  }
  let gap = Infinity;
  for (const [p, q, lp] of [[a, b, la], [b, a, lb]] as const) {
    // q's points near its end closest to p, in p's coordinates
    const ends = [q.axisPx[0], q.axisPx[q.axisPx.length - 1]];
    for (let e = 0; e < 2; e++) {
      const end = ends[e];
      const c = polylineCoords(p.axisPx, end[0], end[1]);
      const beyond = c.s < 0 ? -c.s : c.s > lp ? c.s - lp : 0;
      if (beyond > maxGap || Math.abs(c.u) > tol) continue;
      // the direction of q near that end against p's at the nearest place
      // (a chord over a third of the piece, 10–30 px: the last few points of an axis may hook)
      const reach = Math.max(5, Math.min(15, Math.floor(q.axisPx.length / 3)));
      const k = e === 0 ? Math.min(q.axisPx.length - 1, reach) : Math.max(0, q.axisPx.length - 1 - reach);
      const inner = q.axisPx[k];
      const ci = polylineCoords(p.axisPx, inner[0], inner[1]);
      const dsq = Math.hypot(inner[0] - end[0], inner[1] - end[1]);
      if (dsq > 1 && Math.abs(ci.u - c.u) / dsq > Math.sin((12 * Math.PI) / 180)) continue;
      gap = Math.min(gap, beyond);
    }
  }
  // short pieces extrapolated far miss each other by their own direction's error: both axes
  // fitted together as one gently bent line (a parabola across their common chord) that passes
  // within the tolerance of every point join too, when their counts agree, their chords run within
  // 12° and another stack crosses the gap between them (what broke the axis; two stacks of a
  // dense field may also lie end to end)
  if (!Number.isFinite(gap) && na === nb && axialDiff(chordDeg(a.axisPx), chordDeg(b.axisPx)) < 12) {
    const joint = jointAxisGap(a.axisPx, b.axisPx, tol, maxGap);
    if (joint && [...others].some((r) => r !== a && r !== b && crossesGap(r, joint.ends, a.periodPx))) gap = joint.gapPx;
  }
  if (!Number.isFinite(gap)) return null;
  // far apart along one line, a count one layer off is another stack, not a piece of this one
  return gap > FAR_JOIN_PX && na !== nb ? null : gap;
}

/**
 * The gap between two axes that lie end to end on one gently bent line, or null: their points in
 * the frame of the chord between their far ends, fitted by least squares with a parabola across
 * it, all within `tolPx` of it; the axes must not overlap along the chord, and lie at most
 * `maxGapPx` apart.
 */
function jointAxisGap(a: [number, number][], b: [number, number][], tolPx: number, maxGapPx: number): { gapPx: number; ends: [[number, number], [number, number]] } | null {
  if (a.length < 2 || b.length < 2) return null;
  // the far ends: the pair of ends (one of each) furthest apart
  let far: [[number, number], [number, number]] = [a[0], b[0]];
  for (const p of [a[0], a[a.length - 1]]) for (const q of [b[0], b[b.length - 1]]) if (Math.hypot(p[0] - q[0], p[1] - q[1]) > Math.hypot(far[0][0] - far[1][0], far[0][1] - far[1][1])) far = [p, q];
  const chord = Math.hypot(far[1][0] - far[0][0], far[1][1] - far[0][1]);
  if (!(chord > 0)) return null;
  const ux = (far[1][0] - far[0][0]) / chord;
  const uy = (far[1][1] - far[0][1]) / chord;
  const frame = (p: [number, number]) => ({ t: (p[0] - far[0][0]) * ux + (p[1] - far[0][1]) * uy, v: -(p[0] - far[0][0]) * uy + (p[1] - far[0][1]) * ux });
  const ta = a.map(frame);
  const tb = b.map(frame);
  const [aLo, aHi] = [Math.min(...ta.map((p) => p.t)), Math.max(...ta.map((p) => p.t))];
  const [bLo, bHi] = [Math.min(...tb.map((p) => p.t)), Math.max(...tb.map((p) => p.t))];
  const gap = aHi < bLo ? bLo - aHi : bHi < aLo ? aLo - bHi : -1;
  if (gap < 0 || gap > maxGapPx) return null;
  // v = c0 + c1 t + c2 t², t scaled to [0, 1]
  const pts = [...ta, ...tb].map((p) => ({ x: p.t / chord, v: p.v }));
  const m = [0, 0, 0, 0, 0, 0, 0, 0, 0];
  const r = [0, 0, 0];
  for (const { x, v } of pts) {
    const f = [1, x, x * x];
    for (let i = 0; i < 3; i++) {
      r[i] += f[i] * v;
      for (let j = 0; j < 3; j++) m[3 * i + j] += f[i] * f[j];
    }
  }
  const c = solve3(m, r);
  if (!c) return null;
  for (const { x, v } of pts) if (Math.abs(v - (c[0] + c[1] * x + c[2] * x * x)) > tolPx) return null;
  // the near ends: the point of each axis nearest the other along the chord
  const nearEnd = (pp: [number, number][], tt: { t: number }[], hi: boolean) => pp[tt.reduce((k, q, i) => ((hi ? q.t > tt[k].t : q.t < tt[k].t) ? i : k), 0)];
  const aFirst = aHi < bLo;
  return { gapPx: gap, ends: [nearEnd(a, ta, aFirst), nearEnd(b, tb, !aFirst)] };
}

/** Direction of a polyline's chord (first to last point), degrees in [0, 180). */
function chordDeg(p: [number, number][]): number {
  const a = p[0];
  const b = p[p.length - 1];
  return (((Math.atan2(b[1] - a[1], b[0] - a[0]) * 180) / Math.PI) % 180 + 180) % 180;
}

/** Whether a piece's axis crosses the gap between two ends (passes within a period of the segment between them, away from both ends). */
function crossesGap(r: Piece, ends: [[number, number], [number, number]], periodPx: number): boolean {
  const [p, q] = ends;
  const len = Math.hypot(q[0] - p[0], q[1] - p[1]);
  if (!(len > 0)) return false;
  const ux = (q[0] - p[0]) / len;
  const uy = (q[1] - p[1]) / len;
  const reach = pieceThickness(r) / 2 + periodPx;
  return r.axisPx.some((pt) => {
    const t = (pt[0] - p[0]) * ux + (pt[1] - p[1]) * uy;
    const v = -(pt[0] - p[0]) * uy + (pt[1] - p[1]) * ux;
    return t > -reach && t < len + reach && Math.abs(v) <= periodPx;
  });
}

/** One piece from two of the same stack: the axis ordered along the first's, positions pooled. */
function joinPieces(a: Piece, b: Piece): Piece {
  const la = polylineLength(a.axisPx);
  const pts: { s: number; p: [number, number] }[] = [];
  let cum = 0;
  a.axisPx.forEach((p, i) => {
    if (i > 0) cum += Math.hypot(p[0] - a.axisPx[i - 1][0], p[1] - a.axisPx[i - 1][1]);
    pts.push({ s: cum, p });
  });
  for (const p of b.axisPx) {
    const c = polylineCoords(a.axisPx, p[0], p[1]);
    if (c.s < -1 || c.s > la + 1) pts.push({ s: c.s, p });
  }
  pts.sort((x, y) => x.s - y.s);
  const wa = a.counted.length;
  const wb = b.counted.length;
  return {
    axisPx: resampleAxis(pts.map((q) => q.p)),
    periodPx: (a.periodPx * wa + b.periodPx * wb) / (wa + wb),
    uPeriodPx: Math.max(a.uPeriodPx, b.uPeriodPx),
    uPeriodPart: a.uPeriodPx >= b.uPeriodPx ? a.uPeriodPart : b.uPeriodPart,
    periodSource: a.periodSource === 'stack' || b.periodSource === 'stack' ? (a.periodSource === 'given' ? 'given' : 'stack') : a.periodSource,
    fitLayers: a.evidence >= b.evidence ? a.fitLayers : b.fitLayers,
    counted: [...a.counted, ...b.counted],
    edges: [...a.edges, ...b.edges],
    positions: [...a.positions, ...b.positions],
    evidence: Math.max(a.evidence, b.evidence),
  };
}

/** A polyline resampled every 2 px (lightly smoothed). */
function resampleAxis(p: [number, number][]): [number, number][] {
  return p.length >= 2 ? resamplePolyline(p, 2, 1) : p;
}

/**
 * The layer periods of an image from its candidates: each band's profile (with as much again
 * either side) votes for the strongest peak of its periodogram that stands out (peak over the
 * median of the two octaves around it ≥ 20), and for a second one unless it is a harmonic of the
 * first, weighted by log(contrast)·√length; votes within 4 % form one period. Periods whose votes
 * weigh at least a sixth of the strongest (and come from two profiles, or half the strongest
 * weight) are kept, at most three. When none stands out so (low dose), peaks ≥ 8 are taken, and a
 * period then needs the votes of three profiles. Searches from 2.05 px (just above the sampling limit), below the countable limit, so finer periods are
 * seen and rejected rather than mistaken for a coarser one.
 */
function imagePeriods(surveys: Survey[], maxPeriodPx: number): number[] {
  const strong = imagePeriodsAt(surveys, maxPeriodPx, 20, 2);
  if (strong.length) return strong;
  // low dose: weaker peaks, but then several profiles must agree
  return imagePeriodsAt(surveys, maxPeriodPx, 8, 3);
}

function imagePeriodsAt(surveys: Survey[], maxPeriodPx: number, minPeakToMedian: number, minVotes: number): number[] {
  const votes: { d: number; w: number }[] = [];
  for (const sv of surveys.slice(0, 80)) {
    const p = sv.profile;
    // the band and as much again either side (a fringe ridge's band is one line: its stack is around it)
    const c0 = sv.band ? 0.5 * (sv.band.fromPx + sv.band.toPx) : 0;
    const half = sv.band ? Math.max(12, sv.band.toPx - sv.band.fromPx) : Infinity;
    const v: number[] = [];
    for (let i = 0; i < p.values.length; i++) {
      const u = p.startPx + i * p.binPx;
      if (Math.abs(u - c0) <= half && Number.isFinite(p.values[i])) v.push(p.values[i]);
    }
    if (v.length < 16) continue;
    let size = 1;
    while (size < 8 * v.length) size <<= 1;
    const maxSamples = Math.min(maxPeriodPx / p.binPx, v.length / 1.5);
    if (!(maxSamples > 4.4)) continue;
    const pw = profilePeriodogram(v, size, Math.max(maxSamples / 2, 8));
    const cands = periodCandidates(pw, size, 2.05 / p.binPx, maxSamples, 3).filter((c) => c.peakToMedian >= minPeakToMedian);
    if (cands.length === 0) continue;
    // the strongest peak, and a second one unless it is a harmonic of the first (same profile)
    const d0 = cands[0].periodPx * p.binPx;
    const weight = (c: { peakToMedian: number }) => Math.log(c.peakToMedian) * Math.sqrt(sv.frame.lengthPx);
    votes.push({ d: d0, w: weight(cands[0]) });
    for (const c of cands.slice(1)) {
      const d = c.periodPx * p.binPx;
      if ([2, 3, 4].some((m) => Math.abs(d * m - d0) < 0.05 * d0) || c.peakToMedian < 0.3 * cands[0].peakToMedian) continue;
      votes.push({ d, w: weight(c) });
      break;
    }
  }
  votes.sort((x, y) => y.w - x.w);
  const clusters: { d: number; w: number; n: number }[] = [];
  for (const v of votes) {
    const c = clusters.find((q) => Math.abs(q.d - v.d) < 0.04 * q.d);
    if (c) {
      c.d = (c.d * c.w + v.d * v.w) / (c.w + v.w);
      c.w += v.w;
      c.n++;
    } else clusters.push({ d: v.d, w: v.w, n: 1 });
  }
  clusters.sort((x, y) => y.w - x.w);
  const top = clusters[0]?.w ?? 0;
  return clusters.filter((c) => c.w >= top / 6 && (c.n >= minVotes || (minVotes <= 2 && c.w >= top / 2))).slice(0, 3).map((c) => c.d);
}

/**
 * Finds and measures every edge-on stack of layers in an image.
 *
 * Candidate axes from scale-space ridges (Lindeberg 1998); layers counted by least-squares combs of layer lines on width-averaged profiles along the local normal (see ./stack-profile).
 *
 * @param image the image (lengths are in px; a calibration is applied late, through the record)
 * @param options period (given), period range, polarity, excluded box, shortest stack, positions, evidence
 * @returns the sheets, the bands rejected with their reasons, the image's periods and a message when nothing was found
 * Notes: see the module comment for the steps. A given period outside the sampling range
 * (below 2 px, or above a quarter of the image) is refused with a message; one below the
 * smallest countable period (2.5 px) too. Thickness follows the n·d convention (layers × the
 * stack's period); the edge-to-edge width of the band is reported beside it.
 */
export function detectSheets(image: GreyImage, options: AutoSheetOptions = {}): AutoSheetsResult {
  const polarity = options.polarity ?? 'dark';
  if (polarity !== 'dark' && polarity !== 'bright') throw new RangeError(`polarity must be 'dark' or 'bright', got ${String(polarity)}`);
  const minPeriodPx = options.minPeriodPx ?? MIN_COUNTABLE_PERIOD_PX;
  const maxPeriodPx = options.maxPeriodPx ?? 40;
  if (!(minPeriodPx >= 2 && Number.isFinite(minPeriodPx))) throw new RangeError(`minPeriodPx must be ≥ 2 px (the sampling limit), got ${minPeriodPx}`);
  if (!(maxPeriodPx > minPeriodPx && Number.isFinite(maxPeriodPx))) throw new RangeError(`maxPeriodPx must exceed minPeriodPx (${minPeriodPx}), got ${maxPeriodPx}`);
  const given = options.periodPx;
  const quarter = Math.min(image.width, image.height) / 4;
  if (given !== undefined) {
    if (!Number.isFinite(given) || given < 2) {
      throw new RangeError(`the period ${given} px is below the sampling limit of 2 px (Nyquist): no layer of it can be seen in this image; check the period and the pixel size`);
    }
    if (given < MIN_COUNTABLE_PERIOD_PX) {
      throw new RangeError(`the period ${given} px is below ${MIN_COUNTABLE_PERIOD_PX} px, where layers can no longer be counted reliably (they sit at the sampling limit); use an image of higher magnification`);
    }
    if (given > quarter) throw new RangeError(`the period ${given} px is more than a quarter of the image (${quarter.toFixed(0)} px): no stack of it fits`);
  }
  const exclude = options.exclude ?? null;
  if (exclude && !(exclude.length === 4 && exclude.every(Number.isFinite) && exclude[2] > 0 && exclude[3] > 0)) {
    throw new RangeError(`exclude must be [x, y, width, height] with positive size, got ${JSON.stringify(exclude)}`);
  }
  const minLengthPx = options.minLengthPx ?? 30;
  const spacing = options.positionSpacingPx ?? 40;
  const minEvidence = options.minEvidence ?? 60;
  if (!(minLengthPx >= 8)) throw new RangeError(`minLengthPx must be ≥ 8, got ${minLengthPx}`);
  if (!(spacing >= 8)) throw new RangeError(`positionSpacingPx must be ≥ 8, got ${spacing}`);
  if (!(minEvidence > 0)) throw new RangeError(`minEvidence must be positive, got ${minEvidence}`);
  const settings = { periodPx: given ?? null, minPeriodPx, maxPeriodPx, polarity, exclude, minLengthPx, positionSpacingPx: spacing, minEvidence, thickness: 'n·d (layers × period)' };

  // too small for any stack of the shortest length asked for: an empty, labelled result
  if (Math.min(image.width, image.height) < 32) {
    return { sheets: [], rejected: [], periods: [], candidates: 0, message: `no stacks found: the image (${image.width} × ${image.height} px) is too small to search (at least 32 px on each side)`, settings };
  }
  let mask: Uint8Array | null = null;
  if (exclude) {
    mask = new Uint8Array(image.width * image.height);
    for (let y = Math.max(0, Math.floor(exclude[1])); y < Math.min(image.height, exclude[1] + exclude[3]); y++) {
      for (let x = Math.max(0, Math.floor(exclude[0])); x < Math.min(image.width, exclude[0] + exclude[2]); x++) mask[y * image.width + x] = 1;
    }
  }
  const axes = ridgeAxes(image, { polarity, mask, minLengthPx: Math.min(minLengthPx, 24), maxScalePx: Math.min(60, Math.min(image.width, image.height) / 8) });
  // the fringes are smoothed away at half a period: before the period is known, at the scale of
  // the finest countable period
  // the first (strongest) candidates surveyed for the image's periods
  const surveys = given !== undefined ? [] : axes.slice(0, 80).map((a) => survey(image, a, polarity, null));

  // ---- the image's layer periods ----
  const periodList: number[] = [];
  if (given !== undefined) periodList.push(given);
  else periodList.push(...imagePeriods(surveys, maxPeriodPx));

  const pieces: Piece[] = [];
  // the pieces' sheets while turned candidates are measured (pieces are then only added, not
  // changed: each is finished once, not once for every turned candidate)
  const finishedWhileTurning = new Map<Piece, Omit<AutoSheet, 'id'>>();
  const rejected: RejectedBand[] = [];
  const coverage = new Coverage(4);
  // stacks counted at a period with no phase of the image near its half, for the shared fundamental
  const unvotedStacks: UnvotedStack[] = [];
  // the bands of the last look that yielded no stack, to be measured along their own fringes
  const failedBands: { axis: RidgeAxis; frame: AxisFrame; band: ProfileBand; periodPx: number }[] = [];
  // the combs of the first look that were too faint, to be followed beyond their candidate's ends
  const faintCombs: { axis: RidgeAxis; frame: AxisFrame; fit: CombFit; periodPx: number; limitPx: [number, number] }[] = [];
  // candidates measured at the periods given (a function: run again after the periods are refined)
  // strongest bands first, so the stack is measured from its best candidate
  const measureCandidates = (tryPeriods: number[], earlier: Omit<AutoSheet, 'id'>[]): void => {
    if (tryPeriods.length === 0) return;
    failedBands.length = 0;
    faintCombs.length = 0;
    for (const axis of axes) measureAxis(axis, tryPeriods, earlier, 'first');
  };
  // one candidate axis: its bands measured at the periods given; on the first look a band that
  // yields no stack is kept in `failedBands`, and a comb too faint in `faintCombs` (a turned or
  // lengthened candidate is not turned or lengthened again; a lengthened one must keep the count
  // it was followed with, `followedLayers`)
  const measureAxis = (axis: RidgeAxis, tryPeriods: number[], earlier: Omit<AutoSheet, 'id'>[], look: 'first' | 'turned' | 'lengthened', followedLayers = 0): void => {
    const turnable = look === 'first';
    const axisFrame0 = axisFrame(axis.points);
    const angle0 = (i: number) => screenAngleDeg(axisFrame0.normals[i][0], axisFrame0.normals[i][1]);
    // a candidate on a stack already measured (one of its layers, or the same band) is skipped;
    // one that lies only on a piece too short to be a stack is measured, and kept if long enough
    if (coverage.covered(axis.points, angle0, 20, true).share > 0.5) return;
    let onShort = coverage.covered(axis.points, angle0, 20, false).share > 0.5;
    // survey at each period: fringes smoothed away at half a period, fringe energy beside it
    let sv: Survey | null = null;
    let svScore = -Infinity;
    const perPeriod = tryPeriods.map((d) => ({ d, q: survey(image, axis, polarity, d, axisFrame0) }));
    const powers = perPeriod.map(({ d, q }) => (q.band ? fringePowerAt(q.profile, q.band, d) : 0));
    const topPower = Math.max(...powers);
    const eligible = perPeriod.filter(({ q }, i) => q.band && !(perPeriod.length > 1 && powers[i] < 0.25 * topPower));
    // with one survey to choose from, no comb is fitted to score it
    if (eligible.length === 1) sv = eligible[0].q;
    else {
      for (const { d, q } of eligible) {
        if (!q.band) continue;
        const f = fitLayerComb(q.profile, d, q.band, { polarity, countReach: 3 });
        const score = f ? f.evidence : q.band.significance;
        if (score > svScore) { svScore = score; sv = q; }
      }
    }
    if (!sv || !sv.band) return;
    const { frame, profile } = sv;
    const angleAt = (i: number) => screenAngleDeg(frame.normals[i][0], frame.normals[i][1]);
    // the band's centre line must not lie on a stack already measured
    const svBand = sv.band;
    const mid = 0.5 * (svBand.fromPx + svBand.toPx);
    const centreLine = shiftAxis(frame, () => mid);
    if (coverage.covered(centreLine, angleAt, 20, true).share > 0.5) return;
    if (coverage.covered(centreLine, angleAt, 20, false).share > 0.5) onShort = true;
    const parts = splitBand(profile, svBand, tryPeriods[0], polarity);
    for (const part of parts) {
      const pmid = 0.5 * (part.fromPx + part.toPx);
      if (coverage.covered(shiftAxis(frame, () => pmid), angleAt, 20, true).share > 0.5) continue;
      // a band that holds a stack already measured and its touching neighbour fits no comb: it
      // is tried again as the part beyond the measured stack's band, its window ending there
      const free = uncoveredRun(part, (u) => coverage.covered(shiftAxis(frame, () => u), angleAt, 20, true).share > 0.5);
      const bands = [part];
      if (free && (free.fromPx > part.fromPx + 0.5 || free.toPx < part.toPx - 0.5) && free.toPx - free.fromPx >= 1.5 * tryPeriods[0]) bands.push({ ...part, fromPx: free.fromPx, toPx: free.toPx });
      let measured = false;
      // why the part gave no stack: it lies on a stack of the first look or in the excluded box
      // (then it is not turned), and the image period its comb was fitted at
      let onEarlier = false;
      let bandPeriodPx: number | null = null;
      for (const band of bands) {
        if (measured) break;
        const bmid = 0.5 * (band.fromPx + band.toPx);
        const line = shiftAxis(frame, () => bmid);
        const bandOnShort = onShort || coverage.covered(line, angleAt, 20, false).share > 0.5;
        // fit window: up to the neighbouring bands (touching stacks), and the measured stack's band
        const neighbours = [...(sv as Survey).others, ...parts.filter((q) => q !== part)];
        let lo = profile.startPx;
        let hi = profile.startPx + (profile.values.length - 1) * profile.binPx;
        for (const o of neighbours) {
          if (o.toPx <= band.fromPx) lo = Math.max(lo, 0.5 * (o.toPx + band.fromPx));
          if (o.fromPx >= band.toPx) hi = Math.min(hi, 0.5 * (o.fromPx + band.toPx));
        }
        if (band.fromPx > part.fromPx) lo = Math.max(lo, band.fromPx - 0.5 * tryPeriods[0]);
        if (band.toPx < part.toPx) hi = Math.min(hi, band.toPx + 0.5 * tryPeriods[0]);
        const limit: [number, number] = [lo, hi];
        const chosen = bestPeriod(profile, band, tryPeriods, polarity, limit);
        bandPeriodPx ??= chosen ? chosen.periodPx : null;
        const centerIdx = Math.floor(frame.points.length / 2);
        const centerAt = (off: number): [number, number] => [frame.points[centerIdx][0] + off * frame.normals[centerIdx][0], frame.points[centerIdx][1] + off * frame.normals[centerIdx][1]];
        const reject = (reason: string, fit: CombFit | null, d: number | null) => {
          rejected.push({ centerPx: centerAt(fit ? fit.centerPx : bmid), angleDeg: angleAt(centerIdx), layers: fit?.layers ?? null, periodPx: d, reason });
        };
        if (!chosen) {
          reject('no comb of layer lines fits the band', null, null);
          continue;
        }
        let { fit, periodPx } = chosen;
        const imagePeriodPx = periodPx;
        let retried = false;
        if (fit.evidence < minEvidence && given === undefined && band.toPx - band.fromPx >= 3.5 * periodPx) {
          // the image's period is an estimate (its periodograms read a few per cent high near the
          // sampling limit); over many layers a small error puts the comb out of phase with the
          // stack, so the band's own best period within ±4 % is tried before it is called faint
          // (a band of four periods or more: a thinner one hardly goes out of phase)
          // (at the line width of the comb at the estimate: a few per cent in period leave the
          // lines' width as it is, and each retry then costs a fifth of the width search)
          const retry = combNearPeriod(profile, band, periodPx, { polarity, limitPx: limit, minEvidence, minPeriodPx, lineSigmasPx: [fit.lineSigmaPx] });
          if (retry && retry.fit.layers >= 4 && retry.fit.thicknessPx <= sv.frame.lengthPx) {
            ({ fit, periodPx } = retry);
            retried = true;
          }
        }
        if (fit.evidence < minEvidence) {
          reject(`too faint: evidence ${fit.evidence.toFixed(0)} below ${minEvidence}`, fit, periodPx);
          if (turnable && fit.layers >= 2) faintCombs.push({ axis, frame, fit, periodPx, limitPx: limit });
          continue;
        }
        // a comb centred beyond the image's edge was fitted on the few bins at its edge
        {
          const [x, y] = centerAt(fit.centerPx);
          if (x < 0 || y < 0 || x > image.width - 1 || y > image.height - 1) {
            reject('its centre lies outside the image', fit, periodPx);
            continue;
          }
        }
        let uPeriod = 0;
        let periodSource: AutoSheet['periodSource'] = given !== undefined ? 'given' : 'image';
        if (given === undefined && fit.layers >= 4) {
          const r = refinePeriod(profile, fit, polarity, limit);
          periodPx = r.periodPx;
          uPeriod = r.uPx;
          fit = fitLayerComb(profile, periodPx, { fromPx: fit.centerPx - (fit.layers * periodPx) / 2, toPx: fit.centerPx + (fit.layers * periodPx) / 2 }, { polarity, limitPx: limit, countReach: 2 }) ?? r.fit;
          periodSource = 'stack';
          // the comb reported must itself have the evidence asked for (its refit at the refined
          // period may have less; a crossed lattice gave such a comb)
          if (fit.evidence < minEvidence) {
            reject(`too faint at its own period ${periodPx.toFixed(2)} px: evidence ${fit.evidence.toFixed(0)} below ${minEvidence}`, fit, periodPx);
            continue;
          }
          // a comb found only off the image's period must stay near it once refined (a refinement
          // that walks further has fitted another count, not a period read a few per cent high)
          if (retried && Math.abs(periodPx - imagePeriodPx) > 0.05 * imagePeriodPx) {
            reject(`too faint at the image's period ${imagePeriodPx.toFixed(2)} px, and its own comb moves to ${periodPx.toFixed(2)} px`, fit, periodPx);
            continue;
          }
        }
        if (periodPx + 2 * uPeriod < minPeriodPx) {
          reject(`period ${periodPx.toFixed(2)} px is below ${minPeriodPx} px`, fit, periodPx);
          continue;
        }
        if (periodPx > maxPeriodPx) {
          reject(`period ${periodPx.toFixed(2)} px is above ${maxPeriodPx} px`, fit, periodPx);
          continue;
        }
        // layers must be resolved for a stack of three or more: the comb explains the band
        // better than a plain step of the same extent (film texture makes bands without layers)
        if (fit.layers >= 3) {
          if (!layersResolved(profile, fit, polarity, limit)) {
            reject('no resolved layers: a band without fringes (film texture or an unresolved stack)', fit, periodPx);
            continue;
          }
        } else if (fit.layers === 1 && fit.lineSigmaPx > 0.49 * periodPx + 0.5) {
          reject('a single line wider than a layer', fit, periodPx);
          continue;
        }
        const acrossPower = acrossFringePower(profile, fit);
        if (fit.layers >= 3 && periodicAlongAxis(image, frame, fit.centerPx, Math.max(1, 0.35 * fit.thicknessPx), periodPx, acrossPower)) {
          reject('periodic along its axis as well: a two-dimensional lattice, not a stack', fit, periodPx);
          continue;
        }
        if (combContinues(image, frame, fit, polarity)) {
          reject('its lines go on, in phase, beyond both outer layers: a lattice, not a stack', fit, periodPx);
          // the lattice's band is not searched again from another candidate (it would give
          // another comb of the same lattice, cut where the lattice ends on one side)
          coverage.add(-rejected.length, frame, fit.centerPx, fit.thicknessPx / 2 + 0.5 * periodPx, angleAt, false);
          continue;
        }
        // ---- counts at positions along the axis ----
        const L = frame.lengthPx;
        const k = Math.max(3, Math.min(9, Math.round((0.9 * L) / spacing)));
        const seg = (0.9 * L) / k;
        let counts = countAlong(image, frame, fit, periodPx, limit, k, polarity, minEvidence);
        if (counts.counted.length < Math.max(2, Math.ceil(k / 2))) {
          reject(`seen at ${counts.counted.length} of ${k} positions along its axis: not a persistent stack`, fit, periodPx);
          continue;
        }
        // the layers run along the axis: the stack's centre must not drift across it from
        // position to position (an axis oblique to the layers crosses them)
        {
          const slope = driftSlope(counts, L, seg, minEvidence);
          if (Math.abs(slope) > Math.tan((8 * Math.PI) / 180)) {
            reject(`the band drifts across its axis (${(Math.atan(Math.abs(slope)) * DEG).toFixed(0)}°): the axis crosses the layers`, fit, periodPx);
            continue;
          }
        }
        // the stack's own axis: the candidate's shifted to the measured positions' centres
        let offAt = offsetAlong(counts, L, seg, minEvidence);
        let pieceFrame = frame;
        let axisPx = frame.points.map((q, i) => {
          const o = offAt(frame.cumPx[i]);
          return [q[0] + o * frame.normals[i][0], q[1] + o * frame.normals[i][1]] as [number, number];
        });
        // a comb of every other layer: on a candidate axis a little oblique to the layers, the
        // fine fringes wash out and a comb at twice the period fits the band; on the stack's own
        // axis the fundamental is tested against it: the image's finer phase when its
        // periodograms found one, here; otherwise (a phase outvoted by another's harmonics, or
        // seen only at twice its period near the countable limit) the fundamental the stacks
        // counted at this period share, once all are measured ({@link pooledFundamental})
        const finer = given === undefined && fit.layers >= 2 ? tryPeriods.find((q) => q >= minPeriodPx && Math.abs(q - periodPx / 2) <= 0.15 * (periodPx / 2)) : undefined;
        const unvoted = given === undefined && fit.layers >= 2 && finer === undefined && 1.15 * (periodPx / 2) >= minPeriodPx;
        const atFundamental = (() => {
          const axisNow = axisPx;
          const fitNow = fit;
          const periodNow = periodPx;
          const offsetsNow = counts.offsets;
          return (q: number) => recountAtFundamental(image, axisNow, fitNow, periodNow, q, [limit[0] - mean(offsetsNow), limit[1] - mean(offsetsNow)], polarity, minPeriodPx, spacing, minEvidence);
        })();
        const evidence = unvoted ? fundamentalEvidence(image, axisPx, fit, periodPx, polarity, minPeriodPx) : null;
        const ownQ = evidence ? evidence.ownQ() : null;
        const testAt = finer ?? ownQ;
        let leftAtP = evidence !== null;
        if (testAt !== null) {
          const r = atFundamental(testAt);
          if (r.kind === 'reject') {
            reject(r.reason, r.fit, r.periodPx);
            continue;
          }
          if (r.kind === 'recount') {
            ({ fit, periodPx, counts, axisPx } = r);
            uPeriod = r.uPx;
            periodSource = 'stack';
            pieceFrame = r.frame;
            offAt = r.offAt;
            leftAtP = false;
          }
        }
        // the candidate ridge of a thick band (40 px or more) may end well short of the stack's
        // ends: a piece of one, shorter than 30 px or than its thickness, follows its own axis
        // beyond its ends while its comb, with the same count, is still seen there nearly as
        // strongly as along the piece (two fifths of its evidence per px); kept if it is then long enough
        if (fit.layers >= 3 && fit.layers * periodPx >= 40 && polylineLength(axisPx) < Math.max(minLengthPx, fit.layers * periodPx)) {
          const seenEv = counts.positions.filter((q) => q.layers !== null && q.evidence >= 0.25 * minEvidence).map((q) => q.evidence);
          const perPx = median(seenEv) / ((0.9 * pieceFrame.lengthPx) / counts.positions.length);
          const longer = extendAxis(image, axisPx, fit.layers, fit.lineSigmaPx, periodPx, [limit[0] - mean(counts.offsets), limit[1] - mean(counts.offsets)], polarity, Math.max(0.25 * minEvidence, 0.4 * perPx * EXTEND_STEP_PX), mask);
          if (polylineLength(longer) >= Math.max(minLengthPx, fit.layers * periodPx)) axisPx = longer;
        }
        const { positions, counted, edge } = counts;
        // a period read from the image's periodograms (votes within 4 %, a few per cent high near
        // the sampling limit) carries that reading's uncertainty until its stacks refine it
        const piece: Piece = { axisPx, periodPx, uPeriodPx: periodSource === 'image' ? IMAGE_PERIOD_RELATIVE_U * periodPx : uPeriod, uPeriodPart: periodSource === 'image' ? 'methodPx' : 'statisticalPx', periodSource, fitLayers: fit.layers, counted, edges: edge, positions, evidence: fit.evidence };
        const done = finishPiece(piece, minPeriodPx);
        if (inBox(done.centerPx[0], done.centerPx[1], exclude)) {
          onEarlier = true;
          continue;
        }
        // a second look adds stacks; it does not touch the ones measured before
        if (earlier.some((o) => shareOnBand(done.axisPx, o) > 0.2 || shareOnBand(o.axisPx, done) > 0.2)) {
          onEarlier = true;
          continue;
        }
        // a turned candidate adds a stack of four layers or more, which refines its own period
        // (its direction is the best of many tried: a thinner comb, at the image's period, has
        // nothing of its own to confirm it; on a grass photograph one gave a 3-layer sheet); it
        // does not touch a stack measured already (a piece of it where two stacks cross would
        // join the one whose band it lies in)
        if (look === 'turned' && (done.layers < TURN_MIN_LAYERS || pieces.some((q) => {
          let o = finishedWhileTurning.get(q);
          if (!o) finishedWhileTurning.set(q, (o = finishPiece(q, minPeriodPx)));
          return shareOnBand(done.axisPx, o) > 0.2 || shareOnBand(o.axisPx, done) > 0.2;
        }))) continue;
        // a lengthened candidate keeps the count it was followed with (each stretch held it):
        // another count is another band, which its own candidate has had every chance to give
        if (look === 'lengthened' && done.layers !== followedLayers) continue;
        // a piece too short to be a stack by itself may yet join another piece of its stack, but
        // covers its band only softly (a short wrong piece must not hide the real stack); one
        // measured on such a piece's band must be long enough by itself (else the same band would
        // be tried, and kept, again)
        const short = done.lengthPx < Math.max(minLengthPx, done.thicknessPx);
        if (bandOnShort && short) continue;
        pieces.push(piece);
        if (evidence) unvotedStacks.push({ piece, imagePeriodPx, gainAt: evidence.gainAt, prefers: evidence.prefers, ownQ, leftAtP, recount: atFundamental });
        measured = true;
        coverage.add(pieces.length - 1, pieceFrame, offAt(pieceFrame.cumPx[Math.floor(pieceFrame.points.length / 2)]), done.thicknessPx / 2 + 0.5 * periodPx, (i) => screenAngleDeg(pieceFrame.normals[i][0], pieceFrame.normals[i][1]), short);
      }
      // a band that gave no stack may be a stack a few degrees off the candidate's axis (across
      // it, fringes out of phase average out): measured again, with every test, on a straight
      // axis along its own fringes when they are clearly stronger there ({@link turnedCandidate})
      if (!measured && !onEarlier && turnable) failedBands.push({ axis, frame, band: part, periodPx: bandPeriodPx ?? tryPeriods[0] });
    }
  };
  measureCandidates(periodList.length ? [...periodList] : [], []);
  // the image's periods from the stacks that measured their own (four layers or more): the
  // periodograms of the candidates read a few per cent high near the sampling limit; thinner
  // stacks then take the median of their phase's refined periods (five stacks at least), with the spread among those
  // stacks as their period's uncertainty (a thin stack's own period is not measured); each
  // refined period with that spread
  const refinedSpread = new Map<number, number>();
  if (given === undefined) {
    let moved = false;
    for (let k = 0; k < periodList.length; k++) {
      const d = periodList[k];
      const own = pieces.filter((q) => q.periodSource === 'stack' && Math.abs(q.periodPx - d) < 0.06 * d).map((q) => q.periodPx);
      if (own.length < 5) continue;
      const m = median(own);
      const sd = Math.sqrt(own.reduce((a, v) => a + (v - mean(own)) ** 2, 0) / (own.length - 1));
      for (const q of pieces) {
        if (q.periodSource !== 'image' || Math.abs(q.periodPx - d) > 1e-9) continue;
        q.periodPx = m;
        q.uPeriodPx = sd;
        q.uPeriodPart = 'localVariationPx';
      }
      if (Math.abs(m - d) > 0.015 * d) moved = true;
      periodList[k] = m;
      refinedSpread.set(m, sd);
    }
    // two periodogram peaks of one phase refine to the same period: kept once
    const unique = periodList.filter((d, k) => periodList.findIndex((e) => Math.abs(e - d) < 1e-9) === k);
    periodList.splice(0, periodList.length, ...unique);
    if (moved) {
      // a period read more than 1.5 % off puts the comb of a thick stack out of phase (its
      // band is then too faint): the candidates not yet on a stack are measured again at the
      // refined periods, and their first rejections are superseded
      rejected.length = 0;
      measureCandidates([...periodList], pieces.map((q) => finishPiece(q, minPeriodPx)));
      for (const [m, sd] of refinedSpread) {
        for (const q of pieces) if (q.periodSource === 'image' && Math.abs(q.periodPx - m) < 1e-9) Object.assign(q, { uPeriodPx: sd, uPeriodPart: 'localVariationPx' });
      }
    }
  }
  // candidates from fringe energy at each of the image's (refined) periods, after the ridges (a
  // stack with fringes but little darkening breaks into short ridges on a textured film)
  for (const d of [...periodList]) {
    if (d < minPeriodPx) continue;
    for (const a of fringeRegionAxes(image, d, { mask, minLengthPx: Math.min(minLengthPx, 24) })) {
      axes.push(a);
      // one that runs onto a stack already measured, at any angle (a tolerance of 90°), is that
      // stack's end or edge (where the fringes stop, their energy turns)
      if (coverage.covered(a.points, () => 0, 90, false).share > FRINGE_CANDIDATE_MAX_ON_STACK) continue;
      measureAxis(a, [...periodList], [], 'first');
    }
  }
  // a band that yielded no stack may be a stack a few degrees off its candidate's axis (across
  // it, fringes out of phase average out): after the other looks, each is measured again, with
  // every test, on a straight axis along its own fringes when they are clearly stronger there
  // ({@link turnedCandidate}); this adds stacks and leaves those measured as they are
  if (periodList.length > 0) {
    for (const fb of [...failedBands]) {
      const nearest = nearestPeriod(periodList, fb.periodPx);
      const turned = turnedCandidate(image, fb.axis, fb.frame, fb.band, nearest);
      if (turned) measureAxis(turned, [...periodList], [], 'turned');
    }
  }
  // a faint comb on a short candidate (a ridge that broke up along a faint stack) is followed
  // straight beyond the candidate's ends, a long stretch at a time, while each stretch fits the
  // same count; once at least half as long again, the longer axis is measured with every test
  // (its width-averaged profile gains evidence in proportion to its length)
  if (periodList.length > 0) {
    let measured: Omit<AutoSheet, 'id'>[] = [];
    let measuredOf = -1;
    const onStack = (ends: [number, number][]) => {
      if (measuredOf !== pieces.length) {
        measured = pieces.map((q) => finishPiece(q, minPeriodPx));
        measuredOf = pieces.length;
      }
      const pts = resampleAxis(ends);
      return measured.some((o) => shareOnBand(pts, o) > 0.2);
    };
    for (const fc of [...faintCombs].sort((a, b) => b.fit.evidence - a.fit.evidence)) {
      const longer = lengthenedCandidate(image, fc, polarity, minEvidence, mask, onStack);
      if (longer) measureAxis(longer, [...periodList], [], 'lengthened', fc.fit.layers);
    }
  }
  // the stacks counted at a period p with no phase of the image near p/2, grouped by p: the
  // fundamental their combs share (if any) is tested on each, as an image's finer phase is
  for (const group of groupByPeriod(unvotedStacks)) {
    // found only when a stack needs it (the search costs a comb fit per stack and step)
    let sharedMemo: number | null | undefined;
    const sharedQ = () => (sharedMemo === undefined ? (sharedMemo = pooledFundamental(group, minPeriodPx)) : sharedMemo);
    for (const st of group) {
      const shared = sharedQ();
      if (shared === null) break;
      // a stack its own fringes recounted at another fundamental takes the shared one only where
      // that comb fits it better (two combs of as many parameters)
      if (!st.leftAtP && !(st.ownQ !== null && Math.abs(st.ownQ - shared) > 0.05 * shared && st.prefers(shared, st.ownQ))) continue;
      if (st.ownQ !== null && Math.abs(st.ownQ - shared) <= 0.01 * shared) continue;
      // only counted again: a lattice at the shared fundamental leaves the stack at p, as it was
      const r = st.recount(shared);
      if (r.kind !== 'recount') continue;
      const pc = st.piece;
      Object.assign(pc, { axisPx: r.axisPx, periodPx: r.periodPx, uPeriodPx: r.uPx, uPeriodPart: 'statisticalPx', periodSource: 'stack', fitLayers: r.fit.layers, counted: r.counts.counted, edges: r.counts.edge, positions: r.counts.positions });
    }
  }
  // a stack's own refined period trades count against period when its fringes are weak (n − 1
  // layers at d·n/(n − 1) span the same band): where the comb at its phase's period, measured on
  // the image's stacks, fits its band about as well, that period and its count stand
  if (given === undefined && periodList.length > 0) {
    const spread = (d: number) => refinedSpread.get(d) ?? IMAGE_PERIOD_RELATIVE_U * d;
    for (const pc of pieces) {
      if (pc.periodSource !== 'stack' || pc.fitLayers < 3) continue;
      const near = periodList.filter((d) => Math.abs(pc.periodPx - d) > 0.01 * d && Math.abs(pc.periodPx - d) <= 0.15 * d);
      for (const d of near.sort((a, b) => Math.abs(pc.periodPx - a) - Math.abs(pc.periodPx - b))) {
        const r = recountAtShared(image, pc, d, polarity, spacing, minEvidence);
        // the phase's period must make the positions agree on the count at least as well (a piece
        // that runs over two stacks end to end only trades which one its count follows)
        if (!r || agreement(r.counts.counted, r.fit.layers) < agreement(pc.counted, pc.fitLayers)) continue;
        Object.assign(pc, { axisPx: r.axisPx, periodPx: d, uPeriodPx: spread(d), uPeriodPart: refinedSpread.has(d) ? 'localVariationPx' : 'methodPx', periodSource: 'image', fitLayers: r.fit.layers, counted: r.counts.counted, edges: r.counts.edge, positions: r.counts.positions });
        break;
      }
    }
  }
  // after merging, a stack must be at least as long as the shortest stack asked for and as its
  // own thickness (an edge-on platelet is longer than thick; a shorter piece is an end or a crossing)
  const kept: Omit<AutoSheet, 'id'>[] = [];
  const filled = new Map<Omit<AutoSheet, 'id'>, SecondSet>();
  for (const pc of mergePieces(pieces)) {
    const sh = finishPiece(pc, minPeriodPx);
    if (sh.lengthPx < Math.max(minLengthPx, sh.thicknessPx)) {
      rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `${sh.lengthPx.toFixed(0)} px long: shorter than ${sh.lengthPx < minLengthPx ? `${minLengthPx} px` : 'its thickness'}` });
      continue;
    }
    // every stack is tested again as a lattice along its whole final axis, for a second fringe set
    // at any crossing angle: a piece was tested only for one across its axis, and may be too
    // short to show one; a stack joined from pieces or followed beyond a piece's ends is not (on
    // a crossed lattice, short pieces cut from it were joined and followed into long false stacks)
    if (sh.layers >= 3) {
      const set = latticeAlongWhole(image, sh, polarity);
      if (set) filled.set(sh, set);
    }
    // a mono- or bilayer whose positions mostly disagree on its count (1, 2, 3 along it) is noise
    // or crossed fringes, not a thin stack (the contrast of one or two lines is all it has); one
    // short enough to be counted at three positions only must be counted alike at all three
    if (sh.layers <= 2 && (sh.confidence < 0.5 || (sh.positions.length <= 3 && sh.confidence < 1))) {
      rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `${sh.layers === 1 ? 'a single line' : 'two lines'} counted alike at only ${Math.round(100 * sh.confidence)} % of its ${sh.positions.length} positions: not a thin stack` });
      continue;
    }
    // a short stack (three positions) whose positions agree on no count has no count to report
    if (sh.layers >= 3 && sh.positions.length <= 3 && sh.confidence <= 0.5) {
      rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `its ${sh.positions.length} positions agree on no count (${sh.positions.map((q) => q.layers ?? '–').join(', ')} layers): no count to report` });
      continue;
    }
    // a stack at a period that none of the image's phases shows (its own fundamental, searched
    // for on it alone) has no other stack to confirm that period: its positions must each see
    // it, their median evidence reaching what a stack needs (film texture gave a 6-layer comb at
    // half a crossed lattice's period, seen at its positions with evidence 24, 103 and 38)
    if (given === undefined && periodList.length > 0 && Math.min(...periodList.map((d) => Math.abs(sh.periodPx - d) / d)) > OFF_PHASE_RELATIVE) {
      const ev = median(sh.positions.map((q) => q.evidence));
      if (ev < minEvidence) {
        rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `its period ${sh.periodPx.toFixed(2)} px is none of the image's, and its positions see it faintly (median evidence ${ev.toFixed(0)} below ${minEvidence}): not confirmed` });
        continue;
      }
    }
    kept.push(sh);
  }
  // a second fringe set that fills a stack's band is a lattice's, unless it is the layers of
  // another stack that crosses this one wholly (a thick stack crossing at a shallow angle covers
  // a shorter one end to end): a stack kept, itself filled by no second set, at the set's period
  // (within 8 %) and direction (within 8°), whose band holds half of this one's axis or more. A
  // lattice's sets fill each other's bands, so neither excuses the other.
  for (const [sh, set] of filled) {
    const secondPeriodPx = set.alongPeriodPx * Math.sin((set.crossingDeg * Math.PI) / 180);
    const crosser = kept.find((o) => o !== sh && o.layers >= 3 && !filled.has(o) && Math.abs(o.periodPx - secondPeriodPx) <= 0.08 * secondPeriodPx && Math.min(axialDiff(o.angleDeg, sh.angleDeg + set.crossingDeg), axialDiff(o.angleDeg, sh.angleDeg - set.crossingDeg)) < 8 && shareOnBand(sh.axisPx, o) >= 0.5);
    if (crosser) continue;
    kept.splice(kept.indexOf(sh), 1);
    rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `a second fringe set, at ${set.crossingDeg.toFixed(0)}° to its layers' normal, fills its whole length: a two-dimensional lattice, not a stack` });
  }
  // a sheet whose axis lies (almost) wholly on a longer sheet's band is a piece of a crossing, or
  // that sheet seen at another angle: not a stack of its own (a stack that crosses another
  // reaches beyond its band). One half on it is a piece too when it runs near the other's
  // direction, or when its period is off the image's (the other's layers cut obliquely read
  // d / cos θ) or its positions disagree on its count.
  const byLength = [...kept].sort((a, b) => b.lengthPx - a.lengthPx);
  const sheets: AutoSheet[] = [];
  const accepted: Omit<AutoSheet, 'id'>[] = [];
  for (const sh of byLength) {
    const offImage = periodList.length > 0 && Math.min(...periodList.map((d) => Math.abs(sh.periodPx - d) / d)) > 0.04;
    const host = accepted.find((o) => {
      const share = shareOnBand(sh.axisPx, o);
      const offHost = Math.abs(sh.periodPx - o.periodPx) > 0.06 * o.periodPx;
      return share >= 0.85 || (share >= 0.5 && (axialDiff(sh.angleDeg, o.angleDeg) < 20 || (offImage && offHost) || sh.confidence < 0.6));
    });
    if (host) {
      // the same stack found twice (each axis mostly on the other's band, near one direction):
      // the count its positions agree on clearly better stands, though it be the shorter (a bent
      // stack's half-count along a longer, straighter axis)
      if (axialDiff(sh.angleDeg, host.angleDeg) < 20 && shareOnBand(host.axisPx, sh) >= 0.5 && sh.confidence >= host.confidence + 0.15) {
        accepted[accepted.indexOf(host)] = sh;
        rejected.push({ centerPx: host.centerPx, angleDeg: host.angleDeg, layers: host.layers, periodPx: host.periodPx, reason: `the same stack counted again along a longer axis, its positions agreeing less (${Math.round(100 * host.confidence)} % against ${Math.round(100 * sh.confidence)} %)` });
        continue;
      }
      rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: 'lies on a longer stack (a piece of a crossing)' });
      continue;
    }
    // a faint comb alongside a longer stack at its period, its outer layer closer than half a
    // period to the stack's: not a stack of its own (two stacks that close are one band of
    // layers); the stack's edge and the background beside it fitted as a comb
    const beside = accepted.find((o) => alongside(sh, o) && sh.evidence / sh.lengthPx < ALONGSIDE_EVIDENCE_SHARE * (o.evidence / o.lengthPx));
    if (beside) {
      rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `alongside a longer stack at its period, less than half a period from it, with ${Math.round((100 * (sh.evidence / sh.lengthPx)) / (beside.evidence / beside.lengthPx))} % of its evidence per px: that stack's edge, not a stack` });
      continue;
    }
    // a stack at twice the period of a longer stack of three layers or more that it continues
    // along one line, as thick within a period: that stack's end, every other layer line taken for
    // a layer (a 4-layer stack at 2.88 px was found in its middle, and its two ends as bilayers at
    // 5.99 px, the image's coarser phase)
    const doubled = accepted.find((o) => isEndReadAgain(sh, o, 'doubled'));
    if (doubled) {
      rejected.push(doubledEnd(sh, doubled));
      continue;
    }
    // a shorter stack of the same count at a period within 10 % that continues a longer one's
    // line, as thick: that stack's end measured at a second reading of its period (pieces join
    // within 6 %; a 33 px end of a 5-layer stack at 2.99 px took a reading at 3.18 px and stood apart)
    const sameEnd = accepted.find((o) => isEndReadAgain(sh, o, 'second reading'));
    if (sameEnd) {
      rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `continues a longer stack of as many layers at ${sameEnd.periodPx.toFixed(2)} px, as thick: that stack's end, measured at another reading of its period` });
      continue;
    }
    // (and the other way round: a longer one accepted before it may be this stack's end so read)
    if (sh.layers >= 3) {
      for (const o of accepted.filter((q) => isEndReadAgain(q, sh, 'doubled'))) {
        accepted.splice(accepted.indexOf(o), 1);
        rejected.push(doubledEnd(o, sh));
      }
    }
    accepted.push(sh);
  }
  // one or two lines have no period of their own: their count and thickness rest on the layer
  // period, so they are reported only where the user gave it or a counted stack of three layers
  // or more in the same image shows it (within 8 %); else a streak of the texture (an edge, a
  // shadow) would be read as a monolayer at a period the texture's own spectrum gave
  const confirmedPx = given !== undefined ? [given] : accepted.filter((o) => o.layers >= 3).map((o) => o.periodPx);
  // an image period twice another (within 3 %) at which no stack (of three layers or more, as
  // lone lines need one to confirm their period) stands is a lattice's or the
  // texture's (its stacks were refused): the finer period is then its harmonic, and a stack at it
  // must be seen at every position alike, with the evidence a stack needs at the median one (a
  // crossed lattice at 10 px gave a 3-layer comb at 5.0 px on its edge, its positions reading 3,
  // 3 and 1 with evidence 46, 39 and 28, and film beside another one a 5-layer comb at 4.8 px
  // read 5, 5 and 3; on 143 synthetic overviews every true stack at half an image period had
  // three or more stacks at that period beside it)
  const harmonicOf = (sh: Omit<AutoSheet, 'id'>): number | null => {
    if (given !== undefined || periodList.length < 2) return null;
    const phase = nearestPeriod(periodList, sh.periodPx);
    if (Math.abs(phase - sh.periodPx) > 0.1 * phase) return null;
    const coarse = periodList.find((D) => Math.abs(D / 2 - phase) <= 0.03 * phase);
    if (coarse === undefined || accepted.some((o) => o.layers >= 3 && Math.abs(o.periodPx - coarse) <= 0.08 * coarse)) return null;
    return coarse;
  };
  let unconfirmedThin = 0;
  for (const sh of kept) {
    if (!accepted.includes(sh)) continue;
    const coarse = harmonicOf(sh);
    if (coarse !== null) {
      const ev = median(sh.positions.map((q) => q.evidence));
      if (sh.confidence < 1 || ev < minEvidence) {
        rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `its period is half the image's period ${coarse.toFixed(2)} px, at which no stack stands (a lattice's or the texture's harmonic), and its positions do not confirm it (${Math.round(100 * sh.confidence)} % agree, median evidence ${ev.toFixed(0)})` });
        continue;
      }
    }
    if (sh.layers <= 2 && !confirmedPx.some((d) => Math.abs(sh.periodPx - d) <= 0.08 * d)) {
      unconfirmedThin++;
      rejected.push({ centerPx: sh.centerPx, angleDeg: sh.angleDeg, layers: sh.layers, periodPx: sh.periodPx, reason: `${sh.layers === 1 ? 'a single line' : 'two lines'} at a period no counted stack of the image confirms: give the layer period to count lone lines` });
      continue;
    }
    sheets.push({ ...sh, id: `auto-${sheets.length + 1}` });
  }
  const periods: ImagePeriod[] = periodList.map((d) => ({
    periodPx: d,
    source: given !== undefined ? 'given' : 'found',
    sheets: sheets.filter((s) => Math.abs(s.periodPx - d) < 0.08 * d).length,
  }));
  return {
    sheets,
    rejected,
    periods,
    candidates: axes.length,
    message: sheets.length > 0 ? null : unconfirmedThin > 0 ? `no stacks found; ${unconfirmedThin} single line${unconfirmedThin > 1 ? 's' : ''} or pair${unconfirmedThin > 1 ? 's' : ''} of lines seen at a period no stack confirms: give the layer period (e.g. from the basal X-ray reflection) to count them` : 'no stacks found',
    settings,
  };
}

/** Counts of a stack at k positions along its candidate axis: width-averaged profiles of equal stretches, each fitted with the comb at the stack's period. */
interface AlongCounts {
  positions: SheetPosition[];
  /** Offsets of the stack's centre from the axis at the positions where it was seen, px. */
  offsets: number[];
  counted: number[];
  edge: number[];
}

function countAlong(image: GreyImage, frame: AxisFrame, fit: CombFit, periodPx: number, limit: [number, number], k: number, polarity: 'dark' | 'bright', minEvidence: number): AlongCounts {
  const L = frame.lengthPx;
  const seg = (0.9 * L) / k;
  const out: AlongCounts = { positions: [], offsets: [], counted: [], edge: [] };
  for (let j = 0; j < k; j++) {
    const from = 0.05 * L + j * seg;
    const to = from + seg;
    const half = fit.thicknessPx / 2 + Math.max(3 * periodPx, 8);
    const pp = robustAcrossProfile(image, frame, { fromPx: from, toPx: to, halfWidthPx: half, offsetPx: fit.centerPx, pieceLengthPx: 8 });
    const lim: [number, number] = [limit[0] - fit.centerPx, limit[1] - fit.centerPx];
    const f = fitLayerComb(pp, periodPx, { fromPx: -fit.thicknessPx / 2, toPx: fit.thicknessPx / 2 }, { polarity, limitPx: lim, countReach: 2, lineSigmasPx: [fit.lineSigmaPx], centreReachPx: 0.75 * periodPx + 1 });
    const ci = indexAt(frame, 0.5 * (from + to));
    const seen = !!f && f.evidence >= 0.25 * minEvidence;
    const off = fit.centerPx + (f && seen ? f.centerPx : 0);
    const [px, py] = frame.points[ci];
    const [nx, ny] = frame.normals[ci];
    out.positions.push({ centerPx: [px + off * nx, py + off * ny], angleDeg: screenAngleDeg(frame.normals[ci][0], frame.normals[ci][1]), layers: f ? f.layers : null, evidence: f ? f.evidence : 0 });
    if (f && seen) {
      out.counted.push(f.layers);
      out.offsets.push(off);
      // edge to edge: where the band's darkening (fringes smoothed away) falls to half, outermost crossings
      const e = edgeToEdge(pp, f, polarity);
      if (e !== null) out.edge.push(e);
    }
  }
  return out;
}

/** Arc lengths of the positions where the stack was seen. */
function seenAt(c: AlongCounts, L: number, seg: number, minEvidence: number): number[] {
  return c.positions.map((q, j) => ({ s: 0.05 * L + (j + 0.5) * seg, ok: q.layers !== null && q.evidence >= 0.25 * minEvidence })).filter((q) => q.ok).map((q) => q.s);
}

/** Least-squares slope of the stack's centre offset against arc length (its drift across the axis). */
function driftSlope(c: AlongCounts, L: number, seg: number, minEvidence: number): number {
  const ss = seenAt(c, L, seg, minEvidence);
  const ms = mean(ss);
  const mo = mean(c.offsets);
  let sxy = 0;
  let sxx = 0;
  ss.forEach((sv2, j) => { sxy += (sv2 - ms) * (c.offsets[j] - mo); sxx += (sv2 - ms) ** 2; });
  return sxx > 0 ? sxy / sxx : 0;
}

/** The stack's centre offset at any arc length: linear between the positions where it was seen, constant beyond. */
function offsetAlong(c: AlongCounts, L: number, seg: number, minEvidence: number): (s: number) => number {
  const measuredS = seenAt(c, L, seg, minEvidence);
  const offsets = c.offsets;
  return (sAt: number): number => {
    if (sAt <= measuredS[0]) return offsets[0];
    if (sAt >= measuredS[measuredS.length - 1]) return offsets[offsets.length - 1];
    let m = 0;
    while (m < measuredS.length - 2 && measuredS[m + 1] < sAt) m++;
    const t = (sAt - measuredS[m]) / (measuredS[m + 1] - measuredS[m] || 1);
    return offsets[m] + t * (offsets[m + 1] - offsets[m]);
  };
}

/** A second fringe set found filling a stack's band ({@link secondFringeSetFills}). */
type SecondSet = NonNullable<ReturnType<typeof secondFringeSetFills>>;

/**
 * The lattice test on a stack along its whole final axis (joined from pieces, followed beyond a
 * piece's ends; {@link secondFringeSetFills}): the comb at its period is fitted on the profile
 * across that axis (middle 90 % of its length), and the band's middle (0.7 of its thickness) is
 * searched for a second fringe set at any crossing angle.
 * @returns the second set that fills its band, or null
 */
function latticeAlongWhole(image: GreyImage, sh: Omit<AutoSheet, 'id'>, polarity: 'dark' | 'bright'): SecondSet | null {
  const onAxis = (axisPx: [number, number][]): SecondSet | null => {
    const { op, band } = ownAxisProfile(image, axisPx, sh.thicknessPx, sh.periodPx);
    const fit = fitLayerComb(op, sh.periodPx, band, { polarity, countReach: 2 });
    if (!fit || fit.layers < 3) return null;
    return secondFringeSetFills(image, axisFrame(axisPx), fit.centerPx, Math.max(1, 0.35 * fit.thicknessPx), sh.periodPx, acrossFringePower(op, fit));
  };
  const set = onAxis(sh.axisPx);
  if (set) return set;
  // a lattice is straight, but pieces cut from it join at offsets a period apart into a jogged
  // axis, along which a second set's phase slips and its peak is lost (a jog of 6 px left a peak
  // 10 times its neighbourhood where the straight chord showed one 1000 times it): an axis that
  // strays from its chord by more than half a period and less than a quarter of the stack's
  // thickness is tested along the chord too, whose band stays within the stack's
  const first = sh.axisPx[0];
  const last = sh.axisPx[sh.axisPx.length - 1];
  const chordPx = Math.hypot(last[0] - first[0], last[1] - first[1]);
  if (!(chordPx > 0)) return null;
  const nx = -(last[1] - first[1]) / chordPx;
  const ny = (last[0] - first[0]) / chordPx;
  let strayPx = 0;
  for (const [x, y] of sh.axisPx) strayPx = Math.max(strayPx, Math.abs((x - first[0]) * nx + (y - first[1]) * ny));
  if (strayPx <= 0.5 * sh.periodPx || strayPx > 0.25 * sh.thicknessPx) return null;
  return onAxis(resampleAxis([first, last]));
}

/** Δχ² by which a comb at half the period must beat the comb at the period to replace it (likelihood ratio e⁶ ≈ 400 between two models of as many parameters). */
export const FUNDAMENTAL_MIN_GAIN = 12;

/** The profile across a stack along its own axis (the middle 90 % of its length), and the band its comb at p covers. */
function ownAxisProfile(image: GreyImage, axisPx: [number, number][], thicknessPx: number, periodPx: number): { op: AcrossProfile; band: { fromPx: number; toPx: number } } {
  const own = axisFrame(axisPx);
  const L = own.lengthPx;
  const hw = thicknessPx / 2 + Math.max(3 * periodPx, 8);
  return { op: robustAcrossProfile(image, own, { fromPx: 0.05 * L, toPx: 0.95 * L, halfWidthPx: hw }), band: { fromPx: -thicknessPx / 2, toPx: thicknessPx / 2 } };
}

/** Standard uncertainty of a layer period read from the image's periodograms and not refined on five stacks or more, as a fraction of it (votes within 4 % form one period, read a few per cent high near the sampling limit). */
export const IMAGE_PERIOD_RELATIVE_U = 0.03;

/** Δχ² by which a stack's comb at its own period must beat the comb at its phase's period to keep its own (one parameter more; Akaike's penalty of 2 per parameter). */
export const OWN_PERIOD_MIN_GAIN = 2;

/**
 * A stack counted again at its phase's period, when the comb there fits the band on its own axis
 * about as well as the comb at its own refined period: counts free and periods fixed in both, the
 * phase's period is kept unless the stack's own improves the residual by more than
 * {@link OWN_PERIOD_MIN_GAIN} noise variances. Model choice by Akaike's information criterion
 * (Akaike, IEEE Trans. Autom. Control 19, 716, 1974).
 *
 * @param image the image
 * @param pc the stack, counted at its own refined period
 * @param sharedPx the period of its phase, px
 * @param polarity the layers' polarity
 * @param spacing the spacing of count positions along the axis, px
 * @param minEvidence the evidence a comb needs
 * @returns the comb and the counts at the phase's period on the re-centred axis, or null to keep the stack as it is
 */
function recountAtShared(image: GreyImage, pc: Piece, sharedPx: number, polarity: 'dark' | 'bright', spacing: number, minEvidence: number): { fit: CombFit; counts: AlongCounts; axisPx: [number, number][] } | null {
  const thicknessPx = pieceThickness(pc);
  const { op, band } = ownAxisProfile(image, pc.axisPx, thicknessPx, pc.periodPx);
  const own = fitLayerComb(op, pc.periodPx, band, { polarity, countReach: 3 });
  const at = fitLayerComb(op, sharedPx, band, { polarity, countReach: 3 });
  if (!own || !at || at.evidence < minEvidence) return null;
  if ((at.rss - own.rss) / own.noiseVar > OWN_PERIOD_MIN_GAIN) return null;
  const reach = at.thicknessPx / 2 + 1.5 * sharedPx;
  const c = countOnAxis(image, axisFrame(pc.axisPx), at, sharedPx, [at.centerPx - reach, at.centerPx + reach], polarity, spacing, minEvidence);
  return c && { fit: at, counts: c.counts, axisPx: c.axisPx };
}

/**
 * Whether a stack counted at period p is a stack of about twice as many layers at a finer
 * period q near p/2 (the comb at p then takes every other layer): on the profile along the
 * stack's own axis, combs at p and at q (counts free, each period refined on the profile's
 * fringes when it has four lines or more) are compared, and q is preferred when its residual is
 * lower by at least {@link FUNDAMENTAL_MIN_GAIN} noise variances.
 * Model choice by the likelihood ratio of two least-squares fits with as many parameters (Δχ², common practice).
 *
 * @param image the image
 * @param axisPx the stack's own axis (the candidate's shifted to the measured centres), px
 * @param fit the comb at p (its thickness sets the band)
 * @param periodPx p, px
 * @param finerPx q, px: the image's finer phase, or the fundamental the stacks at p share
 * @param polarity the layers' polarity
 * @returns the comb at the fundamental with its refined period and uncertainty and the profile it was fitted on, or null to keep p
 */
function fundamentalOnOwnAxis(image: GreyImage, axisPx: [number, number][], fit: CombFit, periodPx: number, finerPx: number, polarity: 'dark' | 'bright'): { fit: CombFit; periodPx: number; uPx: number; profile: AcrossProfile } | null {
  const { op, band } = ownAxisProfile(image, axisPx, fit.thicknessPx, periodPx);
  const atP = fitLayerComb(op, periodPx, band, { polarity, countReach: 2 });
  const atHalf0 = fitLayerComb(op, finerPx, band, { polarity, countReach: 3 });
  if (!atP || !atHalf0) return null;
  const refined = (f: CombFit) => (f.layers >= 4 ? refinePeriod(op, f, polarity, undefined) : { periodPx: f.periodPx, uPx: 0, fit: f });
  const p = refined(atP);
  const h = refined(atHalf0);
  return (p.fit.rss - h.fit.rss) / h.fit.noiseVar >= FUNDAMENTAL_MIN_GAIN ? { ...h, profile: op } : null;
}

/**
 * A stack's evidence for a finer period q over its comb at p, as a function of q: on the profile
 * along its own axis, (rss at p − rss at q) / the noise variance at q, counts free, periods not
 * refined (Δχ² of two fits with as many parameters; common practice); and its own strongest
 * fringes near p/2 ({@link ownFundamental}). The profile and the comb at p are made at the first call.
 */
function fundamentalEvidence(image: GreyImage, axisPx: [number, number][], fit: CombFit, periodPx: number, polarity: 'dark' | 'bright', minPeriodPx: number): { gainAt: (q: number) => number; ownQ: () => number | null; prefers: (aPx: number, bPx: number) => boolean } {
  let made: { op: AcrossProfile; band: { fromPx: number; toPx: number } } | null = null;
  let atP: CombFit | null | undefined;
  const make = () => (made ??= ownAxisProfile(image, axisPx, fit.thicknessPx, periodPx));
  return {
    gainAt: (q: number) => {
      const m = make();
      if (atP === undefined) atP = fitLayerComb(m.op, periodPx, m.band, { polarity, countReach: 2 });
      if (!atP) return 0;
      // the line width scaled from p's comb and the counts next to the band's own only: a cheap
      // lower bound of the free fit, enough to find where the stacks' evidence peaks
      const f = fitLayerComb(m.op, q, m.band, { polarity, countReach: 1, lineSigmasPx: [Math.max(0.45, (atP.lineSigmaPx * q) / periodPx)] });
      return f ? (atP.rss - f.rss) / f.noiseVar : 0;
    },
    ownQ: () => {
      const m = make();
      return ownFundamental(m.op, m.band, periodPx, minPeriodPx);
    },
    prefers: (aPx: number, bPx: number) => {
      const m = make();
      const at = (q: number) => {
        const f = fitLayerComb(m.op, q, m.band, { polarity, countReach: 3 });
        return f && f.layers >= 4 ? refinePeriod(m.op, f, polarity, undefined).fit : f;
      };
      const a = at(aPx);
      const b = at(bPx);
      return !!a && (!b || a.rss < b.rss);
    },
  };
}

/**
 * The period of a stack's own strongest fringes near half its period p, when the image's
 * periodograms found no phase there: the band's fringe power on the stack's own axis at periods
 * p/2·(0.85 … 1.15) in 1 % steps; its maximum, when it lies inside the range (not at an end), is
 * the finer period tried, and only when it carries at least a quarter of the fringe power at p
 * (a comb at p/2 whose odd lines, between p's, carry no contrast is p's harmonic, not a phase).
 * Single-frequency discrete Fourier transform (Goertzel's algorithm, common practice).
 *
 * @param op the profile across the stack along its own axis
 * @param band the band the comb at p covers, px
 * @param periodPx p, px
 * @param minPeriodPx the smallest period counted, px
 * @returns the finer period to test, px, or null when there is none
 */
function ownFundamental(op: AcrossProfile, band: { fromPx: number; toPx: number }, periodPx: number, minPeriodPx: number): number | null {
  const rows: { q: number; pw: number }[] = [];
  for (let k = -15; k <= 15; k++) {
    const q = (periodPx / 2) * (1 + 0.01 * k);
    if (q < minPeriodPx) continue;
    rows.push({ q, pw: fringePowerAt(op, band, q) });
  }
  if (rows.length < 3) return null;
  const m = rows.reduce((b, r, i) => (r.pw > rows[b].pw ? i : b), 0);
  if (m === 0 || m === rows.length - 1) return null;
  return rows[m].pw >= 0.25 * fringePowerAt(op, band, periodPx) ? rows[m].q : null;
}


/** What the test of a fundamental does to a stack: nothing, refuses it, or counts it again at the fundamental on its own axis. */
type FundamentalOutcome =
  | { kind: 'keep' }
  | { kind: 'reject'; reason: string; fit: CombFit; periodPx: number }
  | { kind: 'recount'; fit: CombFit; periodPx: number; uPx: number; counts: AlongCounts; frame: AxisFrame; offAt: (s: number) => number; axisPx: [number, number][] };

/**
 * A stack counted at p tested at a finer period q near p/2 ({@link fundamentalOnOwnAxis}) and,
 * when q wins, counted again at q along its own axis (the fine fringes wash out along the
 * candidate's). The fundamental must itself be countable (at least `minPeriodPx` once refined)
 * and a comb of it no lattice (not periodic along the axis), else the stack is refused; it is
 * kept at p when fewer than half its positions see the comb at q.
 */
function recountAtFundamental(image: GreyImage, axisPx: [number, number][], fit: CombFit, periodPx: number, finerPx: number, limit: [number, number], polarity: 'dark' | 'bright', minPeriodPx: number, spacing: number, minEvidence: number): FundamentalOutcome {
  const sub = fundamentalOnOwnAxis(image, axisPx, fit, periodPx, finerPx, polarity);
  if (!sub) return { kind: 'keep' };
  const own = axisFrame(axisPx);
  const fit2: CombFit = { ...fit, layers: sub.fit.layers, periodPx: sub.periodPx, lineSigmaPx: sub.fit.lineSigmaPx, thicknessPx: sub.fit.layers * sub.periodPx, centerPx: 0, firstPx: -((sub.fit.layers - 1) * sub.periodPx) / 2 };
  if (sub.periodPx < minPeriodPx) return { kind: 'reject', reason: `its own fundamental ${sub.periodPx.toFixed(2)} px is below ${minPeriodPx} px`, fit: fit2, periodPx: sub.periodPx };
  if (fit2.layers >= 3 && periodicAlongAxis(image, own, sub.fit.centerPx, Math.max(1, 0.35 * fit2.thicknessPx), sub.periodPx, acrossFringePower(sub.profile, sub.fit))) {
    return { kind: 'reject', reason: 'periodic along its axis as well at its own fundamental: a two-dimensional lattice, not a stack', fit: fit2, periodPx: sub.periodPx };
  }
  const c = countOnAxis(image, own, fit2, sub.periodPx, limit, polarity, spacing, minEvidence);
  if (!c) return { kind: 'keep' };
  return { kind: 'recount', fit: fit2, periodPx: sub.periodPx, uPx: sub.uPx, counts: c.counts, frame: own, offAt: c.offAt, axisPx: c.axisPx };
}

/**
 * A comb counted at positions along an axis (one every `spacing` px, 3–9), and the axis moved to
 * the stack's centres there; null when the stack is seen at fewer than half of them.
 */
function countOnAxis(image: GreyImage, frame: AxisFrame, fit: CombFit, periodPx: number, limit: [number, number], polarity: 'dark' | 'bright', spacing: number, minEvidence: number): { counts: AlongCounts; offAt: (s: number) => number; axisPx: [number, number][] } | null {
  const k = Math.max(3, Math.min(9, Math.round((0.9 * frame.lengthPx) / spacing)));
  const counts = countAlong(image, frame, fit, periodPx, limit, k, polarity, minEvidence);
  if (counts.counted.length < Math.max(2, Math.ceil(k / 2))) return null;
  const offAt = offsetAlong(counts, frame.lengthPx, (0.9 * frame.lengthPx) / k, minEvidence);
  const axisPx = frame.points.map((q, i) => {
    const o = offAt(frame.cumPx[i]);
    return [q[0] + o * frame.normals[i][0], q[1] + o * frame.normals[i][1]] as [number, number];
  });
  return { counts, offAt, axisPx };
}

/** A stack counted at a period with no phase of the image near its half, kept for the test of a shared fundamental. */
interface UnvotedStack {
  piece: Piece;
  /** The image's period it was counted from (before its own refinement), px. */
  imagePeriodPx: number;
  /** Its Δχ² for a comb at q over its comb at p ({@link fundamentalEvidence}). */
  gainAt: (q: number) => number;
  /** Its own strongest fringes near p/2, px, already tested (null: none). */
  ownQ: number | null;
  /** Whether it is still counted at p (its own fringes gave no fundamental). */
  leftAtP: boolean;
  /** Whether its comb at the first period fits better than at the second (each refined; {@link fundamentalEvidence}). */
  prefers: (aPx: number, bPx: number) => boolean;
  /** Its test at q and count there ({@link recountAtFundamental}). */
  recount: (q: number) => FundamentalOutcome;
}

/** Stacks whose image periods lie within 4 % of each other (one phase read from two passes). */
function groupByPeriod(stacks: UnvotedStack[]): UnvotedStack[][] {
  const sorted = [...stacks].sort((a, b) => a.imagePeriodPx - b.imagePeriodPx);
  const groups: UnvotedStack[][] = [];
  for (const st of sorted) {
    const g = groups[groups.length - 1];
    if (g && st.imagePeriodPx - g[0].imagePeriodPx <= 0.04 * g[0].imagePeriodPx) g.push(st);
    else groups.push([st]);
  }
  return groups;
}

/**
 * The fundamental the stacks counted at one period p share, when the image's periodograms show
 * none near p/2 (near the countable limit a blurred stack's fine fringes keep a tenth of their
 * contrast, and the band's shape leaks more power near p than its fringes give near p/2; or
 * another phase's harmonics outvote it): each stack's evidence for a comb at q over its comb at p
 * ({@link fundamentalEvidence}), summed over the stacks, at q = p/2 · (0.85 … 1.15) in 1 % steps
 * (q ≥ the smallest countable period). Its maximum is the shared fundamental when it lies inside
 * the range, reaches {@link FUNDAMENTAL_MIN_GAIN}, and more than half of the stacks (two at
 * least) fit the comb at q better than at p: the stacks of a coarse phase fit no comb at q better
 * (each gives a few noise variances below zero at every q), so one odd stack does not make it.
 * Pooled evidence of independent fits for one shared parameter (summed log-likelihood ratios over
 * a grid of the parameter; common practice).
 *
 * @param group the stacks counted at one period
 * @param minPeriodPx the smallest period counted, px
 * @returns the shared fundamental, px, or null when there is none
 */
function pooledFundamental(group: UnvotedStack[], minPeriodPx: number): number | null {
  const p = median(group.map((g) => g.imagePeriodPx));
  const qs: number[] = [];
  for (let k = -15; k <= 15; k++) if ((p / 2) * (1 + 0.01 * k) >= minPeriodPx) qs.push((p / 2) * (1 + 0.01 * k));
  // a maximum inside the range needs three steps at least
  if (qs.length < 3) return null;
  const rows = qs.map((q) => {
    const gains = group.map((g) => g.gainAt(q));
    return { q, gains, sum: gains.reduce((a, b) => a + b, 0) };
  });
  const m = rows.reduce((b, r, i) => (r.sum > rows[b].sum ? i : b), 0);
  if (m === 0 || m === rows.length - 1 || rows[m].sum < FUNDAMENTAL_MIN_GAIN) return null;
  // shared: more than half of the stacks fit the comb at q better than at p
  const showing = rows[m].gains.filter((g) => g > 0).length;
  return showing >= 2 && showing > group.length / 2 ? rows[m].q : null;
}

/** Stretch tried at a time when a faint comb's candidate is followed beyond its ends, px. */
const LENGTHEN_STEP_PX = 32;

/**
 * A faint comb's candidate followed beyond its ends along the comb's centre line
 * ({@link extendAxis}, a stretch of {@link LENGTHEN_STEP_PX} at a time, up to twice the candidate's
 * length or 64 px on each side), each stretch holding the same count with two fifths of the
 * comb's evidence per px and at least a quarter of the evidence asked of a stack, its layers
 * resolved, and stopping at a stack already measured (in a dense field a crossing stack's band
 * carried the comb 50 px past its stack's end, and the crossing stack was then taken for a piece
 * of it).
 *
 * @param onStack given a stretch's two ends, whether it runs onto a stack already measured
 * Region growing along a straight axis (common practice).
 *
 * @returns the longer candidate, or null when it grew by less than half its length
 */
function lengthenedCandidate(image: GreyImage, fc: { axis: RidgeAxis; frame: AxisFrame; fit: CombFit; periodPx: number; limitPx: [number, number] }, polarity: 'dark' | 'bright', minEvidence: number, mask: Uint8Array | null, onStack: (stretchPx: [number, number][]) => boolean): RidgeAxis | null {
  const { frame, fit } = fc;
  const centre = shiftAxis(frame, () => fit.centerPx);
  // the candidate's profile averages 0.1–0.9 of its length
  const perPx = fit.evidence / Math.max(1, 0.8 * frame.lengthPx);
  const minStretch = Math.max(0.25 * minEvidence, 0.4 * perPx * LENGTHEN_STEP_PX);
  const limit: [number, number] = [fc.limitPx[0] - fit.centerPx, fc.limitPx[1] - fit.centerPx];
  const longer = extendAxis(image, centre, fit.layers, fit.lineSigmaPx, fc.periodPx, limit, polarity, minStretch, mask, { stepPx: LENGTHEN_STEP_PX, reachPx: Math.max(64, 2 * frame.lengthPx), eachResolved: true, stopAt: onStack });
  const lengthPx = polylineLength(longer);
  if (lengthPx < 1.5 * frame.lengthPx) return null;
  // its ridge scale is the comb's band (a band of width w peaks at σ ≈ w/√6), so the survey's
  // window holds the whole band and background on both sides
  return { points: longer, scalePx: Math.max(fc.axis.scalePx, (fit.layers * fc.periodPx) / Math.sqrt(6)), strength: fc.axis.strength, lengthPx };
}

/** How {@link extendAxis} follows an axis beyond its ends. */
interface FollowOptions {
  /** The stretch tried at a time, px (default {@link EXTEND_STEP_PX}). */
  stepPx?: number;
  /** How far it may be followed beyond each end, px (default: as far as the stack is thick). */
  reachPx?: number;
  /** Each stretch of three layers or more must show its layers ({@link layersResolved}: a crossing stack's plain dark band fits a comb as well). */
  eachResolved?: boolean;
  /** Where the following stops: given a stretch's two ends, whether it meets something the stack must not be followed across. */
  stopAt?: ((stretchPx: [number, number][]) => boolean) | null;
}

/** Stretch of axis tried at a time beyond an end, px. */
const EXTEND_STEP_PX = 16;

/**
 * A stack's axis followed beyond its ends: the straight continuation of each end (its direction
 * over its last 20–40 px) is taken a stretch of {@link EXTEND_STEP_PX} at a time, and kept while
 * the width-averaged profile of that stretch still fits the stack's comb with the same count,
 * its centre within a period of the axis and at least the evidence asked for, at most as far as
 * the stack is thick on each side.
 * Region growing along a curvilinear axis (common practice).
 *
 * @param image the image
 * @param axisPx the stack's own axis, px (middle of its thickness)
 * @param layers the stack's layer count
 * @param lineSigmaPx its layer line's width, px
 * @param periodPx its period, px
 * @param limitPx bins across the axis outside which lie other stacks, px
 * @param polarity the layers' polarity
 * @param minStretchEvidence the evidence a stretch needs
 * @param mask pixels not searched (a scale bar's panel), or null
 * @param follow stretch, reach and the further conditions on each stretch ({@link FollowOptions})
 * @returns the axis with what was found beyond its ends (resampled every 2 px), or the axis itself
 */
function extendAxis(image: GreyImage, axisPx: [number, number][], layers: number, lineSigmaPx: number, periodPx: number, limitPx: [number, number], polarity: 'dark' | 'bright', minStretchEvidence: number, mask: Uint8Array | null, follow: FollowOptions = {}): [number, number][] {
  if (axisPx.length < 4) return axisPx;
  const stepPx = follow.stepPx ?? EXTEND_STEP_PX;
  const reachPx = follow.reachPx ?? Math.max(stepPx, layers * periodPx);
  const { eachResolved = false, stopAt = null } = follow;
  const thickness = layers * periodPx;
  const half = thickness / 2 + Math.max(3 * periodPx, 8);
  const inside = (x: number, y: number) => {
    if (!(x >= 0 && y >= 0 && x <= image.width - 1 && y <= image.height - 1)) return false;
    return !mask || mask[Math.round(y) * image.width + Math.round(x)] === 0;
  };
  const added: [number, number][][] = [[], []];
  for (let e = 0; e < 2; e++) {
    const n = axisPx.length;
    const end = e === 0 ? axisPx[0] : axisPx[n - 1];
    const reach = Math.max(10, Math.min(20, Math.floor(n / 3)));
    const back = axisPx[e === 0 ? Math.min(n - 1, reach) : Math.max(0, n - 1 - reach)];
    const dl = Math.hypot(end[0] - back[0], end[1] - back[1]);
    if (dl < 4) continue;
    const tx = (end[0] - back[0]) / dl;
    const ty = (end[1] - back[1]) / dl;
    for (let done = 0; done + stepPx <= reachPx + 1e-9; done += stepPx) {
      const a: [number, number] = [end[0] + done * tx, end[1] + done * ty];
      const b: [number, number] = [end[0] + (done + stepPx) * tx, end[1] + (done + stepPx) * ty];
      if (![a, b].every((q) => inside(q[0] + half * ty, q[1] - half * tx) && inside(q[0] - half * ty, q[1] + half * tx))) break;
      if (stopAt && stopAt([a, b])) break;
      // the stretch, ordered as the axis is (so its normals point the same way)
      const stretch = axisFrame(e === 0 ? [b, a] : [a, b]);
      const pp = acrossProfile(image, stretch, { halfWidthPx: half });
      const f = fitLayerComb(pp, periodPx, { fromPx: -thickness / 2, toPx: thickness / 2 }, { polarity, limitPx, countReach: 2, lineSigmasPx: [lineSigmaPx], centreReachPx: 0.75 * periodPx + 1 });
      if (!f || f.evidence < minStretchEvidence || f.layers !== layers || Math.abs(f.centerPx) > periodPx) break;
      if (eachResolved && layers >= 3 && !layersResolved(pp, f, polarity, limitPx)) break;
      added[e].push(b);
    }
  }
  if (added[0].length === 0 && added[1].length === 0) return axisPx;
  return resampleAxis([...added[0].reverse(), ...axisPx, ...added[1]]);
}


/** A candidate from fringe energy is not measured when more than this share of its axis lies on a stack already measured (at any angle). */
const FRINGE_CANDIDATE_MAX_ON_STACK = 0.5;

/** A comb alongside a stack is taken as that stack's edge below this share of its evidence per px of length. */
export const ALONGSIDE_EVIDENCE_SHARE = 1 / 3;

/**
 * Whether sheet a lies alongside sheet b: within 10° of its direction and 6 % of its period, with
 * 85 % of a's axis beside b's axis (within b's length) and the gap between their bands, on average
 * over those points, under half of b's period.
 */
function alongside(a: Omit<AutoSheet, 'id'>, b: Omit<AutoSheet, 'id'>): boolean {
  if (axialDiff(a.angleDeg, b.angleDeg) > 10 || Math.abs(a.periodPx - b.periodPx) > 0.06 * b.periodPx) return false;
  let tried = 0;
  let on = 0;
  let gapSum = 0;
  for (let k = 0; k < a.axisPx.length; k += 3) {
    const c = polylineCoords(b.axisPx, a.axisPx[k][0], a.axisPx[k][1]);
    tried++;
    const gap = Math.abs(c.u) - (a.thicknessPx + b.thicknessPx) / 2;
    if (c.s >= 0 && c.s <= b.lengthPx && gap < b.periodPx) {
      on++;
      gapSum += gap;
    }
  }
  return tried > 0 && on >= 0.85 * tried && gapSum / on < 0.5 * b.periodPx;
}

const SIN_10 = Math.sin((10 * Math.PI) / 180);

/**
 * Whether `a` is the end of stack `b` (three layers or more) measured again: directions within
 * 15°, as thick within 1.5 of b's periods, on b's line beyond its ends ({@link continuesAlong}),
 * and either at twice b's period (within 6 %: every other layer line taken for a layer) or, of
 * b's count, at a second reading of b's period (within 10 %).
 */
function isEndReadAgain(a: Omit<AutoSheet, 'id'>, b: Omit<AutoSheet, 'id'>, how: 'doubled' | 'second reading'): boolean {
  const periodFits = how === 'doubled' ? Math.abs(a.periodPx - 2 * b.periodPx) <= 0.12 * b.periodPx : a.layers === b.layers && Math.abs(a.periodPx - b.periodPx) <= 0.1 * b.periodPx;
  return b.layers >= 3 && periodFits && axialDiff(a.angleDeg, b.angleDeg) < 15 && Math.abs(a.thicknessPx - b.thicknessPx) <= 1.5 * b.periodPx && continuesAlong(a, b);
}

/** The refusal of `a`, stack `b`'s end read at twice its period. */
function doubledEnd(a: Omit<AutoSheet, 'id'>, b: Omit<AutoSheet, 'id'>): RejectedBand {
  return { centerPx: a.centerPx, angleDeg: a.angleDeg, layers: a.layers, periodPx: a.periodPx, reason: `continues a stack of ${b.layers} layers at ${b.periodPx.toFixed(2)} px, half its period, as thick: that stack's end, read at twice its period` };
}

/** The one of `periodsPx` (not empty) nearest `px`. */
function nearestPeriod(periodsPx: number[], px: number): number {
  return periodsPx.reduce((b, d) => (Math.abs(d - px) < Math.abs(b - px) ? d : b), periodsPx[0]);
}

/**
 * Whether a sheet lies on the line of another beyond its ends: every third point of its axis lies
 * within a third of the other's thickness (at least a period), plus its distance past the other's
 * end × sin 10°, of the other's axis extended; half of them or more lie past its ends, the nearest
 * at most 90 px (or four thicknesses) past them.
 */
function continuesAlong(a: Omit<AutoSheet, 'id'>, b: Omit<AutoSheet, 'id'>): boolean {
  const tol = Math.max(b.periodPx, b.thicknessPx / 3);
  const maxGap = Math.max(90, 4 * b.thicknessPx);
  let tried = 0;
  let beyond = 0;
  let gap = Infinity;
  for (let k = 0; k < a.axisPx.length; k += 3) {
    const c = polylineCoords(b.axisPx, a.axisPx[k][0], a.axisPx[k][1]);
    tried++;
    const past = c.s < 0 ? -c.s : c.s > b.lengthPx ? c.s - b.lengthPx : 0;
    // the other's direction extended, within 10° (a gently bent stack, an axis's own error)
    if (Math.abs(c.u) > tol + past * SIN_10) return false;
    if (past > 0) beyond++;
    gap = Math.min(gap, past);
  }
  return tried > 0 && beyond >= 0.5 * tried && gap <= maxGap;
}

/** Share of a polyline's points that lie on a sheet's band (inside its length, within half its thickness and a period of its axis). */
function shareOnBand(points: [number, number][], o: Pick<AutoSheet, 'axisPx' | 'lengthPx' | 'thicknessPx' | 'periodPx'>): number {
  if (points.length === 0) return 0;
  // every third point (about 6 px apart) is enough for a share
  let on = 0;
  let tried = 0;
  for (let k = 0; k < points.length; k += 3) {
    const c = polylineCoords(o.axisPx, points[k][0], points[k][1]);
    tried++;
    if (c.s >= 0 && c.s <= o.lengthPx && Math.abs(c.u) <= o.thicknessPx / 2 + o.periodPx) on++;
  }
  return on / tried;
}

function mean(v: number[]): number {
  return v.reduce((a, b) => a + b, 0) / v.length;
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

/** A stack whose period lies further than this (relative) from every image phase is at a period of its own, and must be confirmed at its positions. */
const OFF_PHASE_RELATIVE = 0.1;
