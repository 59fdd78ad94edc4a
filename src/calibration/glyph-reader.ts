/**
 * A second, independent reader of scale-bar labels: the label's grammar (a number, then a unit)
 * read glyph by glyph. Digits are matched against a small built-in glyph set (the two stroke
 * fonts of src/figure/draw-text.ts at several weights, and a 5 × 7 pixel font) with the glyph's
 * topology (its number of enclosed holes) as a gate; the unit is read from its shape: stems,
 * holes, descenders and where the strokes join. It shares nothing with the OCR engine, so the two
 * agreeing is evidence, and their disagreeing is a reason to ask. Pure: typed arrays only.
 */
import { drawText, measureText } from '../figure/draw-text';
import { textSlant, unslant, type InkMask } from './label-raster';
import { connectedComponents, holeCount, type Component } from '../image/components';

/** What the glyph reader made of a label. */
export interface GlyphReading {
  /** The label as text, e.g. "0.5 µm"; null when it could not be read in the label grammar. */
  text: string | null;
  /** The weakest glyph's confidence, 0–1 (1: far from every other class). */
  confidence: number;
  /** Why the reading failed or is doubtful. */
  notes: string[];
}

type Comp = Component;

/** 8-connected components of ink. */
function components(m: InkMask): Comp[] {
  return connectedComponents(m.width, m.height, m.data);
}

/** A component's pixels as its own mask, cropped to its box. */
function compMask(m: InkMask, c: Comp): InkMask {
  const w = c.x1 - c.x0 + 1;
  const h = c.y1 - c.y0 + 1;
  const data = new Uint8Array(w * h);
  for (const k of c.pixels) {
    const x = k % m.width;
    const y = (k - x) / m.width;
    data[(y - c.y0) * w + (x - c.x0)] = 1;
  }
  return { width: w, height: h, data };
}

const GW = 10;
const GH = 14;

/**
 * A glyph's shape as a 10 × 14 grid of ink fractions, the glyph's box mapped onto a box at least
 * 0.62 of its height wide (narrow glyphs such as "1" stay narrow and centred), smoothed by a
 * 3 × 3 box filter.
 */
function features(g: InkMask): Float64Array {
  const bw = Math.max(g.width, 0.62 * g.height);
  const ox = (bw - g.width) / 2;
  const grid = new Float64Array(GW * GH);
  const count = new Float64Array(GW * GH);
  const ss = 3;
  for (let y = 0; y < g.height; y++) {
    for (let x = 0; x < g.width; x++) {
      const v = g.data[y * g.width + x];
      for (let sy = 0; sy < ss; sy++) {
        for (let sx = 0; sx < ss; sx++) {
          const gx = Math.min(GW - 1, Math.floor(((x + ox + (sx + 0.5) / ss) / bw) * GW));
          const gy = Math.min(GH - 1, Math.floor(((y + (sy + 0.5) / ss) / g.height) * GH));
          grid[gy * GW + gx] += v;
          count[gy * GW + gx]++;
        }
      }
    }
  }
  for (let i = 0; i < grid.length; i++) grid[i] = count[i] ? grid[i] / count[i] : 0;
  const out = new Float64Array(GW * GH);
  for (let y = 0; y < GH; y++) {
    for (let x = 0; x < GW; x++) {
      let s = 0;
      let n = 0;
      for (let dy = -1; dy <= 1; dy++) {
        for (let dx = -1; dx <= 1; dx++) {
          const nx = x + dx;
          const ny = y + dy;
          if (nx < 0 || ny < 0 || nx >= GW || ny >= GH) continue;
          s += grid[ny * GW + nx] * (dx === 0 && dy === 0 ? 2 : 1);
          n += dx === 0 && dy === 0 ? 2 : 1;
        }
      }
      out[y * GW + x] = s / n;
    }
  }
  return out;
}

