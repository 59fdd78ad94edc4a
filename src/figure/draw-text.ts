/**
 * A small anti-aliased rasteriser for labels and shapes on grey rasters: two stroke fonts, filled
 * rectangles with sub-pixel edges, thick lines and rectangle outlines. Used to burn scale bars and
 * labels into synthetic micrographs and, later, to annotate exported figures.
 *
 * Coverage is computed analytically per pixel (pixel i covers [i, i + 1)): for shapes with
 * straight axis-aligned edges it is the exact box-filtered area; for strokes it is the distance
 * ramp clamp(r − d + 0.5, 0, 1), a one-pixel-wide linear anti-aliasing edge (common practice).
 */

/** Anything with a width, a height and row-major grey values (a GreyImage qualifies). */
export interface Raster {
  width: number;
  height: number;
  data: Float32Array;
}

/** The two stroke fonts: a thin, round, condensed face and a bold, angular, wide face. */
export type StrokeFontName = 'sans' | 'block';

export interface TextOptions {
  /** Cap height in pixels (the height of a digit). */
  sizePx: number;
  /** Grey value of the ink. */
  value: number;
  /** Which stroke font; 'sans' when absent. */
  font?: StrokeFontName;
  /** Stroke width as a fraction of the cap height; the font's own weight when absent. */
  weight?: number;
  /** Extra space between characters as a fraction of the cap height; 0.12 when absent. */
  letterSpacing?: number;
}

type Pt = [number, number];
type Polyline = Pt[];
interface Glyph {
  advance: number;
  strokes: Polyline[];
}

interface FontStyle {
  /** Horizontal stretch of the glyph geometry. */
  xScale: number;
  /** Number of straight segments per full turn of an arc (few: angular look). */
  arcSegments: number;
  /** Default stroke width as a fraction of the cap height. */
  weight: number;
}

const STYLES: Record<StrokeFontName, FontStyle> = {
  sans: { xScale: 0.92, arcSegments: 64, weight: 0.1 },
  block: { xScale: 1.18, arcSegments: 8, weight: 0.17 },
};

/**
 * Glyph outlines in em units: cap height 1, baseline y = 0, y up, x from 0 to about 0.55.
 * `arc(cx, cy, rx, ry, a0Deg, a1Deg)` walks counter-clockwise for a1 > a0.
 */
