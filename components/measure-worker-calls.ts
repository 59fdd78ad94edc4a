/**
 * The measuring panel's calls, run inside the compute worker (see compute-worker.ts): line-profile
 * periods, the region's power spectrum with spots and rings, a spot added near a click, and the
 * Fourier-filtered region. The core modules are loaded on first use.
 */
import type { GreyImage } from '../src/image/grey-image';
import type {
  FilterArgs,
  FilterResult,
  Picture,
  ProfileArgs,
  ProfileResult,
  SpectrumArgs,
  SpectrumResult,
  SpotNearArgs,
} from './measure-types';
import type { Spot } from '../src/measure/spectrum';

/** Grey values → 8-bit RGBA, black and white at the given fractions of the sorted values. */
function toPicture(values: ArrayLike<number>, width: number, height: number, lowFrac: number, highFrac: number): Picture {
  const n = width * height;
  const step = Math.max(1, Math.floor(n / 50000));
  const sample: number[] = [];
  for (let i = 0; i < n; i += step) if (Number.isFinite(values[i])) sample.push(values[i]);
  sample.sort((a, b) => a - b);
  const lo = sample[Math.floor(lowFrac * (sample.length - 1))] ?? 0;
  let hi = sample[Math.floor(highFrac * (sample.length - 1))] ?? 1;
  if (!(hi > lo)) hi = lo + 1;
  const k = 255 / (hi - lo);
  const rgba = new Uint8ClampedArray(n * 4);
  for (let i = 0; i < n; i++) {
    const g = (values[i] - lo) * k;
    const o = 4 * i;
    rgba[o] = rgba[o + 1] = rgba[o + 2] = g;
    rgba[o + 3] = 255;
  }
  return { width, height, rgba };
}

/** Reduces a row-major array by an integer factor, keeping the maximum (spots stay visible) or the mean. */
function reduce(values: ArrayLike<number>, width: number, height: number, factor: number, mode: 'max' | 'mean') {
  if (factor <= 1) return { data: Float32Array.from(values), width, height };
  const w = Math.floor(width / factor);
  const h = Math.floor(height / factor);
  const data = new Float32Array(w * h);
  for (let j = 0; j < h; j++) {
    for (let i = 0; i < w; i++) {
      let m = mode === 'max' ? -Infinity : 0;
      for (let b = 0; b < factor; b++) {
        const o = (j * factor + b) * width + i * factor;
        for (let a = 0; a < factor; a++) {
          const v = values[o + a];
          if (mode === 'max') m = v > m ? v : m;
          else m += v;
        }
      }
      data[j * w + i] = mode === 'max' ? m : m / (factor * factor);
    }
  }
  return { data, width: w, height: h };
}

function checkImage(image: GreyImage): void {
  if (!image || !(image.data instanceof Float32Array) || image.data.length !== image.width * image.height) {
    throw new RangeError('the region sent to the worker is not an image (pixels missing or of the wrong length)');
  }
}

/** Width-averaged line profile, both period estimators and the record with its uncertainty budget. */
export async function profilePeriods(args: ProfileArgs): Promise<ProfileResult> {
  checkImage(args.image);
  const { analyseProfile } = await import('../src/measure/profile-measurement');
  const a = analyseProfile(args.image, { x0: args.x0, y0: args.y0, x1: args.x1, y1: args.y1, widthPx: args.widthPx }, { estimator: args.estimator });
  const m = a.measurement;
  if (m.region?.kind === 'line') m.region = { ...m.region, x0: m.region.x0 + args.originX, y0: m.region.y0 + args.originY, x1: m.region.x1 + args.originX, y1: m.region.y1 + args.originY };
  const p = a.profile;
  return { distancePx: p.distancePx, mean: p.mean, standardError: p.standardError, lengthPx: p.lengthPx, angleDeg: p.angleDeg, spectral: a.spectral, realSpace: a.realSpace, measurement: m, notes: m.notes };
}

/** Power spectrum of the region, spots, radial average and rings, with a display picture. */
export async function regionSpectrum(args: SpectrumArgs): Promise<SpectrumResult> {
  checkImage(args.image);
  const { analyseRegion } = await import('../src/measure/measure-region');
  const { centredLogPower, radialProfile, findRings } = await import('../src/measure/spectrum');
  const s = args.settings;
  const a = await analyseRegion(args.image, null, { window: s.window, tukeyAlpha: s.tukeyAlpha, alpha: s.alpha });
  const sp = a.spectrum;
  const m = a.measurement;
  m.region = { kind: 'rect', x: args.originX, y: args.originY, width: args.image.width, height: args.image.height };
  const area = m.detail?.area as { x: number; y: number; width: number; height: number } | undefined;
  if (m.detail && area) m.detail.area = { ...area, x: area.x + args.originX, y: area.y + args.originY };
  const log = centredLogPower(sp);
  const factor = Math.max(1, Math.ceil(Math.max(sp.width, sp.height) / Math.max(64, args.displayPx)));
  const small = reduce(log, sp.width, sp.height, factor, 'max');
  const picture = { width: small.width, height: small.height, logPower: small.data };
  const radial = radialProfile(sp);
  const nyquist = Math.floor(Math.max(sp.width, sp.height) / 2);
  const rings = findRings(radial, { alpha: s.alpha });
  return {
    measurement: m,
    spots: a.spots,
    width: sp.width,
    height: sp.height,
    picture,
    binsPerPicturePx: factor,
    radialFrequencyPerPx: radial.frequencyPerPx.slice(0, nyquist + 1),
    radialPower: radial.meanPower.slice(0, nyquist + 1),
    rings,
    threshold: (m.detail?.threshold as number) ?? NaN,
    searchedBins: (m.detail?.searchedBins as number) ?? 0,
  };
}

/** The spot nearest a clicked frequency, refined and budgeted like the automatic ones. */
export async function addSpotNear(args: SpotNearArgs): Promise<{ spot: Spot | null }> {
  checkImage(args.image);
  const { powerSpectrum } = await import('../src/measure/spectrum');
  const { refineData } = await import('../src/measure/refine');
  const { spotNear } = await import('../src/measure/spot-near');
  const { complexSpectrum } = await import('../src/measure/spot-field');
  const { budgetSpot } = await import('../src/measure/spot-budget');
  const s = args.settings;
  const sp = await powerSpectrum(args.image, null, { window: s.window, tukeyAlpha: s.tukeyAlpha });
  const spot = spotNear(sp, args.fx, args.fy, { radiusBins: args.radiusBins ?? 3 });
  if (!spot) return { spot: null };
  const b = await budgetSpot(args.image, refineData(args.image, sp.area), await complexSpectrum(args.image, sp.area), spot);
  return { spot: b.spot };
}

/** The region and its Fourier-filtered version (chosen spots and Friedel mates), as pictures. */
export async function filterSpots(args: FilterArgs): Promise<FilterResult> {
  checkImage(args.image);
  const { fourierFilter } = await import('../src/measure/fourier-filter');
  const out = await fourierFilter(args.image, null, args.spots);
  const factor = Math.max(1, Math.ceil(Math.max(out.width, out.height) / Math.max(64, args.displayPx)));
  const a = reduce(args.image.data, args.image.width, args.image.height, factor, 'mean');
  const b = reduce(out.data, out.width, out.height, factor, 'mean');
  return {
    original: toPicture(a.data, a.width, a.height, 0.005, 0.995),
    filtered: toPicture(b.data, b.width, b.height, 0.005, 0.995),
  };
}
