/** Connected components of a binary picture. */

/** One 8-connected component: its bounding box (inclusive, px) and its pixel indices. */
export interface Component {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  /** Indices y · width + x of its pixels. */
  pixels: number[];
}

/**
 * The 8-connected components of the pixels whose value is `value`.
 *
 * @param width picture width (px)
 * @param height picture height (px)
 * @param data one value per pixel, row by row
 * @param value the value of the pixels that form components (default: any non-zero value)
 * @returns the components in the order of their first pixel (row by row)
 * Notes: flood fill with an explicit stack (no recursion, so a large component cannot overflow it).
 * Reference: connected-component labelling, Rosenfeld & Pfaltz, J. ACM 13(4), 471–494 (1966).
 */
export function connectedComponents(width: number, height: number, data: Uint8Array, value?: number): Component[] {
  if (!(Number.isInteger(width) && width >= 0 && Number.isInteger(height) && height >= 0)) throw new RangeError(`width and height must be non-negative integers, got ${width} × ${height}`);
  if (data.length !== width * height) throw new RangeError(`data holds ${data.length} values, not ${width} × ${height}`);
  const member = value === undefined ? (k: number) => data[k] !== 0 : (k: number) => data[k] === value;
  const seen = new Uint8Array(width * height);
  const out: Component[] = [];
  for (let i = 0; i < data.length; i++) {
    if (seen[i] || !member(i)) continue;
    const c: Component = { x0: width, y0: height, x1: -1, y1: -1, pixels: [] };
    const stack = [i];
    seen[i] = 1;
    while (stack.length) {
      const k = stack.pop()!;
      const x = k % width;
      const y = (k - x) / width;
      c.pixels.push(k);
      if (x < c.x0) c.x0 = x;
      if (x > c.x1) c.x1 = x;
      if (y < c.y0) c.y0 = y;
      if (y > c.y1) c.y1 = y;
      for (let dy = -1; dy <= 1; dy++) {
        for (let dx = -1; dx <= 1; dx++) {
          const nx = x + dx;
          const ny = y + dy;
          if (nx < 0 || ny < 0 || nx >= width || ny >= height) continue;
          const nk = ny * width + nx;
          if (!seen[nk] && member(nk)) {
            seen[nk] = 1;
            stack.push(nk);
          }
        }
      }
    }
    out.push(c);
  }
  return out;
}

/**
 * Holes of a binary shape: background regions (4-connected) that do not reach the picture's rim.
 *
 * @param g the shape: non-zero pixels are ink
 * @param minArea smallest hole counted (px; default 1)
 * @returns the number of holes (0 for "1", 1 for "0", 2 for "8")
 * Notes: the picture is padded by one background pixel, so the first region labelled is the
 * outside; every later region is enclosed by ink.
 * Reference: Euler number of a binary image, Gray, IEEE Trans. Comput. C-20(5), 551–561 (1971).
 */
export function holeCount(g: { width: number; height: number; data: Uint8Array }, minArea = 1): number {
  const w = g.width + 2;
  const h = g.height + 2;
  const ink = new Uint8Array(w * h);
  for (let y = 0; y < g.height; y++) for (let x = 0; x < g.width; x++) ink[(y + 1) * w + x + 1] = g.data[y * g.width + x];
  const lab = new Int32Array(w * h);
  let regions = 0;
  let holes = 0;
  for (let i = 0; i < w * h; i++) {
    if (ink[i] || lab[i]) continue;
    regions++;
    let size = 0;
    const stack = [i];
    lab[i] = regions;
    while (stack.length) {
      const k = stack.pop()!;
      size++;
      const x = k % w;
      const y = (k - x) / w;
      for (const [nx, ny] of [[x - 1, y], [x + 1, y], [x, y - 1], [x, y + 1]]) {
        if (nx < 0 || ny < 0 || nx >= w || ny >= h) continue;
        const nk = ny * w + nx;
        if (!ink[nk] && !lab[nk]) {
          lab[nk] = regions;
          stack.push(nk);
        }
      }
    }
    if (regions > 1 && size >= minArea) holes++;
  }
  return holes;
}