function buildGlyphs(style: FontStyle): Map<string, Glyph> {
  const arc = (cx: number, cy: number, rx: number, ry: number, a0: number, a1: number): Polyline => {
    const turns = Math.abs(a1 - a0) / 360;
    const n = Math.max(2, Math.round(style.arcSegments * turns));
    const pts: Polyline = [];
    for (let i = 0; i <= n; i++) {
      const a = ((a0 + ((a1 - a0) * i) / n) * Math.PI) / 180;
      pts.push([cx + rx * Math.cos(a), cy + ry * Math.sin(a)]);
    }
    return pts;
  };
  const g = new Map<string, Glyph>();
  const put = (ch: string, advance: number, strokes: Polyline[]) => g.set(ch, { advance, strokes });
  const W = 0.56;
  put('0', W, [arc(0.28, 0.5, 0.24, 0.5, 0, 360)]);
  put('1', W, [[[0.1, 0.78], [0.32, 1], [0.32, 0]], [[0.12, 0], [0.5, 0]]]);
  put('2', W, [[...arc(0.28, 0.74, 0.23, 0.26, 165, 0).slice(0, -1), ...arc(0.28, 0.74, 0.23, 0.26, 0, -40), [0.04, 0], [0.52, 0]]]);
  put('3', W, [arc(0.27, 0.76, 0.22, 0.24, 150, -90), arc(0.27, 0.26, 0.25, 0.26, 90, -150)]);
  put('4', W, [[[0.4, 0], [0.4, 1], [0.03, 0.3], [0.54, 0.3]]]);
  put('5', W, [[[0.5, 1], [0.1, 1], [0.07, 0.56], ...arc(0.27, 0.33, 0.25, 0.33, 120, -150)]]);
  put('6', W, [[...arc(0.3, 0.5, 0.25, 0.5, 50, 180), ...arc(0.29, 0.31, 0.24, 0.31, 180, 540)]]);
  put('7', W, [[[0.04, 1], [0.52, 1], [0.2, 0]]]);
  put('8', W, [arc(0.28, 0.77, 0.2, 0.23, -90, 270), arc(0.28, 0.27, 0.25, 0.27, 90, 450)]);
  put('9', W, [[...arc(0.26, 0.5, 0.25, 0.5, 230, 360), ...arc(0.27, 0.69, 0.24, 0.31, 0, 360)]]);
  put('.', 0.3, [[[0.13, 0.03], [0.13, 0.03]]]);
  put(',', 0.3, [[[0.15, 0.06], [0.08, -0.16]]]);
  put('-', 0.5, [[[0.08, 0.42], [0.42, 0.42]]]);
  put(' ', 0.36, []);
  put('n', 0.56, [[[0.06, 0], [0.06, 0.62]], [[0.06, 0.36], ...arc(0.28, 0.38, 0.22, 0.24, 180, 0), [0.5, 0]]]);
  put('u', 0.56, [[[0.06, 0.62], ...arc(0.28, 0.24, 0.22, 0.24, 180, 360), [0.5, 0.62]], [[0.5, 0.62], [0.5, 0]]]);
  put('µ', 0.56, [[[0.06, -0.32], [0.06, 0.62]], [[0.06, 0.24], ...arc(0.28, 0.24, 0.22, 0.24, 180, 360), [0.5, 0.62]], [[0.5, 0.62], [0.5, 0]]]);
  put('m', 0.86, [
    [[0.06, 0], [0.06, 0.62]],
    [[0.06, 0.4], ...arc(0.23, 0.42, 0.17, 0.2, 180, 0), [0.4, 0]],
    [[0.4, 0.42], ...arc(0.57, 0.42, 0.17, 0.2, 180, 0), [0.74, 0]],
  ]);
  put('p', 0.58, [[[0.06, -0.36], [0.06, 0.62]], arc(0.29, 0.31, 0.23, 0.31, 0, 360)]);
  put('A', 0.64, [[[0.02, 0], [0.32, 1], [0.62, 0]], [[0.12, 0.33], [0.52, 0.33]]]);
  put('Å', 0.64, [[[0.02, 0], [0.32, 0.96], [0.62, 0]], [[0.12, 0.32], [0.52, 0.32]], arc(0.32, 1.18, 0.1, 0.1, 0, 360)]);
  put('x', 0.52, [[[0.04, 0], [0.46, 0.62]], [[0.04, 0.62], [0.46, 0]]]);
  put('k', 0.52, [[[0.06, 0], [0.06, 1]], [[0.46, 0.62], [0.06, 0.22]], [[0.2, 0.34], [0.48, 0]]]);
  put('V', 0.6, [[[0.02, 1], [0.3, 0], [0.58, 1]]]);
  put('=', 0.5, [[[0.06, 0.3], [0.44, 0.3]], [[0.06, 0.56], [0.44, 0.56]]]);
  put('/', 0.45, [[[0.04, -0.1], [0.41, 1.05]]]);
  put(':', 0.3, [[[0.13, 0.03], [0.13, 0.03]], [[0.13, 0.55], [0.13, 0.55]]]);
  // lowercase (x-height 0.62, ascenders at the cap height, descenders to −0.36), capitals and signs
  const XH = 0.62;
  put('a', 0.56, [arc(0.27, 0.31, 0.22, 0.31, 0, 360), [[0.5, XH], [0.5, 0]]]);
  put('b', 0.58, [[[0.06, 1], [0.06, 0]], arc(0.29, 0.31, 0.23, 0.31, 0, 360)]);
  put('c', 0.54, [arc(0.29, 0.31, 0.23, 0.31, 45, 315)]);
  put('d', 0.56, [arc(0.27, 0.31, 0.23, 0.31, 0, 360), [[0.5, 1], [0.5, 0]]]);
  put('e', 0.58, [[[0.06, 0.31], [0.52, 0.31], ...arc(0.29, 0.31, 0.23, 0.31, 0, 315).slice(1)]]);
  put('f', 0.44, [[...arc(0.38, 0.8, 0.16, 0.2, 30, 180), [0.22, 0]], [[0.04, XH], [0.42, XH]]]);
  put('g', 0.56, [arc(0.27, 0.31, 0.23, 0.31, 0, 360), [[0.5, XH], ...arc(0.28, -0.1, 0.22, 0.24, 0, -150)]]);
  put('h', 0.56, [[[0.06, 1], [0.06, 0]], [[0.06, 0.36], ...arc(0.28, 0.38, 0.22, 0.24, 180, 0), [0.5, 0]]]);
  put('i', 0.22, [[[0.1, 0], [0.1, XH]], [[0.1, 0.86], [0.1, 0.86]]]);
  put('j', 0.32, [[[0.22, XH], ...arc(0.08, -0.14, 0.14, 0.2, 0, -120)], [[0.22, 0.86], [0.22, 0.86]]]);
  put('l', 0.22, [[[0.1, 1], [0.1, 0]]]);
  put('o', 0.56, [arc(0.28, 0.31, 0.23, 0.31, 0, 360)]);
  put('q', 0.56, [arc(0.27, 0.31, 0.23, 0.31, 0, 360), [[0.5, XH], [0.5, -0.36]]]);
  put('r', 0.4, [[[0.06, 0], [0.06, XH]], [[0.06, 0.34], ...arc(0.26, 0.38, 0.2, 0.24, 180, 60)]]);
  put('s', 0.5, [[...arc(0.25, 0.465, 0.19, 0.155, 30, 270), ...arc(0.25, 0.155, 0.21, 0.155, 90, -150).slice(1)]]);
  put('t', 0.44, [[[0.18, 0.88], ...arc(0.3, 0.12, 0.12, 0.12, 180, 320)], [[0.04, XH], [0.4, XH]]]);
  put('v', 0.52, [[[0.02, XH], [0.26, 0], [0.5, XH]]]);
  put('w', 0.76, [[[0.02, XH], [0.2, 0], [0.38, 0.5], [0.56, 0], [0.74, XH]]]);
  put('y', 0.52, [[[0.02, XH], [0.28, 0]], [[0.5, XH], [0.16, -0.34], [0.08, -0.34]]]);
  put('z', 0.52, [[[0.04, XH], [0.48, XH], [0.04, 0], [0.48, 0]]]);
  put('B', 0.62, [
    [[0.06, 0.52], [0.06, 1], [0.3, 1], ...arc(0.3, 0.76, 0.2, 0.24, 90, -90), [0.06, 0.52]],
    [[0.06, 0.52], [0.32, 0.52], ...arc(0.32, 0.26, 0.24, 0.26, 90, -90), [0.06, 0], [0.06, 0.52]],
  ]);
  put('C', 0.62, [arc(0.33, 0.5, 0.28, 0.5, 45, 315)]);
  put('D', 0.64, [[[0.06, 0], [0.06, 1], [0.26, 1], ...arc(0.26, 0.5, 0.32, 0.5, 90, -90), [0.06, 0]]]);
  put('E', 0.56, [[[0.5, 1], [0.06, 1], [0.06, 0], [0.5, 0]], [[0.06, 0.52], [0.42, 0.52]]]);
  put('F', 0.54, [[[0.5, 1], [0.06, 1], [0.06, 0]], [[0.06, 0.52], [0.42, 0.52]]]);
  put('G', 0.66, [[...arc(0.33, 0.5, 0.28, 0.5, 45, 360), [0.61, 0.44], [0.38, 0.44]]]);
  put('H', 0.62, [[[0.06, 0], [0.06, 1]], [[0.56, 0], [0.56, 1]], [[0.06, 0.52], [0.56, 0.52]]]);
  put('I', 0.36, [[[0.04, 1], [0.32, 1]], [[0.18, 1], [0.18, 0]], [[0.04, 0], [0.32, 0]]]);
  put('J', 0.52, [[[0.44, 1], ...arc(0.24, 0.28, 0.2, 0.28, 0, -180)]]);
  put('K', 0.6, [[[0.06, 0], [0.06, 1]], [[0.54, 1], [0.06, 0.36]], [[0.24, 0.6], [0.56, 0]]]);
  put('L', 0.52, [[[0.06, 1], [0.06, 0], [0.5, 0]]]);
  put('M', 0.72, [[[0.06, 0], [0.06, 1], [0.36, 0.3], [0.66, 1], [0.66, 0]]]);
  put('N', 0.62, [[[0.06, 0], [0.06, 1], [0.56, 0], [0.56, 1]]]);
  put('O', 0.66, [arc(0.33, 0.5, 0.29, 0.5, 0, 360)]);
  put('P', 0.6, [[[0.06, 0], [0.06, 1], [0.3, 1], ...arc(0.3, 0.73, 0.24, 0.27, 90, -90), [0.06, 0.46]]]);
  put('Q', 0.66, [arc(0.33, 0.5, 0.29, 0.5, 0, 360), [[0.4, 0.22], [0.62, 0]]]);
  put('R', 0.62, [[[0.06, 0], [0.06, 1], [0.3, 1], ...arc(0.3, 0.73, 0.24, 0.27, 90, -90), [0.06, 0.46]], [[0.3, 0.46], [0.56, 0]]]);
  put('S', 0.6, [[...arc(0.29, 0.75, 0.23, 0.25, 30, 270), ...arc(0.29, 0.25, 0.25, 0.25, 90, -150).slice(1)]]);
  put('T', 0.6, [[[0.02, 1], [0.58, 1]], [[0.3, 1], [0.3, 0]]]);
  put('U', 0.62, [[[0.06, 1], ...arc(0.31, 0.3, 0.25, 0.3, 180, 360), [0.56, 1]]]);
  put('W', 0.8, [[[0.02, 1], [0.2, 0], [0.4, 0.7], [0.6, 0], [0.78, 1]]]);
  put('X', 0.6, [[[0.04, 0], [0.56, 1]], [[0.04, 1], [0.56, 0]]]);
  put('Y', 0.6, [[[0.02, 1], [0.3, 0.5], [0.58, 1]], [[0.3, 0.5], [0.3, 0]]]);
  put('Z', 0.58, [[[0.04, 1], [0.54, 1], [0.04, 0], [0.54, 0]]]);
  put('(', 0.3, [arc(0.36, 0.425, 0.3, 0.72, 120, 240)]);
  put(')', 0.3, [arc(-0.06, 0.425, 0.3, 0.72, 60, -60)]);
  put('%', 0.64, [arc(0.15, 0.8, 0.1, 0.16, 0, 360), arc(0.49, 0.2, 0.1, 0.16, 0, 360), [[0.52, 1], [0.12, 0]]]);
  put('±', 0.52, [[[0.06, 0.58], [0.46, 0.58]], [[0.26, 0.8], [0.26, 0.36]], [[0.06, 0.1], [0.46, 0.1]]]);
  put('+', 0.52, [[[0.06, 0.42], [0.46, 0.42]], [[0.26, 0.2], [0.26, 0.64]]]);
  put('·', 0.3, [[[0.13, 0.42], [0.13, 0.42]]]);
  put('×', 0.5, [[[0.08, 0.24], [0.42, 0.58]], [[0.08, 0.58], [0.42, 0.24]]]);
  put('°', 0.34, [arc(0.16, 0.84, 0.1, 0.12, 0, 360)]);
  return g;
}

