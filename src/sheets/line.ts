/**
 * Sheets along a line drawn across one or more stacks: the width-averaged profile along the
 * line, its bands, and the layers of each counted by the comb fit of the automatic search.
 */
import type { GreyImage } from '../image/grey-image';
import type { UncertaintyPx } from '../measure/measurement';
import { bestPeriod, edgeToEdge, layersResolved, refinePeriod, splitBand } from './count';
import { MIN_COUNTABLE_PERIOD_PX } from './limits';
import { periodCandidates, profilePeriodogram } from './profile';
import { acrossProfile, axisFrame, fitLayerComb, profileBands, smoothProfile, type AcrossProfile, type CombFit, type ProfileBand } from './stack-profile';

/** Options for {@link sheetsAlongLine}. */
export interface SheetLineOptions {
  /** Width of the line in px; values are averaged across it (default 9). */
  widthPx?: number;
  /** The layer period, px, when known (typed by the user, or from X-ray diffraction). */
  periodPx?: number;
  /** Candidate periods, px (e.g. the image's, from the automatic search); used when no period is given. */
  periods?: number[];
  /** Layers are 'dark' (default) or 'bright' lines. */
  polarity?: 'dark' | 'bright';
  /** Evidence a sheet needs (Δχ² of the comb over the bare background; default 40, or 100 when the period is read off the line's own profile). */
  minEvidence?: number;
}

/** A sheet along a drawn line. Lengths in px along the line. */
export interface LineSheet {
  /** Number of layers. */
  layers: number;
  /** Thickness by the n·d convention (layers × period), px, with its standard uncertainties. */
  thicknessPx: number;
  uThicknessPx: UncertaintyPx;
  /** Width of the band where its darkening falls to half, px (the edge-to-edge convention). */
  edgeToEdgePx: number;
  /** The period used, px, its standard uncertainties and where it came from. */
  periodPx: number;
  uPeriodPx: UncertaintyPx;
  periodSource: 'given' | 'image' | 'line';
  /** Positions of the layers along the line from its start, px. */
  layerPositionsPx: number[];
  /** Centre of the sheet along the line from its start, px. */
  centerPx: number;
  /** Centre in image pixels [x, y] (y = row). */
  centerXY: [number, number];
  /** The two outer edges of the n·d thickness in image pixels. */
  edgesXY: [[number, number], [number, number]];
  /** Direction of the line (= the layer normal when drawn across), degrees in [0, 180), counter-clockwise from +x as shown. */
  angleDeg: number;
  /** Evidence for the sheet, and for its count over one layer more or fewer (Δχ²). */
  evidence: number;
  countMargin: number;
  /** The sheet reaches an end of the line, so it may continue beyond it. */
  truncated: boolean;
}

/** The result of {@link sheetsAlongLine}. */
export interface LineSheetsResult {
  sheets: LineSheet[];
  /** The width-averaged profile along the line (0.5 px bins, from the start; bins off the image trimmed, interior gaps filled linearly). */
  profile: { startPx: number; binPx: number; values: Float64Array };
  /** The period the layers were counted with (null when none could be found). */
  periodPx: number | null;
  periodSource: 'given' | 'image' | 'line' | null;
  /** Direction of the line, degrees (the convention above). */
  angleDeg: number;
  /** Length of the line, px. */
  lengthPx: number;
  /** A plain statement when nothing was measured, else null. */
  message: string | null;
}

/**
 * The profile as shown and exported: bins without pixels (where the line leaves the image) trimmed
 * from the ends, and interior empty bins filled linearly from their neighbours, so every value is a
 * number (an empty profile stays empty).
 */
function finiteProfile(startPx: number, binPx: number, values: Float64Array): LineSheetsResult['profile'] {
  let first = 0;
  while (first < values.length && !Number.isFinite(values[first])) first++;
  let last = values.length - 1;
  while (last >= first && !Number.isFinite(values[last])) last--;
  const out = values.slice(first, last + 1);
  for (let i = 0; i < out.length; i++) {
    if (Number.isFinite(out[i])) continue;
    let j = i;
    while (!Number.isFinite(out[j])) j++;
    const a = out[i - 1];
    const b = out[j];
    for (let k = i; k < j; k++) out[k] = a + ((b - a) * (k - i + 1)) / (j - i + 1);
    i = j;
  }
  return { startPx: startPx + first * binPx, binPx, values: out };
}

