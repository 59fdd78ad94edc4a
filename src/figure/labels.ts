/**
 * Labels that never overlap: each label is put at the first of its candidate positions that stays
 * inside the drawing and clear of every label already placed and of the marks; a label with no
 * free position is left out (its number or value is still in the table beside the figure).
 */

/** An axis-aligned box, in the drawing's units (x right, y down). */
export interface Box {
  x: number;
  y: number;
  width: number;
  height: number;
}

/** One label to place. */
export interface LabelRequest {
  /** The point the label belongs to (a spot, a rule's top). */
  x: number;
  y: number;
  /** Size of the label's box. */
  width: number;
  height: number;
  /**
   * Candidate top-left corners to try, in order (default: the eight places around the point at
   * `gap`, then at three times the gap).
   */
  candidates?: readonly [number, number][];
}

/** Options of {@link placeLabels}. */
export interface PlaceLabelsOptions {
  /** The drawing: a placed label lies wholly inside it. */
  bounds: Box;
  /** Boxes no label may cover (markers, a legend). */
  obstacles?: readonly Box[];
  /** Distance between a point and its label, in the drawing's units (default 4). */
  gap?: number;
}

/** Where a label went. */
export interface PlacedLabel {
  /** Top-left corner and size of its box; meaningless when not placed. */
  box: Box;
  /** False when no candidate position was free: draw no label for this point. */
  placed: boolean;
}

/** True when two boxes share any area (touching edges do not count). */
export function boxesOverlap(a: Box, b: Box): boolean {
  return a.x < b.x + b.width && b.x < a.x + a.width && a.y < b.y + b.height && b.y < a.y + a.height;
}

function inside(a: Box, b: Box): boolean {
  return a.x >= b.x && a.y >= b.y && a.x + a.width <= b.x + b.width && a.y + a.height <= b.y + b.height;
}

/** The default candidates: right-above, left-above, right-below, left-below, right, left, above, below; near, then far. */
function aroundPoint(r: LabelRequest, gap: number): [number, number][] {
  const out: [number, number][] = [];
  for (const d of [gap, 3 * gap]) {
    const right = r.x + d;
    const left = r.x - d - r.width;
    const above = r.y - d - r.height;
    const below = r.y + d;
    const midY = r.y - r.height / 2;
    const midX = r.x - r.width / 2;
    out.push([right, above], [left, above], [right, below], [left, below], [right, midY], [left, midY], [midX, above], [midX, below]);
  }
  return out;
}

/**
 * Places labels in the order given (put the most important first), each at its first free
 * candidate position.
 *
 * @param requests the labels: their points, sizes and optional candidate positions
 * @param options the drawing's bounds, boxes to keep clear, the gap to the point
 * @returns one entry per request, in the same order: its box and whether it was placed
 * @throws RangeError naming the request whose size or point is not finite and positive
 * Notes: no two placed boxes overlap, none covers an obstacle and all lie inside the bounds, by
 * construction; the greedy order means an earlier label never moves for a later one.
 * Reference: greedy point-feature label placement over a fixed set of candidate positions
 * (Christensen, Marks & Shieber, ACM Trans. Graphics 14, 203 (1995), §2).
 */
export function placeLabels(requests: readonly LabelRequest[], options: PlaceLabelsOptions): PlacedLabel[] {
  const gap = options.gap ?? 4;
  if (!(gap >= 0 && Number.isFinite(gap))) throw new RangeError(`gap must be a non-negative number, got ${gap}`);
  const b = options.bounds;
  if (!b || ![b.x, b.y, b.width, b.height].every(Number.isFinite) || !(b.width > 0 && b.height > 0)) {
    throw new RangeError(`bounds must be a box of positive size, got ${JSON.stringify(b)}`);
  }
  const taken: Box[] = [...(options.obstacles ?? [])];
  return requests.map((r, i) => {
    if (![r.x, r.y].every(Number.isFinite) || !(r.width > 0 && r.height > 0 && Number.isFinite(r.width) && Number.isFinite(r.height))) {
      throw new RangeError(`label ${i} needs a finite point and a positive size, got ${JSON.stringify({ x: r.x, y: r.y, width: r.width, height: r.height })}`);
    }
    for (const [x, y] of r.candidates ?? aroundPoint(r, gap)) {
      const box = { x, y, width: r.width, height: r.height };
      if (inside(box, b) && !taken.some((t) => boxesOverlap(t, box))) {
        taken.push(box);
        return { box, placed: true };
      }
    }
    return { box: { x: r.x, y: r.y, width: r.width, height: r.height }, placed: false };
  });
}

/**
 * Candidate positions for the label of a vertical rule at x whose labels hang from the top of a
 * plot: right of the rule, then left of it, row by row downwards.
 * @param x the rule's position
 * @param top the plot's top edge
 * @param width the label's width
 * @param height the label's height (a row)
 * @param rows how many rows to try (default 4)
 * @returns the candidates for {@link LabelRequest.candidates}
 */
export function ruleLabelCandidates(x: number, top: number, width: number, height: number, rows = 4): [number, number][] {
  const out: [number, number][] = [];
  for (let k = 0; k < rows; k++) {
    const y = top + 2 + k * (height + 2);
    out.push([x + 3, y], [x - 3 - width, y]);
  }
  return out;
}

/**
 * A width for a label of plain text, without a font at hand: an average advance of 0.6 em per
 * character (common practice for sans-serif digits and lower case).
 * @param text the label
 * @param fontPx the font size
 * @returns the estimated width in the same units
 */
export function textWidthEstimate(text: string, fontPx: number): number {
  return Math.ceil([...text].length * fontPx * 0.6) + 2;
}