const FONT_CACHE = new Map<StrokeFontName, Map<string, Glyph>>();
function glyphs(font: StrokeFontName): Map<string, Glyph> {
  let g = FONT_CACHE.get(font);
  if (!g) {
    g = buildGlyphs(STYLES[font]);
    FONT_CACHE.set(font, g);
  }
  return g;
}

/** The characters the stroke fonts can draw. */
export const DRAWABLE_CHARACTERS = [...glyphs('sans').keys()].join('');

function checkRaster(r: Raster): void {
  if (!r || !(r.data instanceof Float32Array) || r.data.length !== r.width * r.height) {
    throw new TypeError('raster must have width, height and a Float32Array of width × height values');
  }
}

function checkFinite(name: string, v: number): void {
  if (!Number.isFinite(v)) throw new RangeError(`${name} must be a finite number, got ${v}`);
}

/** Blends `value` into pixel (x, y) with coverage c in [0, 1] (out-of-raster pixels are skipped). */
function blend(r: Raster, x: number, y: number, value: number, c: number): void {
  if (c <= 0 || x < 0 || y < 0 || x >= r.width || y >= r.height) return;
  const i = y * r.width + x;
  const k = c >= 1 ? 1 : c;
  r.data[i] = r.data[i] * (1 - k) + value * k;
}

