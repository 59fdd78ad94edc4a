/**
 * Polylines of a sheet's axis and outline, kept with as few vertices as their shape needs.
 */

/**
 * The vertices of a polyline that keep every dropped point within a tolerance of the kept line.
 *
 * @param points the polyline, image px (not changed)
 * @param tolerancePx the largest distance, px, of a dropped point from the segment that replaces it; ≥ 0
 * @returns a new array: the first and last point and the vertices needed between them (copies)
 * @throws RangeError when the tolerance is negative or not finite, or a point is not finite
 *
 * Notes: a sheet's axis is sampled every pixel along its length (about 400 points for a stack
 * 400 px long, and twice that for its outline); kept so in every record and undo step it made a
 * find on a whole overview 336 kB of numbers. A straight stretch needs its two ends. Done with an
 * explicit stack, so a long polyline cannot overflow the call stack.
 * Reference: Ramer, Computer Graphics and Image Processing 1 (1972) 244–256; Douglas & Peucker,
 * Cartographica 10 (1973) 112–122.
 */
export function simplifyPolyline(points: readonly (readonly [number, number])[], tolerancePx: number): [number, number][] {
  if (!(tolerancePx >= 0) || !Number.isFinite(tolerancePx)) throw new RangeError(`simplifyPolyline: tolerancePx must be a finite number ≥ 0, got ${tolerancePx}`);
  points.forEach((p, i) => {
    if (!Number.isFinite(p[0]) || !Number.isFinite(p[1])) throw new RangeError(`simplifyPolyline: point ${i} (${p[0]}, ${p[1]}) is not finite`);
  });
  const n = points.length;
  if (n <= 2) return points.map((p) => [p[0], p[1]]);
  const keep = new Uint8Array(n);
  keep[0] = 1;
  keep[n - 1] = 1;
  const stack: [number, number][] = [[0, n - 1]];
  while (stack.length) {
    const [a, b] = stack.pop()!;
    const [ax, ay] = points[a];
    const dx = points[b][0] - ax;
    const dy = points[b][1] - ay;
    const len2 = dx * dx + dy * dy;
    let worst = -1;
    let worstD2 = tolerancePx * tolerancePx;
    for (let i = a + 1; i < b; i++) {
      const px = points[i][0] - ax;
      const py = points[i][1] - ay;
      // distance to the segment (to its nearer end beyond the ends), squared
      const t = len2 > 0 ? Math.max(0, Math.min(1, (px * dx + py * dy) / len2)) : 0;
      const ex = px - t * dx;
      const ey = py - t * dy;
      const d2 = ex * ex + ey * ey;
      if (d2 > worstD2) {
        worstD2 = d2;
        worst = i;
      }
    }
    if (worst > 0) {
      keep[worst] = 1;
      stack.push([a, worst], [worst, b]);
    }
  }
  const out: [number, number][] = [];
  for (let i = 0; i < n; i++) if (keep[i]) out.push([points[i][0], points[i][1]]);
  return out;
}
