/**
 * The one entry point for "what periods are in this region?", called alike by the command line,
 * the app and the batch runner.
 */
import type { GreyImage } from '../image/grey-image';
import { type Measurement, recordHead } from './measurement';
import { spotPeriodicity } from './spot-near';
import { refineData } from './refine';
import { budgetSpot, type BudgetedSpot } from './spot-budget';
import { complexSpectrum } from './spot-field';
import { type AveragedPowerSpectrum, LARGEST_WHOLE_TRANSFORM_PX, regionPowerSpectrum } from './averaged-spectrum';
import { findSpots, type PowerSpectrumOptions, type RectPx, type SpotOptions, type Spot, type PowerSpectrum } from './spectrum';

/** Options of {@link measureRegion}. */
export interface MeasureRegionOptions extends PowerSpectrumOptions, SpotOptions {
  /** File name recorded in the measurement (default ''). */
  fileName?: string;
  /** Stored image id recorded in the measurement (default null). */
  imageId?: string | null;
  /**
   * With the Hann window: when its spectrum shows no spot, look again in a lightly tapered (Tukey)
   * spectrum; the two looks share the false-alarm probability, 0.9 and 0.1 of it (default true).
   */
  secondLook?: boolean;
  /** Refine this many of the strongest spots where their fringes are, with their full budget (default: every spot, up to maxSpots; 0: Hann estimates only). */
  refineSpots?: number;
}

/**
 * Tapered fraction of the second look's Tukey window: its bins keep (1 − r/2)²/(1 − 5r/8) ≈ 0.91 of
 * an unwindowed bin's SNR per axis (Hann: 0.67), with side lobes low enough for the local background.
 * Reference: window gains, Harris, Proc. IEEE 66(1), 51–83 (1978).
 */
const SECOND_LOOK_TAPER = 0.25;

/** Share of the false-alarm probability given to the first (Hann) look; the second gets the rest. */
const FIRST_LOOK_SHARE = 0.9;

/** Power below this fraction of the strongest spot's marks a spot as weak. */
const WEAK_RELATIVE_POWER = 1e-3;

/**
 * Flags spots that are more likely artefacts than lattice fringes, and ranks them after the
 * others (each group by strength).
 *
 * Parameters: spots; width, height of the transform (bins).
 * Returns: the spots with their flags, unflagged first.
 * Notes: local significance alone ranks a near-Nyquist artefact first when the detector's
 * transfer leaves almost no noise there. Flags: 'near-nyquist', a frequency within 12 % of the
 * sampling limit along either axis (frequency components of 0.44 cycles/px and more, periods under 2.28 px); 'weak-relative', peak power
 * below 10⁻³ of the strongest spot's (a lattice whose spots are that much weaker than another's
 * is rarely what was meant); 'fixed-pattern', on an axis of the spectrum at a period of a whole
 * number of pixels up to 16 within 0.5 % (readout, stitching and 8 × 8 compression blocks).
 * Reference: plausibility checks of lattice spots (common practice; the JPEG block period: ITU-T T.81).
 */
function rankByPlausibility(spots: Spot[], width: number, height: number): Spot[] {
  if (!spots.length) return spots;
  const maxPower = Math.max(...spots.map((s) => s.peakPower));
  const flagged = spots.map((s) => {
    const flags = new Set(s.flags);
    if (Math.abs(s.fx) >= 0.44 || Math.abs(s.fy) >= 0.44) flags.add('near-nyquist');
    if (s.peakPower < WEAK_RELATIVE_POWER * maxPower) flags.add('weak-relative');
    const onAxis = Math.abs(s.fy * height) < 0.5 || Math.abs(s.fx * width) < 0.5;
    const whole = Math.round(s.periodPx);
    if (onAxis && whole >= 2 && whole <= 16 && Math.abs(s.periodPx - whole) < 0.005 * whole) flags.add('fixed-pattern');
    return { ...s, flags: [...flags] };
  });
  const ok = flagged.filter((s) => s.flags.length === 0);
  const doubtful = flagged.filter((s) => s.flags.length > 0);
  return [...ok, ...doubtful];
}

/**
 * Keeps the strongest of spots that belong to one crystal: a weaker spot whose support lies on a
 * stronger one's, at nearly the same direction (within 6°) and within a quarter of its frequency,
 * is the side lobe of a finite crystal or the same spot found twice.
 * Notes: a finite stack of N fringes has a main lobe about 1/N of its frequency wide with side
 * lobes beside it; after the refit on the support both may converge to one frequency.
 * Reference: transform of a finite lattice (common practice in diffraction).
 */