/**
 * Fills the axis-aligned rectangle [x, x + w) × [y, y + h) with exact area coverage at
 * fractional edges.
 * @param r raster to draw into (changed in place)
 * @param x left edge in px (may be fractional)
 * @param y top edge in px (may be fractional)
 * @param w width in px (> 0)
 * @param h height in px (> 0)
 * @param value grey value of the fill
 * Notes: the exact box-filter area of the rectangle over each pixel (common practice in
 * anti-aliased rasterisers).
 */
export function fillRect(r: Raster, x: number, y: number, w: number, h: number, value: number): void {
  checkRaster(r);
  for (const [n, v] of [['x', x], ['y', y], ['w', w], ['h', h], ['value', value]] as const) checkFinite(n, v);
  if (w <= 0 || h <= 0) throw new RangeError(`rectangle size must be positive, got ${w} × ${h}`);
  const x1 = x + w;
  const y1 = y + h;
  const ix0 = Math.max(0, Math.floor(x));
  const ix1 = Math.min(r.width - 1, Math.ceil(x1) - 1);
  const iy0 = Math.max(0, Math.floor(y));
  const iy1 = Math.min(r.height - 1, Math.ceil(y1) - 1);
  for (let py = iy0; py <= iy1; py++) {
    const cy = Math.min(py + 1, y1) - Math.max(py, y);
    for (let px = ix0; px <= ix1; px++) {
      const cx = Math.min(px + 1, x1) - Math.max(px, x);
      blend(r, px, py, value, cx * cy);
    }
  }
}

