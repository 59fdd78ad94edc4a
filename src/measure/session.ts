/**
 * An image session: one opened image kept where the measuring runs (the app's compute worker),
 * with what its regions' transforms produced kept for the next request. The page sends the
 * session's id and a region or a line, never pixels; clicking a spot of a region's spectrum reuses
 * that region's spectrum and background, so it costs no transform of the region; recalibrating
 * changes the calibration the records carry and reruns nothing (records keep pixels).
 *
 * State lives in the session object the caller holds (no module state).
 */
import { isPixelArray, type Calibration, type GreyImage } from '../image/grey-image';
import { reduceForDisplay, displayPicture, type Picture } from '../image/display';
import { fourierFilter } from './fourier-filter';
import { analyseRegion, type RegionAnalysis } from './measure-region';
import { RECORD_VERSION, type Measurement, type Periodicity } from './measurement';
import { analyseProfile, type ProfileEstimator, type ProfileLine } from './profile-measurement';
import type { ProfilePeriod, RealSpacePeriod } from './period-profile';
import { refineData, type RefineData } from './refine';
import { budgetSpot } from './spot-budget';
import { complexSpectrum, type ComplexSpectrum } from './spot-field';
import { spotNear, spotPeriodicity } from './spot-near';
import { centredLogPowerReduced, findRings, radialBackground, radialProfile, ringPeriodicity, type RadialBackground, type RectPx, type Ring, type Spot } from './spectrum';
import type { WindowKind } from './window';

/** Settings of a region's spectrum. */
export interface SpectrumSettings {
  /** Data window before the transform. */
  window: WindowKind;
  /** Tapered fraction of the Tukey window. */
  tukeyAlpha: number;
  /** Family-wise false-alarm probability of the spot and ring search. */
  alpha: number;
}

/** What a region's transforms produced, kept for the next request on the same region. */
interface RegionCache {
  /** The region and the transform settings it was computed with. */
  key: string;
  /** The analysis (measurement, power spectrum, spots) at the false-alarm probability `alpha`. */
  analysis: RegionAnalysis;
  alpha: number;
  /** Radial background of the power spectrum (for spots added by a click). */
  background?: RadialBackground;
  /** Refinement data and complex spectrum of the transformed area (for a spot's budget). */
  refine?: RefineData;
  complex?: ComplexSpectrum;
  /** The preparation of `refine` and `complex` under way or done (one transform, however often asked). */
  spotsReady?: Promise<void>;
}

/** An opened image and what has been computed on it. */
export interface ImageSession {
  /** The id the page refers to it by. */
  readonly id: string;
  /** The image (the session's own copy of the pixels; its calibration is the current one). */
  image: GreyImage;
  /** Cached regions, least recently used first. */
  regions: RegionCache[];
  /** How many regions are kept (default 4). */
  readonly maxRegions: number;
  /** Counts of work done: transforms of a whole region, and requests answered from the cache. */
  readonly stats: { regionTransforms: number; cacheHits: number };
}

/**
 * Opens a session on an image.
 * @param id the id to refer to it by (non-empty)
 * @param image the image; the session keeps it and never changes its pixels
 * @param options how many regions to keep (default 4; each holds about three arrays of the region's size)
 * @returns the session
 */
export function createImageSession(id: string, image: GreyImage, options: { maxRegions?: number } = {}): ImageSession {
  if (typeof id !== 'string' || id === '') throw new TypeError(`a session id must be a non-empty string, got ${JSON.stringify(id)}`);
  if (!image || !isPixelArray(image.data) || image.data.length !== image.width * image.height) {
    throw new TypeError('a session needs a GreyImage (pixels missing or of the wrong length)');
  }
  const maxRegions = options.maxRegions ?? 4;
  if (!(Number.isInteger(maxRegions) && maxRegions >= 1)) throw new RangeError(`maxRegions must be a whole number ≥ 1, got ${maxRegions}`);
  return { id, image, regions: [], maxRegions, stats: { regionTransforms: 0, cacheHits: 0 } };
}

/**
 * Replaces the session's calibration. Nothing is measured again: the records keep pixels and
 * every value in nm is expressed from them with the calibration in force (expressPeriod).
 * @param session the session
 * @param calibration the new pixel size, or null
 */
export function recalibrateSession(session: ImageSession, calibration: Calibration | null): void {
  session.image = { ...session.image, calibration };
  for (const r of session.regions) r.analysis = { ...r.analysis, measurement: { ...r.analysis.measurement, calibration } };
}