/** Holes each digit may have (thin or bold renderings close or open some loops). */
const DIGIT_HOLES: Record<string, number[]> = {
  '0': [1], '1': [0], '2': [0], '3': [0], '4': [0, 1], '5': [0], '6': [1], '7': [0], '8': [2], '9': [1],
};

/** A built-in 5 × 7 pixel digit set (drawn for this reader). */
const PIXEL_DIGITS: Record<string, string[]> = {
  '0': ['.###.', '#...#', '#..##', '#.#.#', '##..#', '#...#', '.###.'],
  '1': ['..#..', '.##..', '#.#..', '..#..', '..#..', '..#..', '#####'],
  '2': ['.###.', '#...#', '....#', '..##.', '.#...', '#....', '#####'],
  '3': ['.###.', '#...#', '....#', '..##.', '....#', '#...#', '.###.'],
  '4': ['#...#', '#...#', '#...#', '#####', '....#', '....#', '....#'],
  '5': ['#####', '#....', '#....', '####.', '....#', '#...#', '.###.'],
  '6': ['.###.', '#....', '#....', '####.', '#...#', '#...#', '.###.'],
  '7': ['#####', '....#', '....#', '...#.', '..#..', '..#..', '..#..'],
  '8': ['.###.', '#...#', '#...#', '.###.', '#...#', '#...#', '.###.'],
  '9': ['.###.', '#...#', '#...#', '.####', '....#', '....#', '.###.'],
};

interface Template {
  ch: string;
  f: Float64Array;
}

let TEMPLATES: Template[] | null = null;

/** The digit templates, built once from the stroke fonts and the pixel digits. */
function templates(): Template[] {
  if (TEMPLATES) return TEMPLATES;
  const out: Template[] = [];
  for (const ch of '0123456789') {
    for (const font of ['sans', 'block'] as const) {
      for (const weight of [0.07, 0.11, 0.16, 0.22]) {
        const cap = 48;
        const m = measureText(ch, { sizePx: cap, value: 1, font, weight });
        const w = Math.ceil(m.widthPx) + 8;
        const h = Math.ceil(m.ascentPx + m.descentPx) + 8;
        const r = { width: w, height: h, data: new Float32Array(w * h) };
        drawText(r, ch, 4, 4 + Math.ceil(m.ascentPx), { sizePx: cap, value: 1, font, weight });
        const mask: InkMask = { width: w, height: h, data: Uint8Array.from(r.data, (v) => (v >= 0.5 ? 1 : 0)) };
        const c = components(mask).reduce((a, b) => (b.pixels.length > a.pixels.length ? b : a));
        const all = components(mask);
        const x0 = Math.min(...all.map((q) => q.x0));
        const x1 = Math.max(...all.map((q) => q.x1));
        const y0 = Math.min(...all.map((q) => q.y0));
        const y1 = Math.max(...all.map((q) => q.y1));
        const merged: Comp = { x0, y0, x1, y1, pixels: all.flatMap((q) => q.pixels) };
        void c;
        out.push({ ch, f: features(compMask(mask, merged)) });
      }
    }
    const rows = PIXEL_DIGITS[ch];
    const pw = rows[0].length;
    const data = new Uint8Array(pw * rows.length);
    rows.forEach((row, j) => [...row].forEach((c, i) => (data[j * pw + i] = c === '#' ? 1 : 0)));
    out.push({ ch, f: features({ width: pw, height: rows.length, data }) });
  }
  TEMPLATES = out;
  return out;
}

function dist(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return Math.sqrt(s);
}