function dropSideLobes(spots: BudgetedSpot[]): BudgetedSpot[] {
  const kept: BudgetedSpot[] = [];
  for (const b of spots) {
    const f = Math.hypot(b.spot.fx, b.spot.fy);
    const twin = kept.find((k) => {
      const fk = Math.hypot(k.spot.fx, k.spot.fy);
      let dAng = Math.abs(k.spot.angleDeg - b.spot.angleDeg) % 180;
      if (dAng > 90) dAng = 180 - dAng;
      if (dAng > 6 || Math.abs(fk - f) > 0.25 * fk) return false;
      let shared = 0;
      let own = 0;
      for (let i = 0; i < b.supportWeights.length; i++) {
        shared += Math.min(b.supportWeights[i], k.supportWeights[i]);
        own += b.supportWeights[i];
      }
      return own > 0 && shared / own > 0.6;
    });
    if (!twin) kept.push(b);
  }
  return kept;
}

/** A measurement together with the large arrays a display needs. */
export interface RegionAnalysis {
  /** The measurement (small, plain JSON). */
  measurement: Measurement;
  /** The power spectrum it was computed from (for display: see centredLogPower). */
  spectrum: PowerSpectrum;
  /** The spots with their frequency vectors (for Fourier filtering). */
  spots: Spot[];
}

/**
 * Periodicities of a rectangular region, with the spectrum kept for display.
 *
 * Parameters, returns and notes: as {@link measureRegion}, plus the spectrum and spots.
 * Reference: as findSpots (Bonferroni-thresholded periodogram, Grandke interpolation).
 */