/** Periods a profile shows: up to three peaks of its periodogram standing out 8× from their two octaves. */
function linePeriods(p: AcrossProfile): number[] {
  const v: number[] = [];
  for (const x of p.values) if (Number.isFinite(x)) v.push(x);
  if (v.length < 24) return [];
  let size = 1;
  while (size < 8 * v.length) size <<= 1;
  const maxSamples = Math.min(80, v.length / 3);
  if (!(maxSamples > 5)) return [];
  const pw = profilePeriodogram(v, size, Math.max(maxSamples / 2, 8));
  // several candidates, and twice each: the periodogram's contrast can rank a harmonic first
  // (the fundamental sits among the stacks' own slow variation); the fringes' power and the comb
  // fits choose among them
  const found = periodCandidates(pw, size, 2 * MIN_COUNTABLE_PERIOD_PX * 0.9, maxSamples, 3)
    .filter((c) => c.peakToMedian >= 8)
    .map((c) => c.periodPx * p.binPx);
  const out = [...found];
  for (const d of found) if (2 * d <= (maxSamples * p.binPx) && !out.some((q) => Math.abs(q - 2 * d) < 0.04 * q)) out.push(2 * d);
  return out;
}

/**
 * Finds and counts the sheets crossed by a line drawn across stacks of layers.
 *
 * Width-averaged profile along the line, bands by least-squares steps, layers by the least-squares comb of layer lines (see ./stack-profile and ./count).
 *
 * @param image the image
 * @param x0 start x, px
 * @param y0 start y (row), px
 * @param x1 end x, px
 * @param y1 end y, px
 * @param options width, period (given or candidates), polarity, least evidence
 * @returns the sheets in order along the line, the profile, the period used and a message when none
 * Notes: draw the line along the layer normal, starting and ending on background; a line
 * oblique to the normal by θ stretches every length by 1/cos θ. The period: the given one; else
 * the candidate whose fringes fit best (the image's, from the automatic search); else the
 * profile's own periodogram. Thickness follows the n·d convention.
 */