/**
 * Draws the outline of a rectangle, the band of width `lineWidthPx` lying outside
 * [x, x + w) × [y, y + h) (so a filled rectangle keeps its size inside its border).
 * @param lineWidthPx band width in px (> 0)
 */
export function strokeRectOutside(
  r: Raster,
  x: number,
  y: number,
  w: number,
  h: number,
  lineWidthPx: number,
  value: number,
): void {
  if (!(lineWidthPx > 0)) throw new RangeError(`lineWidthPx must be positive, got ${lineWidthPx}`);
  const b = lineWidthPx;
  fillRect(r, x - b, y - b, w + 2 * b, b, value);
  fillRect(r, x - b, y + h, w + 2 * b, b, value);
  fillRect(r, x - b, y, b, h, value);
  fillRect(r, x + w, y, b, h, value);
}

/** Squared distance from (px, py) to the segment a–b. */
function segDist(px: number, py: number, ax: number, ay: number, bx: number, by: number): number {
  const dx = bx - ax;
  const dy = by - ay;
  const len2 = dx * dx + dy * dy;
  let t = len2 > 0 ? ((px - ax) * dx + (py - ay) * dy) / len2 : 0;
  t = t < 0 ? 0 : t > 1 ? 1 : t;
  const ex = px - (ax + t * dx);
  const ey = py - (ay + t * dy);
  return Math.sqrt(ex * ex + ey * ey);
}

/**
 * Strokes polylines (pixel coordinates, y down) with round caps and joins into a coverage
 * buffer, then blends once, so overlapping segments do not darken twice.
 */
function strokePolylines(r: Raster, lines: Polyline[], widthPx: number, value: number): void {
  const rad = widthPx / 2;
  let minX = Infinity;
  let minY = Infinity;
  let maxX = -Infinity;
  let maxY = -Infinity;
  for (const l of lines) {
    for (const [x, y] of l) {
      if (x < minX) minX = x;
      if (x > maxX) maxX = x;
      if (y < minY) minY = y;
      if (y > maxY) maxY = y;
    }
  }
  if (minX === Infinity) return;
  const bx0 = Math.max(0, Math.floor(minX - rad - 1));
  const by0 = Math.max(0, Math.floor(minY - rad - 1));
  const bx1 = Math.min(r.width - 1, Math.ceil(maxX + rad + 1));
  const by1 = Math.min(r.height - 1, Math.ceil(maxY + rad + 1));
  if (bx1 < bx0 || by1 < by0) return;
  const bw = bx1 - bx0 + 1;
  const cov = new Float32Array(bw * (by1 - by0 + 1));
  for (const l of lines) {
    for (let s = 0; s < l.length; s++) {
      const a = l[s];
      const b = l[Math.min(s + 1, l.length - 1)];
      if (s > 0 && s === l.length - 1) break;
      const sx0 = Math.max(bx0, Math.floor(Math.min(a[0], b[0]) - rad - 1));
      const sx1 = Math.min(bx1, Math.ceil(Math.max(a[0], b[0]) + rad + 1));
      const sy0 = Math.max(by0, Math.floor(Math.min(a[1], b[1]) - rad - 1));
      const sy1 = Math.min(by1, Math.ceil(Math.max(a[1], b[1]) + rad + 1));
      for (let py = sy0; py <= sy1; py++) {
        for (let px = sx0; px <= sx1; px++) {
          const d = segDist(px + 0.5, py + 0.5, a[0], a[1], b[0], b[1]);
          const c = rad - d + 0.5;
          if (c <= 0) continue;
          const i = (py - by0) * bw + (px - bx0);
          if (c > cov[i]) cov[i] = c > 1 ? 1 : c;
        }
      }
    }
  }
  for (let py = by0; py <= by1; py++) {
    for (let px = bx0; px <= bx1; px++) blend(r, px, py, value, cov[(py - by0) * bw + (px - bx0)]);
  }
}