function checkRect(session: ImageSession, rect: RectPx): RectPx {
  const { x, y, width, height } = rect ?? ({} as RectPx);
  if (![x, y, width, height].every(Number.isInteger) || x < 0 || y < 0 || width < 16 || height < 16 || x + width > session.image.width || y + height > session.image.height) {
    throw new RangeError(`region x ${x}, y ${y}, ${width} × ${height} must be whole pixels, at least 16 × 16, inside the ${session.image.width} × ${session.image.height} image`);
  }
  return { x, y, width, height };
}

function keyOf(rect: RectPx, s: SpectrumSettings): string {
  return `${rect.x},${rect.y},${rect.width},${rect.height}|${s.window}|${s.window === 'tukey' ? s.tukeyAlpha : ''}`;
}

function cached(session: ImageSession, key: string): RegionCache | undefined {
  const i = session.regions.findIndex((r) => r.key === key);
  if (i < 0) return undefined;
  const [r] = session.regions.splice(i, 1);
  session.regions.push(r);
  return r;
}

/**
 * The spectrum analysis of a region: spots with their budgets, the measurement record (region in
 * image pixels) and the power spectrum; from the cache when the same region was analysed with the
 * same settings.
 * @param session the session
 * @param rect the region in whole image pixels (at least 16 × 16)
 * @param settings window and false-alarm probability
 * @returns the analysis (see analyseRegion)
 * Reference: as analyseRegion (Bonferroni-thresholded periodogram, Grandke interpolation).
 */
export async function regionAnalysis(session: ImageSession, rect: RectPx, settings: SpectrumSettings): Promise<RegionAnalysis> {
  const r = checkRect(session, rect);
  const key = keyOf(r, settings);
  const hit = cached(session, key);
  if (hit && hit.alpha === settings.alpha) {
    session.stats.cacheHits++;
    return hit.analysis;
  }
  const analysis = await analyseRegion(session.image, r, { window: settings.window, tukeyAlpha: settings.tukeyAlpha, alpha: settings.alpha });
  session.stats.regionTransforms++;
  if (hit) {
    hit.analysis = analysis;
    hit.alpha = settings.alpha;
  } else {
    session.regions.push({ key, analysis, alpha: settings.alpha });
    while (session.regions.length > session.maxRegions) session.regions.shift();
  }
  return analysis;
}

function regionOf(session: ImageSession, rect: RectPx, settings: SpectrumSettings): RegionCache {
  const hit = cached(session, keyOf(checkRect(session, rect), settings));
  if (!hit) throw new RangeError(`no spectrum of region x ${rect.x}, y ${rect.y}, ${rect.width} × ${rect.height} in this session: analyse the region first`);
  return hit;
}

/**
 * Prepares what a spot's budget needs for a region already analysed (its background, refinement
 * data and complex spectrum), so that a later click does not wait for a transform. Idempotent.
 * @param session the session
 * @param rect the region
 * @param settings its spectrum settings
 */
export function prepareRegionSpots(session: ImageSession, rect: RectPx, settings: SpectrumSettings): Promise<void> {
  const c = regionOf(session, rect, settings);
  c.background ??= radialBackground(c.analysis.spectrum);
  c.spotsReady ??= (async () => {
    const area = c.analysis.spectrum.area;
    c.refine = refineData(session.image, area);
    c.complex = await complexSpectrum(session.image, area);
    session.stats.regionTransforms++;
  })().catch((e) => {
    c.spotsReady = undefined;
    throw e;
  });
  return c.spotsReady;
}

/**
 * The spot nearest a clicked frequency of a region's spectrum, from the cached spectrum: no
 * transform. Its uncertainty is the statistical part only until {@link spotBudgetIn} gives the
 * full budget.
 * @param session the session
 * @param rect the region (analysed before)
 * @param settings its spectrum settings
 * @param fx clicked frequency along x, cycles/px (|fx| ≤ 0.5)
 * @param fy clicked frequency along the row index, cycles/px (|fy| ≤ 0.5)
 * @param radiusBins search radius in bins (default 3)
 * @returns the spot, or null when nothing stands above the background there
 * Reference: as spotNear (Grandke 1983; Rife & Boorstyn 1974).
 */
