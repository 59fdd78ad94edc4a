/**
 * Two hand-drawn bitmap fonts (no anti-aliasing), the kind of fonts microscope software burns
 * scale-bar labels in, for test scenes only: 'thin5x7' (one-pixel strokes, digits 5 × 7) and
 * 'bold6x9' (two-pixel stems, digits 6 × 9). Drawn for this project; an integer scale factor
 * makes the larger pixel fonts (a 5 × 7 font at 2× is 14 px high).
 */

/** The two designs. */
export type PixelFontName = 'thin5x7' | 'bold6x9';

interface PixelFont {
  /** Cap (digit) height in font pixels. */
  capPx: number;
  /** Lower-case x-height in font pixels. */
  xHeightPx: number;
  /** Gap between glyphs, font pixels. */
  spacingPx: number;
  /** Width of a space, font pixels. */
  spacePx: number;
  /** Glyph rows from top; `top` is the row of the first line counted from the cap line (negative: above it). */
  glyphs: Record<string, { top: number; rows: string[] }>;
}

const g = (top: number, ...rows: string[]) => ({ top, rows });

const THIN: PixelFont = {
  capPx: 7,
  xHeightPx: 5,
  spacingPx: 1,
  spacePx: 3,
  glyphs: {
    '0': g(0, '.###.', '#...#', '#...#', '#...#', '#...#', '#...#', '.###.'),
    '1': g(0, '..#..', '.##..', '..#..', '..#..', '..#..', '..#..', '.###.'),
    '2': g(0, '.###.', '#...#', '....#', '...#.', '..#..', '.#...', '#####'),
    '3': g(0, '#####', '...#.', '..#..', '...#.', '....#', '#...#', '.###.'),
    '4': g(0, '...#.', '..##.', '.#.#.', '#..#.', '#####', '...#.', '...#.'),
    '5': g(0, '#####', '#....', '####.', '....#', '....#', '#...#', '.###.'),
    '6': g(0, '..##.', '.#...', '#....', '####.', '#...#', '#...#', '.###.'),
    '7': g(0, '#####', '....#', '...#.', '..#..', '.#...', '.#...', '.#...'),
    '8': g(0, '.###.', '#...#', '#...#', '.###.', '#...#', '#...#', '.###.'),
    '9': g(0, '.###.', '#...#', '#...#', '.####', '....#', '...#.', '.##..'),
    '.': g(6, '#'),
    ',': g(6, '#', '#'),
    n: g(2, '#.##.', '##..#', '#...#', '#...#', '#...#'),
    m: g(2, '##.#.', '#.#.#', '#.#.#', '#.#.#', '#.#.#'),
    u: g(2, '#...#', '#...#', '#...#', '#..##', '.##.#'),
    µ: g(2, '#...#', '#...#', '#...#', '#..##', '###.#', '#....', '#....'),
    p: g(2, '####.', '#...#', '#...#', '#...#', '####.', '#....', '#....'),
    A: g(0, '.###.', '#...#', '#...#', '#####', '#...#', '#...#', '#...#'),
    Å: g(-3, '..#..', '.#.#.', '..#..', '.###.', '#...#', '#...#', '#####', '#...#', '#...#', '#...#'),
  },
};