export function sheetsAlongLine(image: GreyImage, x0: number, y0: number, x1: number, y1: number, options: SheetLineOptions = {}): LineSheetsResult {
  for (const [name, v] of [['x0', x0], ['y0', y0], ['x1', x1], ['y1', y1]] as const) {
    if (!Number.isFinite(v)) throw new RangeError(`${name} must be a finite number, got ${v}`);
  }
  const widthPx = options.widthPx ?? 9;
  if (!(widthPx >= 1 && Number.isFinite(widthPx))) throw new RangeError(`widthPx must be ≥ 1, got ${widthPx}`);
  const polarity = options.polarity ?? 'dark';
  if (polarity !== 'dark' && polarity !== 'bright') throw new RangeError(`polarity must be 'dark' or 'bright', got ${String(polarity)}`);
  if (options.minEvidence !== undefined && !(options.minEvidence > 0)) throw new RangeError(`minEvidence must be positive, got ${options.minEvidence}`);
  const lengthPx = Math.hypot(x1 - x0, y1 - y0);
  if (!(lengthPx >= 8)) throw new RangeError(`the line must be at least 8 px long, got ${lengthPx.toFixed(1)} px`);
  if (options.periodPx !== undefined) {
    const d = options.periodPx;
    if (!(d >= 2 && Number.isFinite(d))) throw new RangeError(`the period ${d} px is below the sampling limit of 2 px (Nyquist): check the period and the pixel size`);
    if (d < MIN_COUNTABLE_PERIOD_PX) throw new RangeError(`the period ${d} px is below ${MIN_COUNTABLE_PERIOD_PX} px, where layers can no longer be counted reliably`);
    if (d > lengthPx / 3) throw new RangeError(`the period ${d} px is more than a third of the ${lengthPx.toFixed(0)} px line: draw a longer line`);
  }
  const ux = (x1 - x0) / lengthPx;
  const uy = (y1 - y0) / lengthPx;
  const angleDeg = ((((Math.atan2(-uy, ux) * 180) / Math.PI) % 180) + 180) % 180;
  // an axis across the line, so that the profile's normal runs along the line from its start
  const mx = 0.5 * (x0 + x1);
  const my = 0.5 * (y0 + y1);
  const tx = -uy;
  const ty = ux;
  const halfW = Math.max(0.5, (widthPx - 1) / 2);
  const steps = Math.max(1, Math.round(2 * halfW));
  const pts: [number, number][] = [];
  for (let k = 0; k <= steps; k++) {
    const s = -halfW + (2 * halfW * k) / steps;
    pts.push([mx + s * tx, my + s * ty]);
  }
  const frame = axisFrame(pts);
  const profile = acrossProfile(image, frame, { halfWidthPx: lengthPx / 2 });
  const shown = finiteProfile(profile.startPx + lengthPx / 2, profile.binPx, profile.values);
  let periods: number[];
  let source: LineSheetsResult['periodSource'];
  if (options.periodPx !== undefined) {
    periods = [options.periodPx];
    source = 'given';
  } else if (options.periods && options.periods.length) {
    periods = options.periods.filter((d) => d >= MIN_COUNTABLE_PERIOD_PX * 0.96 && d <= lengthPx / 3);
    source = 'image';
  } else {
    periods = linePeriods(profile).filter((d) => d >= MIN_COUNTABLE_PERIOD_PX * 0.96);
    source = 'line';
  }
  // a period read off this same profile was chosen to fit it (noise included): more evidence is asked
  const minEvidence = options.minEvidence ?? (source === 'line' ? 100 : 40);
  const result = (sheets: LineSheet[], d: number | null, message: string | null): LineSheetsResult => ({
    sheets, profile: shown, periodPx: d, periodSource: d === null ? null : source, angleDeg, lengthPx, message,
  });
  if (periods.length === 0) return result([], null, 'no layer period found on the line: give the period (e.g. from the basal X-ray reflection) or run the automatic search first');
  // bands: darkening with the fringes smoothed away at half the (largest) period, and fringe energy
  const d0 = Math.max(...periods);
  const dark = smoothProfile(profile.values, profile.weights, (0.5 * d0) / profile.binPx);
  const bands: ProfileBand[] = profileBands(profile, d0, { polarity, maxBands: 6, minSignificance: 4, signal: dark });
  const r2 = new Float64Array(profile.values.length);
  for (let i = 0; i < r2.length; i++) r2[i] = Number.isFinite(dark[i]) ? (profile.values[i] - dark[i]) ** 2 : NaN;
  const energy = smoothProfile(r2, profile.weights, (0.5 * d0) / profile.binPx);
  for (const b of profileBands(profile, d0, { polarity: 'bright', maxBands: 6, minSignificance: 4, signal: energy })) {
    if (!bands.some((q) => q.fromPx < b.toPx && b.fromPx < q.toPx)) bands.push(b);
  }
  const parts = bands.flatMap((b) => splitBand(profile, b, d0, polarity)).sort((a, b) => a.fromPx - b.fromPx);
  const sheets: LineSheet[] = [];
  const end = lengthPx / 2;
  const at = (u: number): [number, number] => [x0 + ux * (u + end), y0 + uy * (u + end)];
  parts.forEach((band, k) => {
    const lo = k > 0 ? 0.5 * (parts[k - 1].toPx + band.fromPx) : -Infinity;
    const hi = k < parts.length - 1 ? 0.5 * (band.toPx + parts[k + 1].fromPx) : Infinity;
    const limit: [number, number] = [lo, hi];
    const chosen = bestPeriod(profile, band, periods, polarity, limit);
    if (!chosen) return;
    let { fit, periodPx } = chosen;
    let uPeriod = 0;
    let sheetSource = source as 'given' | 'image' | 'line';
    if (source !== 'given' && fit.layers >= 4) {
      const r = refinePeriod(profile, fit, polarity, limit);
      periodPx = r.periodPx;
      uPeriod = r.uPx;
      fit = fitLayerComb(profile, periodPx, { fromPx: fit.centerPx - (fit.layers * periodPx) / 2, toPx: fit.centerPx + (fit.layers * periodPx) / 2 }, { polarity, limitPx: limit, countReach: 2 }) ?? r.fit;
      sheetSource = 'line';
    }
    if (fit.evidence < minEvidence) return;
    if (fit.layers >= 3 && !layersResolved(profile, fit, polarity, limit)) return;
    if (fit.layers === 1 && fit.lineSigmaPx > 0.49 * periodPx + 0.5) return;
    // one dark line is a monolayer only at a period known from elsewhere (else any dark speck is one)
    if (fit.layers === 1 && source === 'line') return;
    sheets.push(lineSheet(fit, periodPx, uPeriod, sheetSource, profile, polarity, end, at, angleDeg));
  });
  // the period reported: the one the sheets used (the first candidate when there are none)
  const used = sheets.length ? sheets.map((q) => q.periodPx).sort((a, b) => a - b)[sheets.length >> 1] : periods[0];
  return result(sheets, used, sheets.length ? null : 'no sheet along the line: draw it across a stack, along the layer normal, from background to background');
}

function lineSheet(
  fit: CombFit,
  periodPx: number,
  uPeriod: number,
  source: 'given' | 'image' | 'line',
  profile: AcrossProfile,
  polarity: 'dark' | 'bright',
  end: number,
  at: (u: number) => [number, number],
  angleDeg: number,
): LineSheet {
  const layerPositionsPx = Array.from({ length: fit.layers }, (_, q) => fit.firstPx + q * periodPx + end);
  const a = fit.firstPx - periodPx / 2;
  const b = fit.firstPx + (fit.layers - 0.5) * periodPx;
  return {
    layers: fit.layers,
    thicknessPx: fit.layers * periodPx,
    uThicknessPx: { statisticalPx: fit.layers * uPeriod, localVariationPx: 0, methodPx: 0 },
    edgeToEdgePx: edgeToEdge(profile, fit, polarity) ?? fit.layers * periodPx,
    periodPx,
    uPeriodPx: { statisticalPx: uPeriod, localVariationPx: 0, methodPx: 0 },
    periodSource: source,
    layerPositionsPx,
    centerPx: fit.centerPx + end,
    centerXY: at(fit.centerPx),
    edgesXY: [at(a), at(b)],
    angleDeg,
    evidence: fit.evidence,
    countMargin: fit.countMargin,
    truncated: a < -end + periodPx || b > end - periodPx,
  };
}
