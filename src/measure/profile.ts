/**
 * Line profiles: grey values sampled along a straight line of a chosen width.
 */
import type { GreyImage } from '../image/grey-image';

/** Options of {@link lineProfile}. */
export interface LineProfileOptions {
  /** Width of the line across its direction, in pixels (≥ 1; default 1). Values are averaged across it. */
  widthPx?: number;
}

/** A sampled line profile. */
export interface LineProfile {
  /** Distance of each sample from the start point, in pixels (1 px steps). */
  distancePx: Float64Array;
  /** Mean grey value across the width at each sample. */
  mean: Float64Array;
  /** Standard error of that mean (sample SD across the width / √n); NaN when the width is one sample. */
  standardError: Float64Array;
  /** Length of the line from start to end, in pixels. */
  lengthPx: number;
  /** Direction of the line in degrees, in [0, 180), counter-clockwise from +x as shown (y up on screen). */
  angleDeg: number;
}

/** Bilinear interpolation at (x, y); the caller guarantees 0 ≤ x ≤ w − 1, 0 ≤ y ≤ h − 1. */
function bilinear(img: GreyImage, x: number, y: number): number {
  const w = img.width;
  const x0 = Math.min(Math.floor(x), w - 2 < 0 ? 0 : w - 2);
  const y0 = Math.min(Math.floor(y), img.height - 2 < 0 ? 0 : img.height - 2);
  const fx = x - x0;
  const fy = y - y0;
  const x1 = Math.min(x0 + 1, w - 1);
  const y1 = Math.min(y0 + 1, img.height - 1);
  const d = img.data;
  const a = d[y0 * w + x0];
  const b = d[y0 * w + x1];
  const c = d[y1 * w + x0];
  const e = d[y1 * w + x1];
  return (a * (1 - fx) + b * fx) * (1 - fy) + (c * (1 - fx) + e * fx) * fy;
}

/**
 * Samples a straight line of a given width through an image.
 *
 * Parameters: the image; start (x0, y0) and end (x1, y1) in pixel coordinates (x right, y = row
 * index, pixel centres at integers); options (width).
 * Returns: distances in px (nm follow late, through the calibration), the mean across the width and its standard
 * error at each sample, the line's length and direction.
 * Notes: samples are taken every 1 px from the start point (floor(length) + 1 samples); across the
 * width, round(widthPx) samples 1 px apart centred on the line are averaged. Every sample point must
 * lie inside the image, otherwise the call is rejected.
 * Reference: bilinear interpolation, Press et al., Numerical Recipes 3rd ed. §3.6 (2007).
 */
export function lineProfile(
  image: GreyImage,
  x0: number,
  y0: number,
  x1: number,
  y1: number,
  options: LineProfileOptions = {},
): LineProfile {
  for (const [name, v] of [['x0', x0], ['y0', y0], ['x1', x1], ['y1', y1]] as const) {
    if (!Number.isFinite(v)) throw new RangeError(`${name} must be a finite number, got ${v}`);
  }
  const widthPx = options.widthPx ?? 1;
  if (!Number.isFinite(widthPx) || widthPx < 1) throw new RangeError(`widthPx must be ≥ 1, got ${widthPx}`);
  const lengthPx = Math.hypot(x1 - x0, y1 - y0);
  if (!(lengthPx >= 1)) throw new RangeError(`the line must be at least 1 px long, got ${lengthPx} px`);
  const ux = (x1 - x0) / lengthPx;
  const uy = (y1 - y0) / lengthPx;
  // Normal to the line (any consistent choice).
  const nx = -uy;
  const ny = ux;
  const across = Math.max(1, Math.round(widthPx));
  const half = (across - 1) / 2;
  const n = Math.floor(lengthPx + 1e-9) + 1;
  const maxX = image.width - 1;
  const maxY = image.height - 1;
  const tol = 1e-9;
  // Check the four corners of the sampled band.
  for (const t of [0, n - 1]) {
    for (const s of [-half, half]) {
      const px = x0 + ux * t + nx * s;
      const py = y0 + uy * t + ny * s;
      if (px < -tol || py < -tol || px > maxX + tol || py > maxY + tol) {
        throw new RangeError(
          `line (${x0}, ${y0})–(${x1}, ${y1}) of width ${widthPx} px leaves the ${image.width} × ${image.height} image at (${px.toFixed(2)}, ${py.toFixed(2)})`,
        );
      }
    }
  }
  const distancePx = new Float64Array(n);
  const mean = new Float64Array(n);
  const standardError = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    distancePx[i] = i;
    let sum = 0;
    let sum2 = 0;
    for (let j = 0; j < across; j++) {
      const s = j - half;
      const px = Math.min(maxX, Math.max(0, x0 + ux * i + nx * s));
      const py = Math.min(maxY, Math.max(0, y0 + uy * i + ny * s));
      const v = bilinear(image, px, py);
      sum += v;
      sum2 += v * v;
    }
    const m = sum / across;
    mean[i] = m;
    standardError[i] = across > 1 ? Math.sqrt(Math.max(0, (sum2 - across * m * m) / (across - 1)) / across) : NaN;
  }
  let angleDeg = (Math.atan2(-(y1 - y0), x1 - x0) * 180) / Math.PI;
  angleDeg = ((angleDeg % 180) + 180) % 180;
  if (angleDeg >= 180 - 1e-12) angleDeg = 0;
  return { distancePx, mean, standardError, lengthPx, angleDeg };
}