/** The digit a glyph is, with a confidence from its margin over the next class and its topology. */
function classifyDigit(g: InkMask): { ch: string; confidence: number; note: string | null; distance: number } {
  const f = features(g);
  const best = new Map<string, number>();
  for (const t of templates()) {
    const d = dist(f, t.f);
    if (d < (best.get(t.ch) ?? Infinity)) best.set(t.ch, d);
  }
  const ranked = [...best.entries()].sort((a, b) => a[1] - b[1]);
  const holes = holeCount(g, g.height >= 12 ? 2 : 1);
  const fits = ranked.filter(([ch]) => DIGIT_HOLES[ch].includes(holes));
  const [ch, d1] = ranked[0];
  const d2 = ranked[1][1];
  if (DIGIT_HOLES[ch].includes(holes)) return { ch, confidence: Math.max(0, Math.min(1, (d2 - d1) / (0.35 * d2))), note: null, distance: d1 };
  // the nearest shape has the wrong number of holes (a filled counter, a closed loop): the nearest
  // shape with the right topology, if it is nearly as near, with a lowered confidence
  const alt = fits[0];
  if (alt && alt[1] <= 1.25 * d1) {
    const next = fits[1]?.[1] ?? Infinity;
    const confidence = Math.max(0, Math.min(0.7, (Math.min(next, 1.6 * alt[1]) - alt[1]) / (0.35 * Math.min(next, 1.6 * alt[1]))));
    return { ch: alt[0], confidence, note: `a glyph shaped like "${ch}" has ${holes} hole${holes === 1 ? '' : 's'}: read as "${alt[0]}"`, distance: alt[1] };
  }
  return { ch, distance: d1, confidence: 0.1, note: `a glyph looks like "${ch}" but has ${holes} hole${holes === 1 ? '' : 's'}${alt ? ` (like "${alt[0]}")` : ''}` };
}

/** Ink runs along one row of a mask between columns a and b (inclusive). */
function runsInRow(m: InkMask, y: number, a = 0, b = m.width - 1): number {
  let runs = 0;
  let inRun = false;
  for (let x = a; x <= b; x++) {
    const v = m.data[y * m.width + x] === 1;
    if (v && !inRun) runs++;
    inRun = v;
  }
  return runs;
}

/**
 * Stems of lower-case letters: runs of columns inked over at least 75 % of the rows from y0 to y1
 * (the middle of the x-height, below the arches and above the bowls); a run at least 1.75 times
 * as wide as the median run counts as two stems that touch (letters drawn without a gap, "nm" in a
 * bold font). Vertical projection profile, common practice.
 */
function stemColumns(m: InkMask, y0: number, y1: number): number {
  const rows = y1 - y0 + 1;
  const widths: number[] = [];
  let run = 0;
  for (let x = 0; x <= m.width; x++) {
    let n = 0;
    if (x < m.width) for (let y = y0; y <= y1; y++) n += m.data[y * m.width + x];
    if (x < m.width && n >= 0.75 * rows) run++;
    else if (run > 0) {
      widths.push(run);
      run = 0;
    }
  }
  if (widths.length === 0) return 0;
  const typical = medianOf(widths);
  return widths.reduce((n, w) => n + (w >= 1.75 * typical + 0.5 ? 2 : 1), 0);
}

function medianOf(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  return s.length ? s[s.length >> 1] : NaN;
}

/**
 * Reads a label's ink in its grammar: digits with at most one decimal point or comma, then a
 * unit (nm, µm, um, pm, mm, Å or A).
 * @param ink the label's text as ink (1), at any resolution
 * @returns the reading, or text null with the reason
 * Notes: slant removed first (projection-profile deslanting); glyphs are 8-connected components,
 * parts one above the other joined (the ring of Å, broken strokes); the baseline is the lowest
 * bottom of the tall glyphs, the cap height that of the first digit. Digits: nearest template
 * (L2 on a smoothed 10 × 14 ink grid, common practice in template OCR), gated by the hole count
 * (Euler number of the binary glyph). Unit: lower-case letters counted by their stems (m has
 * three), µ and p by a descender, p by its closed bowl, n and u by whether the stems join at the
 * top (an arch) or at the bottom (a bowl); a glyph as tall as the digits is Å.
 */