export function spotNearIn(session: ImageSession, rect: RectPx, settings: SpectrumSettings, fx: number, fy: number, radiusBins = 3): Spot | null {
  const c = regionOf(session, rect, settings);
  session.stats.cacheHits++;
  c.background ??= radialBackground(c.analysis.spectrum);
  return spotNear(c.analysis.spectrum, fx, fy, { radiusBins, background: c.background });
}

/**
 * A spot refined where its fringes are, with its full uncertainty budget, like the automatic ones.
 * @param session the session
 * @param rect the region (analysed before)
 * @param settings its spectrum settings
 * @param spot the spot (from {@link spotNearIn})
 * @returns the budgeted spot
 * Reference: as budgetSpot (Hÿtch, Snoeck & Kilaas 1998; Cochran 1954; DerSimonian & Laird 1986).
 */
export async function spotBudgetIn(session: ImageSession, rect: RectPx, settings: SpectrumSettings, spot: Spot): Promise<Spot> {
  await prepareRegionSpots(session, rect, settings);
  const c = regionOf(session, rect, settings);
  return (await budgetSpot(session.image, c.refine!, c.complex!, spot)).spot;
}

/** A region's spectrum as the Periods panel shows it. */
export interface SpectrumView {
  /** The record (region and area in image pixels). */
  measurement: Measurement;
  /** Spots with frequency vectors, strongest first. */
  spots: Spot[];
  /** Transform size (the region trimmed to a fast size). */
  width: number;
  height: number;
  /** Centred log power (DC in the middle), max-pooled from the transform; the page sets the grey scale. */
  picture: { width: number; height: number; logPower: Float32Array };
  /** Transform bins per picture pixel along each side (the pooling factor). */
  binsPerPicturePx: number;
  /** Radial average: ring frequency (cycles/px) and mean power per ring, up to the Nyquist ring. */
  radialFrequencyPerPx: Float64Array;
  radialPower: Float64Array;
  /** Significant rings, strongest first. */
  rings: Ring[];
  /** Detection threshold on normalised power and the number of bins searched. */
  threshold: number;
  searchedBins: number;
}

/**
 * A region's analysis with what a display needs: the centred log power pooled to about
 * `displayPx`, the radial average and its rings.
 * @param analysis the region's analysis
 * @param displayPx longest side of the picture (≥ 64)
 * @param alpha false-alarm probability of the ring search
 * @returns the view
 * Reference: as radialProfile and findRings (azimuthal average, Bonferroni-corrected peak test).
 */
export function spectrumView(analysis: RegionAnalysis, displayPx: number, alpha: number): SpectrumView {
  const sp = analysis.spectrum;
  const m = analysis.measurement;
  const factor = Math.max(1, Math.ceil(Math.max(sp.width, sp.height) / Math.max(64, displayPx)));
  const small = centredLogPowerReduced(sp, factor);
  const radial = radialProfile(sp);
  const nyquist = Math.floor(Math.max(sp.width, sp.height) / 2);
  return {
    measurement: m,
    spots: analysis.spots,
    width: sp.width,
    height: sp.height,
    picture: { width: small.width, height: small.height, logPower: small.data },
    binsPerPicturePx: factor,
    radialFrequencyPerPx: radial.frequencyPerPx.slice(0, nyquist + 1),
    radialPower: radial.meanPower.slice(0, nyquist + 1),
    rings: findRings(radial, { alpha }),
    threshold: (m.detail?.threshold as number) ?? NaN,
    searchedBins: (m.detail?.searchedBins as number) ?? 0,
  };
}

/** A line profile as the Periods panel shows it. */
export interface ProfileView {
  /** Distance of each sample from the start, px. */
  distancePx: Float64Array;
  /** Width-averaged grey value per sample. */
  mean: Float64Array;
  /** Standard error of that mean (NaN for a 1 px wide line). */
  standardError: Float64Array;
  /** Line length, px. */
  lengthPx: number;
  /** Line direction, degrees in [0, 180), counter-clockwise from +x as shown. */
  angleDeg: number;
  /** Spectral estimate, or null when no peak lies in the searched range. */
  spectral: ProfilePeriod | null;
  /** Real-space (fringe extrema) estimate, or null when fewer than four extrema are found. */
  realSpace: RealSpacePeriod | null;
  /** The record (line in image pixels, samples in its detail): one periodicity per estimate, spectral first. */
  measurement: Measurement;
}

