/**
 * Seeded sets of scale-bar scenes for the label and bar tests and bench:labels: every text
 * style, polarity, holder, placement and orientation, drawn from one seed (another seed gives a
 * held-out set of the same kinds). Also the deliberately ambiguous labels, which must never give
 * a pixel size without a question. Test-only code.
 */
import { labelAtlas, type BarSceneSpec, type TextStyle } from './scale-bar-scenes';
import { rng } from '../random';

/** Round label values (1, 2, 2.5, 3, 5 × 10ⁿ: common practice, no source) with units as microscopes write them. */
export const ROUND_LABELS = ['1 nm', '2 nm', '5 nm', '10 nm', '20 nm', '50 nm', '100 nm', '200 nm', '500 nm', '250 nm', '2.5 nm', '30 nm',
  '1 µm', '2 µm', '5 µm', '0.5 µm', '0,5 µm', '0.2 µm', '2 um', '10 µm', '20 µm', '500 pm', '200 pm', '5 Å', '10 Å', '20 Å', '50 Å',
  '1 mm', '0.1 µm', '300 nm', '3 nm', '2,5 µm', '25 nm', '0.3 µm', '5 um'];

/** Labels that are legible but not round (they must be asked about, never taken). */
export const NOT_ROUND_LABELS = ['18 nm', '15 nm', '12 nm', '1.5 µm', '75 nm', '7 nm', '0.8 µm', '40 Å'];

const pick = <T>(r: () => number, a: readonly T[]): T => a[Math.floor(r() * a.length)];

/** A text style, cycling through the kinds so that every kind is present in any set of 8 or more. */
function styleFor(i: number, r: () => number): TextStyle {
  switch (i % 8) {
    case 0:
      return { kind: 'stroke', font: 'sans', capPx: 9 + Math.floor(r() * 24), antiAliased: true };
    case 1:
      return { kind: 'stroke', font: 'block', capPx: 9 + Math.floor(r() * 24), antiAliased: true };
    case 2:
      return { kind: 'stroke', font: pick(r, ['sans', 'block'] as const), capPx: 8 + Math.floor(r() * 9), antiAliased: false, weight: 0.14 + 0.06 * r() };
    case 3:
      return { kind: 'pixel', font: 'thin5x7', scale: r() < 0.6 ? 1 : 2 };
    case 4:
      return { kind: 'pixel', font: 'bold6x9', scale: r() < 0.6 ? 1 : 2 };
    default: {
      // the system-font atlas: outline fonts the readers were not built from, anti-aliased or two-level
      const n = labelAtlas().entries.length;
      return { kind: 'atlas', index: Math.floor(r() * n) };
    }
  }
}

/**
 * A seeded set of scenes with round labels.
 * @param seed the set's seed (the tests and bench use 1; a held-out check uses another)
 * @param n how many scenes
 * @returns scene specs (render them with barScene)
 */
export function labelCases(seed: number, n: number): BarSceneSpec[] {
  const r = rng(seed);
  const out: BarSceneSpec[] = [];
  for (let i = 0; i < n; i++) {
    const text = styleFor(i, r);
    const holder = pick(r, ['strip', 'strip', 'box', 'bordered-box', 'free'] as const);
    const orientation = r() < 0.2 ? 'vertical' : 'horizontal';
    const placement = pick(r, ['below', 'below', 'above', 'left', 'right'] as const);
    const ink = holder === 'bordered-box' ? 'dark' : r() < 0.55 ? 'light' : 'dark';
    const full = r() < 0.7 ? 255 : 65535;
    const width = 512 + 128 * Math.floor(r() * 5);
    const height = 480 + 96 * Math.floor(r() * 4);
    out.push({
      width,
      height,
      seed: seed * 1000 + i,
      background: holder === 'free' && r() < 0.5 ? 'lattice' : r() < 0.25 ? 'lattice' : 'texture',
      holder,
      placement,
      orientation,
      lengthPx: 60 + Math.floor(r() * 180) + Math.round(r() * 100) / 100,
      thicknessPx: 3 + Math.floor(r() * 8),
      startFraction: Math.round(r() * 100) / 100,
      ink,
      label: pick(r, ROUND_LABELS),
      text,
      full,
      corner: r() < 0.5 ? 'right' : 'left',
    });
  }
  return out;
}

/** Scenes whose labels are legible but not round: each must end in a question, never a pixel size. */
export function ambiguousCases(seed: number): BarSceneSpec[] {
  return labelCases(seed, NOT_ROUND_LABELS.length * 2).map((s, i) => ({
    ...s,
    // atlas labels carry their own (round) text: use a drawn style instead
    text: s.text.kind === 'atlas' ? { kind: 'stroke', font: i % 2 ? 'sans' : 'block', capPx: 12 + (i % 9), antiAliased: true } : s.text,
    label: NOT_ROUND_LABELS[i % NOT_ROUND_LABELS.length],
  }));
}