/**
 * Draws a straight line of a given width with round caps.
 * @param widthPx line width in px (> 0)
 */
export function drawLine(
  r: Raster,
  x0: number,
  y0: number,
  x1: number,
  y1: number,
  widthPx: number,
  value: number,
): void {
  checkRaster(r);
  for (const [n, v] of [['x0', x0], ['y0', y0], ['x1', x1], ['y1', y1], ['value', value]] as const) checkFinite(n, v);
  if (!(widthPx > 0)) throw new RangeError(`widthPx must be positive, got ${widthPx}`);
  strokePolylines(r, [[[x0, y0], [x1, y1]]], widthPx, value);
}

function checkText(text: string, o: TextOptions): { font: StrokeFontName; style: FontStyle; map: Map<string, Glyph> } {
  if (typeof text !== 'string') throw new TypeError(`text must be a string, got ${typeof text}`);
  if (!(o?.sizePx > 0) || !Number.isFinite(o.sizePx)) throw new RangeError(`sizePx must be positive, got ${o?.sizePx}`);
  const font = o.font ?? 'sans';
  if (!(font in STYLES)) throw new RangeError(`unknown font '${font}' (use 'sans' or 'block')`);
  const map = glyphs(font);
  for (const ch of text) {
    if (!map.has(ch)) throw new RangeError(`character '${ch}' is not in the stroke font (drawable: ${DRAWABLE_CHARACTERS})`);
  }
  if (o.weight !== undefined && !(o.weight > 0 && o.weight < 0.5)) throw new RangeError(`weight must be in (0, 0.5), got ${o.weight}`);
  return { font, style: STYLES[font], map };
}

/** Width of a text line in pixels and the extents above and below the baseline. */
export function measureText(text: string, options: TextOptions): { widthPx: number; ascentPx: number; descentPx: number } {
  const { style, map } = checkText(text, options);
  const s = options.sizePx;
  const spacing = options.letterSpacing ?? 0.12;
  const stroke = (options.weight ?? style.weight) * s;
  let w = 0;
  let hasDesc = false;
  let hasRing = false;
  for (const ch of text) {
    w += (map.get(ch)!.advance * style.xScale + spacing) * s;
    if ('pµ,gjqy()/'.includes(ch)) hasDesc = true;
    if ('Å/()'.includes(ch)) hasRing = true;
  }
  return {
    widthPx: Math.max(0, w - spacing * s) + stroke,
    ascentPx: s * (hasRing ? 1.3 : 1) + stroke / 2,
    descentPx: (hasDesc ? 0.36 * s : 0) + stroke / 2,
  };
}

/**
 * Draws one line of text with a stroke font, anti-aliased.
 * @param r raster to draw into (changed in place)
 * @param text the characters (see DRAWABLE_CHARACTERS)
 * @param x left edge of the first glyph's stroke, in px
 * @param baselineY baseline, in px (y down)
 * @param options size, ink value, font, weight and spacing
 * Notes: strokes are polylines in em units scaled by the cap height; coverage by the distance
 * ramp (common practice).
 */
export function drawText(r: Raster, text: string, x: number, baselineY: number, options: TextOptions): void {
  checkRaster(r);
  checkFinite('x', x);
  checkFinite('baselineY', baselineY);
  checkFinite('value', options?.value);
  const { style, map } = checkText(text, options);
  const s = options.sizePx;
  const spacing = options.letterSpacing ?? 0.12;
  const stroke = (options.weight ?? style.weight) * s;
  let pen = x + stroke / 2;
  const lines: Polyline[] = [];
  for (const ch of text) {
    const g = map.get(ch)!;
    for (const l of g.strokes) {
      lines.push(l.map(([gx, gy]) => [pen + gx * style.xScale * s, baselineY - gy * s] as Pt));
    }
    pen += (g.advance * style.xScale + spacing) * s;
  }
  strokePolylines(r, lines, stroke, options.value);
}
