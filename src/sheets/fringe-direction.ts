/**
 * A band's own fringe direction near its candidate's normal, and the candidate turned to it, for
 * bands that yielded no stack on their candidate (the candidate runs a few degrees off the layers).
 */
import type { GreyImage } from '../image/grey-image';
import { fringePowerAt, indexAt } from './count';
import { polylineLength, type RidgeAxis } from './ridges';
import { acrossProfile, axisFrame, type AxisFrame } from './stack-profile';

/** Widest turn of a band's fringe direction from its candidate's normal that is searched, degrees. */
export const TURN_MAX_DEG = 20;
/** Fringe power a turned direction needs over the candidate's own direction for the band to be measured again along it. */
export const TURN_MIN_POWER_RATIO = 1.5;
/** Fewest layers of a stack found on a turned candidate (it must refine its own period). */
export const TURN_MIN_LAYERS = 4;

/**
 * The direction of a band's own fringes near its candidate's normal: the band's pixels (a
 * straight strip through the band's centre, as long as the middle 80 % of the candidate and as
 * wide as the band) are projected on directions turned up to ±{@link TURN_MAX_DEG}° from the
 * candidate's normal (its chord's), in steps of period / length rad (the fringes then stay within
 * a quarter period in phase over the strip), and each projected profile's fringe power at the
 * period is taken; the direction of the most power is the band's fringe direction.
 * Projection (Radon-transform) direction search: S. R. Deans, "The Radon Transform and Some of
 * Its Applications", Wiley 1983.
 *
 * @param image the image
 * @param centrePx the band's centre, image px
 * @param normal the candidate's unit normal (image axes)
 * @param lengthPx the strip's length along the candidate, px
 * @param halfWidthPx half the band's width, px
 * @param periodPx the image period the band's fringes are looked for at, px
 * @returns the best turn, rad (positive from +x towards +y in image axes, y down), its unit normal, and its fringe power over the candidate's own direction's
 */
export function fringeDirection(image: GreyImage, centrePx: [number, number], normal: [number, number], lengthPx: number, halfWidthPx: number, periodPx: number): { turnRad: number; normal: [number, number]; powerRatio: number } {
  if (!(periodPx > 0 && lengthPx > 0 && halfWidthPx > 0)) throw new RangeError(`periodPx, lengthPx and halfWidthPx must be positive, got ${periodPx}, ${lengthPx}, ${halfWidthPx}`);
  const stepRad = Math.max(periodPx / lengthPx, 0.002);
  const nSteps = Math.floor(((TURN_MAX_DEG * Math.PI) / 180) / stepRad);
  const powerAt = (turnRad: number): { power: number; normal: [number, number] } => {
    const c = Math.cos(turnRad);
    const s = Math.sin(turnRad);
    const n: [number, number] = [c * normal[0] - s * normal[1], s * normal[0] + c * normal[1]];
    // the tangent is the normal turned back by 90° (axisFrame: normal = (ty, −tx))
    const t: [number, number] = [-n[1], n[0]];
    const frame = axisFrame(straightAxis(centrePx, t, lengthPx));
    const prof = acrossProfile(image, frame, { halfWidthPx: halfWidthPx + periodPx });
    return { power: fringePowerAt(prof, { fromPx: -halfWidthPx, toPx: halfWidthPx }, periodPx), normal: n };
  };
  const own = powerAt(0);
  let best = { turnRad: 0, ...own };
  for (let k = -nSteps; k <= nSteps; k++) {
    if (k === 0) continue;
    const r = powerAt(k * stepRad);
    if (r.power > best.power) best = { turnRad: k * stepRad, ...r };
  }
  return { turnRad: best.turnRad, normal: best.normal, powerRatio: own.power > 0 ? best.power / own.power : best.power > 0 ? Infinity : 1 };
}

/** A straight axis through a centre along a unit tangent, points 2 px apart. */
function straightAxis(centrePx: [number, number], tangent: [number, number], lengthPx: number): [number, number][] {
  const n = Math.max(2, Math.round(lengthPx / 2) + 1);
  const pts: [number, number][] = [];
  for (let i = 0; i < n; i++) {
    const s = -lengthPx / 2 + (lengthPx * i) / (n - 1);
    pts.push([centrePx[0] + s * tangent[0], centrePx[1] + s * tangent[1]]);
  }
  return pts;
}

/**
 * A candidate turned to its band's own fringes, for a band that yielded no stack: when the
 * band's fringe direction ({@link fringeDirection}) carries at least {@link TURN_MIN_POWER_RATIO}
 * times the fringe power of the candidate's own direction, a straight axis through the band's
 * centre along those fringes (the candidate's chord length, kept inside the image), to be
 * measured like any candidate; else null.
 *
 * @param image the image
 * @param axis the candidate
 * @param frame the candidate's axis frame
 * @param band the band that yielded no stack (offsets across the axis, px)
 * @param periodPx the image period its comb was fitted at, px
 * @returns the turned candidate, or null
 */
export function turnedCandidate(image: GreyImage, axis: RidgeAxis, frame: AxisFrame, band: { fromPx: number; toPx: number }, periodPx: number): RidgeAxis | null {
  const pts = frame.points;
  if (pts.length < 2) return null;
  const a = pts[0];
  const b = pts[pts.length - 1];
  const chordPx = Math.hypot(b[0] - a[0], b[1] - a[1]);
  const halfWidthPx = 0.5 * (band.toPx - band.fromPx);
  if (!(chordPx > 8 && halfWidthPx > 0)) return null;
  const t: [number, number] = [(b[0] - a[0]) / chordPx, (b[1] - a[1]) / chordPx];
  const n: [number, number] = [t[1], -t[0]];
  const mid = indexAt(frame, frame.lengthPx / 2);
  const off = 0.5 * (band.fromPx + band.toPx);
  const centre: [number, number] = [pts[mid][0] + off * frame.normals[mid][0], pts[mid][1] + off * frame.normals[mid][1]];
  const dir = fringeDirection(image, centre, n, 0.8 * chordPx, halfWidthPx, periodPx);
  if (dir.turnRad === 0 || dir.powerRatio < TURN_MIN_POWER_RATIO) return null;
  const tt: [number, number] = [-dir.normal[1], dir.normal[0]];
  const inside = (q: [number, number]) => q[0] >= 0 && q[1] >= 0 && q[0] <= image.width - 1 && q[1] <= image.height - 1;
  const points = straightAxis(centre, tt, chordPx).filter(inside);
  if (points.length < 2) return null;
  const lengthPx = polylineLength(points);
  return lengthPx >= 8 ? { points, scalePx: axis.scalePx, strength: axis.strength, lengthPx } : null;
}