const BOLD: PixelFont = {
  capPx: 9,
  xHeightPx: 6,
  spacingPx: 1,
  spacePx: 4,
  glyphs: {
    '0': g(0, '.####.', '##..##', '##..##', '##..##', '##..##', '##..##', '##..##', '##..##', '.####.'),
    '1': g(0, '..##..', '.###..', '..##..', '..##..', '..##..', '..##..', '..##..', '..##..', '.####.'),
    '2': g(0, '.####.', '##..##', '....##', '....##', '...##.', '..##..', '.##...', '##....', '######'),
    '3': g(0, '.####.', '##..##', '....##', '....##', '..###.', '....##', '....##', '##..##', '.####.'),
    '4': g(0, '...##.', '..###.', '.####.', '##.##.', '##.##.', '######', '...##.', '...##.', '...##.'),
    '5': g(0, '######', '##....', '##....', '#####.', '....##', '....##', '....##', '##..##', '.####.'),
    '6': g(0, '.####.', '##..##', '##....', '##....', '#####.', '##..##', '##..##', '##..##', '.####.'),
    '7': g(0, '######', '....##', '....##', '...##.', '...##.', '..##..', '..##..', '..##..', '..##..'),
    '8': g(0, '.####.', '##..##', '##..##', '##..##', '.####.', '##..##', '##..##', '##..##', '.####.'),
    '9': g(0, '.####.', '##..##', '##..##', '##..##', '.#####', '....##', '....##', '##..##', '.####.'),
    '.': g(7, '##', '##'),
    ',': g(7, '##', '##', '.#'),
    n: g(3, '#####.', '##..##', '##..##', '##..##', '##..##', '##..##'),
    m: g(3, '######.', '##.#.##', '##.#.##', '##.#.##', '##.#.##', '##.#.##'),
    u: g(3, '##..##', '##..##', '##..##', '##..##', '##..##', '.#####'),
    µ: g(3, '##..##', '##..##', '##..##', '##..##', '##..##', '######', '##....', '##....'),
    p: g(3, '#####.', '##..##', '##..##', '##..##', '##..##', '#####.', '##....', '##....'),
    A: g(0, '.####.', '##..##', '##..##', '##..##', '######', '##..##', '##..##', '##..##', '##..##'),
    Å: g(-3, '..##..', '.#..#.', '..##..', '.####.', '##..##', '##..##', '##..##', '######', '##..##', '##..##', '##..##', '##..##'),
  },
};

const FONTS: Record<PixelFontName, PixelFont> = { thin5x7: THIN, bold6x9: BOLD };

/** Size of a text in a pixel font: width, the rows above the baseline (cap height) and below (descender), in image px. */
export function measurePixelText(text: string, font: PixelFontName, scale = 1): { widthPx: number; ascentPx: number; descentPx: number } {
  const f = FONTS[font];
  let w = 0;
  let above = f.capPx;
  let below = 0;
  for (const ch of normalise(text)) {
    if (ch === ' ') {
      w += f.spacePx;
      continue;
    }
    const gl = f.glyphs[ch];
    if (!gl) throw new RangeError(`pixel font ${font} has no glyph for ${JSON.stringify(ch)}`);
    w += gl.rows[0].length + f.spacingPx;
    above = Math.max(above, f.capPx - gl.top);
    below = Math.max(below, gl.top + gl.rows.length - f.capPx);
  }
  return { widthPx: (w - f.spacingPx) * scale, ascentPx: above * scale, descentPx: below * scale };
}

function normalise(text: string): string {
  return text.replace(/\u03bc/g, 'µ').replace(/\u212b/g, 'Å');
}

/**
 * Draws text in a pixel font with hard edges (no anti-aliasing).
 * @param raster grey raster to draw on
 * @param text the text
 * @param x left edge, px (rounded)
 * @param baselineY the baseline row, px (rounded): the first row below the digits
 * @param font the design
 * @param scale integer magnification of every font pixel
 * @param value grey value of the ink
 */
export function drawPixelText(
  raster: { width: number; height: number; data: Float32Array },
  text: string,
  x: number,
  baselineY: number,
  font: PixelFontName,
  scale: number,
  value: number,
): void {
  if (!Number.isInteger(scale) || scale < 1) throw new RangeError(`scale must be a positive integer, got ${scale}`);
  const f = FONTS[font];
  let cx = Math.round(x);
  const capTop = Math.round(baselineY) - f.capPx * scale;
  for (const ch of normalise(text)) {
    if (ch === ' ') {
      cx += f.spacePx * scale;
      continue;
    }
    const gl = f.glyphs[ch];
    if (!gl) throw new RangeError(`pixel font ${font} has no glyph for ${JSON.stringify(ch)}`);
    gl.rows.forEach((row, j) => {
      for (let i = 0; i < row.length; i++) {
        if (row[i] !== '#') continue;
        for (let sy = 0; sy < scale; sy++) {
          for (let sx = 0; sx < scale; sx++) {
            const px = cx + i * scale + sx;
            const py = capTop + (gl.top + j) * scale + sy;
            if (px >= 0 && py >= 0 && px < raster.width && py < raster.height) raster.data[py * raster.width + px] = value;
          }
        }
      }
    });
    cx += (gl.rows[0].length + f.spacingPx) * scale;
  }
}
