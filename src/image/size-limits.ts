/**
 * The largest region the spectrum tools can hold, and the advice given when a region is larger.
 *
 * The spectrum runs in opencv.js, whose heap stops at 1 GiB: an 8192 × 8192 region measured in
 * 7 s with 1.5 GB of memory on the project's machine, a 10240 × 10240 one ran out of that heap
 * ("memory access out of bounds") and left the engine unusable. A larger region is therefore
 * refused before the engine is asked, with a crop that fits.
 */

/** Most pixels in one spectrum region (width × height): 8192 × 8192. */
export const MAX_SPECTRUM_PIXELS = 8192 * 8192;
/** Side of the square crop proposed for a region that is too large. */
export const SPECTRUM_CROP_SIDE_PX = 8192;

/** A region that is too large for the spectrum; the message says how to crop. */
export class RegionTooLargeError extends RangeError {
  override name = 'RegionTooLargeError';
}

/**
 * Refuses a spectrum region larger than the engine can hold, with a crop that fits.
 *
 * @param widthPx - region width in pixels.
 * @param heightPx - region height in pixels.
 * @param origin - where the region lies in the image (for the proposed crop), default (0, 0).
 * @param how - how the user sets a region where this is used ('cli' gives `--region x,y,w,h`,
 *   'recipe' the recipe's area keys, 'app' a rectangle to draw).
 * @throws RegionTooLargeError naming the size, the limit and the crop to measure instead.
 */
export function checkSpectrumRegion(widthPx: number, heightPx: number, origin: { x: number; y: number } = { x: 0, y: 0 }, how: 'cli' | 'recipe' | 'app' = 'cli'): void {
  if (!(Number.isInteger(widthPx) && widthPx > 0 && Number.isInteger(heightPx) && heightPx > 0)) {
    throw new RangeError(`region size must be positive whole numbers, got ${widthPx} × ${heightPx}`);
  }
  if (widthPx * heightPx <= MAX_SPECTRUM_PIXELS) return;
  const side = SPECTRUM_CROP_SIDE_PX;
  const cw = Math.min(side, widthPx);
  const ch = Math.min(Math.floor(MAX_SPECTRUM_PIXELS / cw), heightPx);
  const x = origin.x + Math.floor((widthPx - cw) / 2);
  const y = origin.y + Math.floor((heightPx - ch) / 2);
  const head = `the region of ${widthPx} × ${heightPx} px (${widthPx * heightPx} px) is larger than a spectrum can hold (at most ${MAX_SPECTRUM_PIXELS} px, e.g. ${side} × ${side})`;
  if (how === 'cli') throw new RegionTooLargeError(`${head}: measure a crop, e.g. the centre with --region ${x},${y},${cw},${ch}`);
  if (how === 'recipe') {
    const tiles = Math.ceil(Math.sqrt((widthPx * heightPx) / MAX_SPECTRUM_PIXELS));
    throw new RegionTooLargeError(`${head}: set the recipe's area to {"kind": "centre", "sizePx": ${Math.min(side, Math.floor(Math.sqrt(MAX_SPECTRUM_PIXELS)))}} or to {"kind": "tiles", "rows": ${tiles}, "columns": ${tiles}}`);
  }
  throw new RegionTooLargeError(`${head}: draw a smaller rectangle, at most ${side} × ${side} px`);
}
