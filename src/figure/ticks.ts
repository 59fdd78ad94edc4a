/**
 * Round numbers for axes and scale bars: ticks at 1, 2 or 5 × 10ⁿ, their labels, and lengths of
 * the 1–2–5 series (common practice for plot axes, scale bars and instrument ranges).
 */

/**
 * Tick positions covering [lo, hi] at a step of 1, 2 or 5 × 10ⁿ, about `count` of them.
 * @param lo lower end (finite)
 * @param hi upper end (finite)
 * @param count about how many ticks (default 5)
 * @returns the ticks, ascending ([lo] when hi ≤ lo); values within a millionth of a step of 0 are 0
 * Reference: 1–2–5 axis ticks (common practice).
 */
export function niceTicks(lo: number, hi: number, count = 5): number[] {
  if (!Number.isFinite(lo) || !Number.isFinite(hi)) throw new RangeError(`tick range must be finite, got ${lo} to ${hi}`);
  if (!(hi > lo)) return [lo];
  const raw = (hi - lo) / Math.max(1, count);
  const p = Math.pow(10, Math.floor(Math.log10(raw)));
  const step = [1, 2, 5, 10].map((m) => m * p).find((s) => s >= raw) ?? 10 * p;
  const out: number[] = [];
  for (let t = Math.ceil(lo / step - 1e-9) * step; t <= hi + step * 1e-9; t += step) out.push(Math.abs(t) < step * 1e-9 ? 0 : t);
  return out;
}

/**
 * A tick label with as few decimals as the step needs.
 * @param t the tick
 * @param step the distance between ticks
 * @returns the text (0 to 6 decimals)
 */
export function tickText(t: number, step: number): string {
  const digits = Math.max(0, Math.min(6, -Math.floor(Math.log10(step) + 1e-9)));
  return t.toFixed(digits);
}

/**
 * The largest length of the 1–2–5 series not above a target (a scale bar that fits its space).
 * @param target positive length, any unit
 * @returns 1, 2 or 5 × 10ⁿ ≤ target
 * Reference: 1–2–5 series (common practice for scale bars).
 */
export function niceLengthAtMost(target: number): number {
  if (!(target > 0 && Number.isFinite(target))) throw new RangeError(`target must be a positive number, got ${target}`);
  const p = Math.pow(10, Math.floor(Math.log10(target)));
  let best = p;
  for (const n of [1, 2, 5]) if (n * p <= target) best = n * p;
  return best;
}

/**
 * A length in nm for a label: nm below 1000 nm, µm above; no trailing zeros.
 * @param lengthNm positive length in nm
 * @returns e.g. "200 nm", "1.5 µm"
 */
export function lengthLabel(lengthNm: number): string {
  if (!(lengthNm > 0 && Number.isFinite(lengthNm))) throw new RangeError(`lengthNm must be a positive number, got ${lengthNm}`);
  const [value, unit] = lengthNm >= 1000 ? [lengthNm / 1000, 'µm'] : [lengthNm, 'nm'];
  return `${Number(value.toPrecision(6))} ${unit}`;
}