export function readGlyphs(ink: InkMask): GlyphReading {
  if (!ink || !(ink.data instanceof Uint8Array) || ink.data.length !== ink.width * ink.height) throw new TypeError('ink must be a mask with width × height values');
  const fail = (why: string): GlyphReading => ({ text: null, confidence: 0, notes: [why] });
  const m = unslant(ink, textSlant(ink));
  let comps = components(m);
  if (comps.length === 0) return fail('no ink');
  const maxH = Math.max(...comps.map((c) => c.y1 - c.y0 + 1));
  // keep the text line: components overlapping the rows of the tallest ones
  const tall = comps.filter((c) => c.y1 - c.y0 + 1 >= 0.5 * maxH);
  const bandTop = Math.min(...tall.map((c) => c.y0));
  const bandBottom = Math.max(...tall.map((c) => c.y1));
  comps = comps.filter((c) => c.y1 >= bandTop - 0.3 * maxH && c.y0 <= bandBottom + 0.1 * maxH);
  // join parts stacked one above the other (Å's ring, broken strokes)
  comps.sort((a, b) => a.x0 - b.x0);
  let joined = true;
  while (joined) {
    joined = false;
    for (let i = 0; i < comps.length && !joined; i++) {
      for (let j = i + 1; j < comps.length && !joined; j++) {
        const a = comps[i];
        const b = comps[j];
        const ov = Math.min(a.x1, b.x1) - Math.max(a.x0, b.x0) + 1;
        if (ov >= 0.6 * Math.min(a.x1 - a.x0 + 1, b.x1 - b.x0 + 1)) {
          comps[i] = { x0: Math.min(a.x0, b.x0), y0: Math.min(a.y0, b.y0), x1: Math.max(a.x1, b.x1), y1: Math.max(a.y1, b.y1), pixels: a.pixels.concat(b.pixels) };
          comps.splice(j, 1);
          joined = true;
        }
      }
    }
  }
  comps.sort((a, b) => a.x0 - b.x0);
  const heights = comps.map((c) => c.y1 - c.y0 + 1);
  const H = Math.max(...heights);
  const bigs = comps.filter((c) => c.y1 - c.y0 + 1 >= 0.5 * H);
  if (bigs.length < 2) return fail('fewer than two glyphs');
  const baseline = Math.min(...bigs.map((c) => c.y1));
  const first = comps[0];
  const capTop = first.y0;
  const capH = baseline - capTop + 1;
  if (capH < 5) return fail(`text ${capH} px high: too small to read`);
  // the unit, from the right
  const last = comps[comps.length - 1];
  const notes: string[] = [];
  let unit: string;
  let unitStart: number;
  let unitConfidence = 1;
  if (last.y0 <= capTop + 0.1 * capH && last.y1 <= baseline + 0.15 * capH && comps.length >= 2) {
    // as tall as the digits (or taller, with a ring): Å (or A, read as ångström)
    const g = compMask(m, last);
    const topRuns = runsInRow(g, Math.min(g.height - 1, Math.round(0.25 * g.height)));
    const lowRuns = medianOf([0.86, 0.93, 1].map((f) => runsInRow(g, Math.min(g.height - 1, Math.round(f * (g.height - 1))))));
    // an A: one apex, two legs apart at the bottom; a digit (a reading mistake) would not have both
    if (lowRuns !== 2 || topRuns > 2) return fail('the unit is neither a lower-case unit nor Å');
    unit = 'Å';
    unitStart = comps.length - 1;
  } else {
    // lower-case letters at the x-height, at the end
    let k = comps.length - 1;
    while (k > 0 && comps[k].y0 > capTop + 0.1 * capH) k--;
    unitStart = k + 1;
    if (unitStart >= comps.length || unitStart === 0) return fail('no unit after the number');
    const letters = comps.slice(unitStart);
    const xTop = medianOf(letters.map((c) => c.y0));
    const xh = baseline - xTop + 1;
    if (xh < 3) return fail('unit letters too small');
    const u: Comp = { x0: Math.min(...letters.map((c) => c.x0)), x1: Math.max(...letters.map((c) => c.x1)), y0: Math.min(...letters.map((c) => c.y0)), y1: Math.max(...letters.map((c) => c.y1)), pixels: letters.flatMap((c) => c.pixels) };
    const um = compMask(m, u);
    // stems across the unit, counted below the arches and above the bowls
    const rowAt = (f: number) => Math.min(um.height - 1, Math.max(0, xTop - u.y0 + Math.round(f * xh)));
    const stems = stemColumns(um, rowAt(0.15), rowAt(0.85));
    if (stems === 6) unit = 'mm';
    else if (stems === 5) {
      // the prefix: the unit's columns before the m's three stems
      const row = rowAt(0.55);
      const starts: number[] = [];
      let inRun = false;
      for (let x = 0; x < um.width; x++) {
        const v = um.data[row * um.width + x] === 1;
        if (v && !inRun) starts.push(x);
        inRun = v;
      }
      const cut = starts[2] - 1; // the m begins at the third run
      let px0 = um.width;
      let px1 = -1;
      let descends = false;
      const prefix = new Uint8Array(um.width * um.height);
      for (let y = 0; y < um.height; y++) {
        for (let x = 0; x < cut; x++) {
          if (um.data[y * um.width + x]) {
            prefix[y * um.width + x] = 1;
            if (x < px0) px0 = x;
            if (x > px1) px1 = x;
            if (y + u.y0 > baseline + 0.2 * xh) descends = true;
          }
        }
      }
      if (px1 < px0) return fail('unit prefix not found');
      const pw = px1 - px0 + 1;
      const pm: InkMask = { width: pw, height: um.height, data: new Uint8Array(pw * um.height) };
      for (let y = 0; y < um.height; y++) for (let x = 0; x < pw; x++) pm.data[y * pw + x] = prefix[y * um.width + x + px0];
      const bowl = holeCount(pm, 1) >= 1;
      if (descends) unit = bowl ? 'pm' : 'µm';
      else {
        // between the two stems (the gap in the stem row): ink near the top is n's arch, near the
        // bottom u's bowl
        const r0 = xTop - u.y0;
        let gap0 = -1;
        let gap1 = -1;
        for (let x = starts[0]; x < starts[1]; x++) {
          if (!um.data[row * um.width + x] && gap0 < 0) gap0 = x;
          if (!um.data[row * um.width + x]) gap1 = x;
        }
        const band = Math.max(1, Math.round(0.3 * xh));
        let topInk = 0;
        let bottomInk = 0;
        for (let x = gap0; x >= 0 && x <= gap1; x++) {
          for (let y = r0; y < r0 + band; y++) if (um.data[y * um.width + x]) topInk++;
          for (let y = r0 + xh - band; y < r0 + xh; y++) if (y >= 0 && y < um.height && um.data[y * um.width + x]) bottomInk++;
        }
        if (topInk > 2 * bottomInk) unit = 'nm';
        else if (bottomInk > 2 * topInk) unit = 'µm';
        else if (bowl) {
          unit = 'pm';
          unitConfidence = 0.3;
          notes.push('a closed letter without a descender in the unit');
        } else return fail('the unit prefix is neither n nor u/µ');
      }
    } else return fail(`the unit has ${stems} stems, no unit of the grammar has`);
  }
  // the number; a digit's width from the glyphs that are clearly one digit (not a narrow "1")
  const singles = comps.slice(0, unitStart).map((c) => c.x1 - c.x0 + 1).filter((w) => w >= 0.4 * capH && w <= 0.85 * capH);
  const digitW = singles.length ? medianOf(singles) : 0.6 * capH;
  let text = '';
  let confidence = unitConfidence;
  let sawSeparator = false;
  for (let i = 0; i < unitStart; i++) {
    const c = comps[i];
    const h = c.y1 - c.y0 + 1;
    const w = c.x1 - c.x0 + 1;
    if ((h < 0.42 * capH || (c.y0 > capTop + 0.55 * capH && w < 0.35 * capH)) && c.y1 >= baseline - 0.15 * capH) {
      if (sawSeparator) return fail('two separators in the number');
      sawSeparator = true;
      text += c.y1 > baseline + 0.08 * capH ? ',' : '.';
      continue;
    }
    if (c.y0 > capTop + 0.25 * capH || h < 0.7 * capH) return fail(`a glyph of the number is ${h} px high where digits are ${capH}`);
    // digits that touch: split into the number of pieces whose shapes match digits best
    const g = compMask(m, c);
    const ratio = w / digitW;
    const k0 = Math.max(1, Math.round(ratio));
    const ks = Math.abs(ratio - k0) > 0.3 ? [k0, ratio > k0 ? k0 + 1 : k0 - 1].filter((k) => k >= 1) : [k0];
    let bestRead: { chars: string; confidence: number; notes: string[]; score: number } | null = null;
    for (const k of ks.filter((q) => q <= 4)) {
      const read = readPieces(g, k, capH);
      // more pieces must match clearly better: narrow pieces match a "1" too easily
      if (read) read.score *= 1 + 0.2 * Math.max(0, k - Math.min(...ks));
      if (read && (!bestRead || read.score < bestRead.score)) bestRead = read;
    }
    if (!bestRead) return fail('a run of touching glyphs');
    if (bestRead.chars.length > 1) {
      notes.push(`${bestRead.chars.length} digits touch and were split`);
      bestRead.confidence = Math.min(bestRead.confidence, 0.6);
    }
    text += bestRead.chars;
    confidence = Math.min(confidence, bestRead.confidence);
    notes.push(...bestRead.notes);
  }
  if (!/\d/.test(text)) return fail('no digits');
  return { text: `${text} ${unit}`, confidence, notes };
}