/** NaN and infinities become null so a record's detail stays plain JSON. */
function jsonNumbers(values: ArrayLike<number>, digits = 6): (number | null)[] {
  return Array.from(values, (v) => (Number.isFinite(v) ? +v.toPrecision(digits) : null));
}

/**
 * The period along a line of the session's image, by both profile estimators, with the record.
 * @param session the session
 * @param line the line in image pixels with its averaging width
 * @param estimator the spectral estimator
 * @returns the profile and its record (the samples kept in the record's detail)
 * @throws RangeError naming the line when its band leaves the image
 * Reference: as analyseProfile (GUM; Cochran 1954).
 */
export function profileIn(session: ImageSession, line: ProfileLine, estimator: ProfileEstimator): ProfileView {
  const a = analyseProfile(session.image, line, { estimator });
  const p = a.profile;
  const m = a.measurement;
  const measurement: Measurement = {
    ...m,
    detail: { ...m.detail, samples: { distancePx: jsonNumbers(p.distancePx), mean: jsonNumbers(p.mean), standardError: jsonNumbers(p.standardError) } },
  };
  return { distancePx: p.distancePx, mean: p.mean, standardError: p.standardError, lengthPx: p.lengthPx, angleDeg: p.angleDeg, spectral: a.spectral, realSpace: a.realSpace, measurement };
}

/** A region as recorded and Fourier-filtered, as pictures. */
export interface FilterView {
  original: Picture;
  filtered: Picture;
}

/**
 * A region of the session's image Fourier-filtered to chosen spots (and their Friedel mates), and
 * the region itself, as display pictures of at most about `displayPx` on their longer side.
 * @param session the session
 * @param rect the region
 * @param spots frequency vectors kept (cycles/px)
 * @param displayPx longest side of the pictures (≥ 64)
 * @returns both pictures, stretched by the one display stretch
 * Reference: as fourierFilter (Fourier filtering of lattice images, common practice).
 */
export async function filterIn(session: ImageSession, rect: RectPx, spots: { fx: number; fy: number }[], displayPx: number): Promise<FilterView> {
  const r = checkRect(session, rect);
  const out = await fourierFilter(session.image, r, spots);
  const factor = Math.max(1, Math.ceil(Math.max(out.width, out.height) / Math.max(64, displayPx)));
  const region = new Float32Array(r.width * r.height);
  for (let j = 0; j < r.height; j++) region.set(session.image.data.subarray((r.y + j) * session.image.width + r.x, (r.y + j) * session.image.width + r.x + r.width), j * r.width);
  const a = reduceForDisplay(region, r.width, r.height, factor, 'mean');
  const b = reduceForDisplay(out.data, out.width, out.height, factor, 'mean');
  return { original: displayPicture(a.data, a.width, a.height), filtered: displayPicture(b.data, b.width, b.height) };
}

/** A spot of the Periods panel's table: found by the search or added by a click. */
export interface NumberedSpot {
  spot: Spot;
  /** Number shown in the table and on the spectrum. */
  number: number;
  /** Added by a click (not tested for significance). */
  addedByHand: boolean;
}

/**
 * The spectrum record of a region with the spots of the table (some removed, some added by a
 * click), strongest first, with the rings and the selection in its detail.
 * @param base the region's record (from the analysis)
 * @param spots the table's spots
 * @param rings the region's rings
 * @param selected numbers of the selected spots
 * @returns a new record (same tool, region and settings)
 */
export function withTableSpots(base: Measurement, spots: NumberedSpot[], rings: Ring[], selected: number[]): Measurement {
  if (base.tool !== 'spectrum') throw new RangeError(`withTableSpots needs a spectrum record, got tool '${base.tool}'`);
  const ordered = [...spots].sort((a, b) => b.spot.normalisedPower - a.spot.normalisedPower);
  const periodicities: Periodicity[] = ordered.map((t) => spotPeriodicity(t.spot));
  return {
    ...base,
    recordVersion: RECORD_VERSION,
    periodicities,
    detail: {
      ...base.detail,
      spots: ordered.map((t) => ({ number: t.number, fxPerPx: t.spot.fx, fyPerPx: t.spot.fy, normalisedPower: t.spot.normalisedPower, snr: t.spot.snr, addedByHand: t.addedByHand })),
      rings: rings.map(ringPeriodicity),
      selectedSpots: [...selected],
    },
    notes: [...base.notes, ...(ordered.some((t) => t.addedByHand) ? ['spots added by hand are not tested for significance'] : [])],
  };
}