export async function analyseRegion(
  image: GreyImage,
  region: RectPx | null,
  options: MeasureRegionOptions = {},
): Promise<RegionAnalysis> {
  const alpha = options.alpha ?? 0.001;
  if (!(alpha > 0 && alpha < 1)) throw new RangeError(`alpha must be in (0, 1), got ${alpha}`);
  // Two looks share the family-wise false-alarm probability (Bonferroni): the Hann spectrum first
  // at 0.9 α; if it shows nothing, a lightly tapered one at 0.1 α, whose single bins keep about
  // twice the SNR of Hann's (the smaller share costs it a threshold only ln 9 ≈ 2.2 higher).
  const twoLooks = (options.window ?? 'hann') === 'hann' && options.secondLook !== false;
  let spectrum: PowerSpectrum = await regionPowerSpectrum(image, region, options);
  let search = findSpots(spectrum, { ...options, alpha: twoLooks ? FIRST_LOOK_SHARE * alpha : alpha });
  const lookNotes: string[] = [];
  if (twoLooks && search.spots.length === 0) {
    const light = await regionPowerSpectrum(image, region, { ...options, window: 'tukey', tukeyAlpha: SECOND_LOOK_TAPER, detrend: 'plane' });
    const second = findSpots(light, { ...options, alpha: (1 - FIRST_LOOK_SHARE) * alpha });
    if (second.spots.length > 0) {
      spectrum = light;
      search = second;
      lookNotes.push(
        `found in the second look: a Tukey window tapering ${SECOND_LOOK_TAPER * 100} % of each side, which keeps more of a faint spot's power than the Hann window (the two looks share the false-alarm probability ${alpha}: ${FIRST_LOOK_SHARE} and ${+(1 - FIRST_LOOK_SHARE).toFixed(2)} of it)`,
      );
    }
  }
  if (twoLooks) search.alpha = alpha;
  const refineCount = options.refineSpots ?? (options.maxSpots ?? 12);
  if (!(Number.isInteger(refineCount) && refineCount >= 0)) throw new RangeError(`refineSpots must be a non-negative integer, got ${refineCount}`);
  let refined = 0;
  let onSupport = 0;
  const budgetNotes: string[] = [...lookNotes];
  const tiles = (spectrum as Partial<AveragedPowerSpectrum>).tiles;
  // a spectrum averaged over tiles: its spots are refined on the centred tile (the memory of one tile)
  const refineArea = tiles
    ? { x: spectrum.area.x + ((spectrum.area.width - tiles.widthPx) >> 1), y: spectrum.area.y + ((spectrum.area.height - tiles.heightPx) >> 1), width: tiles.widthPx, height: tiles.heightPx }
    : spectrum.area;
  if (tiles) {
    budgetNotes.push(
      `spectrum averaged over ${tiles.count} overlapping tiles of ${tiles.widthPx} × ${tiles.heightPx} px (Welch; the region is larger than ${LARGEST_WHOLE_TRANSFORM_PX} px a side); spots refined on the centred tile`,
    );
  }
  if (refineCount > 0 && search.spots.length > 0) {
    const data = refineData(image, refineArea);
    const spec = await complexSpectrum(image, refineArea, 0.3, options.workspace);
    const done: BudgetedSpot[] = [];
    const rest: Spot[] = [];
    for (const [i, s] of search.spots.entries()) {
      if (i >= refineCount) {
        rest.push(s);
        continue;
      }
      const b = await budgetSpot(image, data, spec, s, { workspace: options.workspace });
      refined++;
      if (b.onSupport) onSupport++;
      budgetNotes.push(...b.notes);
      done.push(b);
    }
    const kept = dropSideLobes(done);
    if (kept.length < done.length) {
      budgetNotes.push(`${done.length - kept.length} spot${done.length - kept.length === 1 ? '' : 's'} dropped as the side lobe or double of a stronger spot of the same crystal`);
    }
    search.spots = [...kept.map((b) => b.spot), ...rest];
  }
  search.spots = rankByPlausibility(search.spots, spectrum.width, spectrum.height);
  const periodicities = search.spots.map(spotPeriodicity);
  const doubted = search.spots.filter((p) => p.flags.length > 0);
  if (doubted.length) budgetNotes.push(`${doubted.length} spot${doubted.length === 1 ? '' : 's'} with a doubt (${[...new Set(doubted.flatMap((p) => p.flags))].join(', ')}) ranked after the others`);
  const notes: string[] = [...budgetNotes];
  const r = region ?? { x: 0, y: 0, width: image.width, height: image.height };
  if (!tiles && (spectrum.width !== r.width || spectrum.height !== r.height)) {
    notes.push(
      `region trimmed from ${r.width} × ${r.height} to ${spectrum.width} × ${spectrum.height} px (centred) for a fast transform`,
    );
  }
  if (periodicities.length === 0) {
    notes.push(`no significant periodicity (false-alarm probability ${search.alpha} over ${search.searchedBins} bins)`);
  }
  notes.push(...image.warnings.filter((w) => /NaN or infinite pixels were replaced/.test(w)));
  if (!image.calibration) notes.push('image not calibrated: periods in px only');
  const measurement: Measurement = {
    ...recordHead('spectrum', options),
    region: region ? { kind: 'rect', ...r } : null,
    calibration: image.calibration,
    settings: {
      window: spectrum.window,
      ...(spectrum.window === 'tukey' ? { tukeyAlpha: spectrum.tukeyAlpha } : {}),
      detrend: options.detrend ?? 'mean',
      alpha: search.alpha,
      minPeriodPx: options.minPeriodPx ?? 0,
      maxPeriodPx: options.maxPeriodPx ?? Math.min(spectrum.width, spectrum.height) / 4,
      maxSpots: options.maxSpots ?? 12,
      refineSpots: refineCount,
    },
    periodicities,
    detail: {
      area: spectrum.area,
      ...(tiles ? { spectrumTiles: tiles, refinedArea: refineArea } : {}),
      threshold: search.threshold,
      searchedBins: search.searchedBins,
      refinedSpots: refined,
      spotsOnSupport: onSupport,
      spots: search.spots.map((s) => ({
        fxPerPx: s.fx,
        fyPerPx: s.fy,
        normalisedPower: s.normalisedPower,
        snr: s.snr,
      })),
    },
    notes,
  };
  return { measurement, spectrum, spots: search.spots };
}

/**
 * Periodicities of a rectangular region of an image, strongest first.
 *
 * Parameters: image; region {x, y, width, height} in pixels (null: the whole image); options
 * (window, detrend, false-alarm probability, period range, file name and image id to record).
 * Returns: a Measurement with tool 'spectrum'; periodicities strongest first, empty when nothing
 * in the region is significantly periodic (an amorphous region reports none). The detail holds
 * the transformed area, the detection threshold and per-spot frequency vectors, nothing large.
 * Notes: spots are detected and first refined on the Hann spectrum (findSpots), then the strongest
 * (refineSpots) are refined again at the maximum of a Tukey(0.3)-windowed periodogram (refineSpot),
 * whose variance is closer to the Cramér–Rao bound. angleDeg is the fringe normal (spot direction) in [0, 180), counter-clockwise from +x as
 * shown; uncertainties combine the statistical part (Cramér–Rao bound × window factor) with the
 * calibration's relative uncertainty in quadrature (toNm).
 * Reference: Bonferroni-thresholded periodogram and Grandke interpolation (see findSpots).
 */
export async function measureRegion(
  image: GreyImage,
  region: RectPx | null,
  options: MeasureRegionOptions = {},
): Promise<Measurement> {
  return (await analyseRegion(image, region, options)).measurement;
}