/**
 * A glyph read as k touching digits: cut where the column ink is least near k equal widths, each
 * piece classified; the score is the mean distance to the templates (lower is better).
 */
function readPieces(g: InkMask, k: number, capH: number): { chars: string; confidence: number; notes: string[]; score: number } | null {
  const col = new Float64Array(g.width);
  for (let y = 0; y < g.height; y++) for (let x = 0; x < g.width; x++) col[x] += g.data[y * g.width + x];
  let from = 0;
  let chars = '';
  let confidence = 1;
  let score = 0;
  const notes: string[] = [];
  for (let p = 1; p <= k; p++) {
    let to = g.width;
    if (p < k) {
      const aim = Math.round((p * g.width) / k);
      let best = aim;
      for (let x = Math.max(from + 2, aim - Math.round(0.15 * capH)); x <= Math.min(g.width - 2, aim + Math.round(0.15 * capH)); x++) if (col[x] < col[best]) best = x;
      to = best;
    }
    if (to - from < 2) return null;
    const sub = cropColumns(g, from, to);
    // a digit is at least 0.2 and at most 0.95 of the cap height wide, and nearly as tall
    if (sub.width > 0.95 * capH || sub.height < 0.7 * capH) return null;
    const d = classifyDigit(sub);
    chars += d.ch;
    confidence = Math.min(confidence, d.confidence);
    score += d.distance;
    if (d.note) notes.push(d.note);
    from = to;
  }
  return { chars, confidence, notes, score: score / k };
}

/** Columns [a, b) of a mask, trimmed to their ink rows. */
function cropColumns(g: InkMask, a: number, b: number): InkMask {
  let y0 = g.height;
  let y1 = -1;
  for (let y = 0; y < g.height; y++) for (let x = a; x < b; x++) if (g.data[y * g.width + x]) { if (y < y0) y0 = y; if (y > y1) y1 = y; }
  if (y1 < y0) return { width: 1, height: 1, data: new Uint8Array(1) };
  const w = b - a;
  const h = y1 - y0 + 1;
  const data = new Uint8Array(w * h);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) data[y * w + x] = g.data[(y + y0) * g.width + x + a];
  return { width: w, height: h, data };
}
