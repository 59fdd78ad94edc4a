/**
 * Argument and result types of the measuring panel's worker calls (profilePeriods,
 * regionSpectrum, addSpotNear, filterSpots). Every image sent is a crop (or copy) of the region,
 * never the viewer's own image, because transferring a buffer detaches it on the sending side.
 */
export type { ProfileEstimator };
import type { GreyImage } from '../src/image/grey-image';
import type { Measurement } from '../src/measure/measurement';
import type { ProfilePeriod, RealSpacePeriod } from '../src/measure/period-profile';
import type { ProfileEstimator } from '../src/measure/profile-measurement';
import type { Ring, Spot } from '../src/measure/spectrum';
import type { WindowKind } from '../src/measure/window';

/** Arguments of profilePeriods: a crop holding the whole band and the line in crop coordinates. */
export interface ProfileArgs {
  /** Crop of the image around the line (calibration carried over). */
  image: GreyImage;
  /** Where the crop's top-left pixel lies in the full image (the record's line is in full-image pixels). */
  originX: number;
  originY: number;
  /** Line start and end in crop pixel coordinates. */
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  /** Averaging width across the line, px. */
  widthPx: number;
  /** Spectral estimator: 'hann' (Grandke) or an interpolator on the unwindowed profile. */
  estimator: ProfileEstimator;
}

/** Result of profilePeriods: the profile for the plot, both estimates and the record. */
export interface ProfileResult {
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
  /** The record (line in full-image pixels): one periodicity per estimate, spectral first, with their budgets' parts. */
  measurement: Measurement;
  /** Why an estimator gave nothing, and other notes for the user. */
  notes: string[];
}

/** Settings of the region spectrum. */
export interface SpectrumSettings {
  /** Data window before the transform. */
  window: WindowKind;
  /** Tapered fraction of the Tukey window. */
  tukeyAlpha: number;
  /** Family-wise false-alarm probability of the spot search. */
  alpha: number;
}

/** Arguments of regionSpectrum: the region's pixels as their own image. */
export interface SpectrumArgs {
  /** The region (a copy of its pixels, calibration carried over). */
  image: GreyImage;
  /** Where the region's top-left pixel lies in the full image (recorded in the measurement). */
  originX: number;
  originY: number;
  settings: SpectrumSettings;
  /** Longest side of the display image of the spectrum, px (max-pooled down to it). */
  displayPx: number;
}

/** An 8-bit RGBA picture for a canvas. */
export interface Picture {
  width: number;
  height: number;
  rgba: Uint8ClampedArray;
}

/** Result of regionSpectrum. */
export interface SpectrumResult {
  /** The measurement (region and area in full-image coordinates). */
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

/** Arguments of addSpotNear: the same region and settings, and the clicked frequency. */
export interface SpotNearArgs {
  image: GreyImage;
  settings: SpectrumSettings;
  /** Clicked frequency, cycles/px (fx along x, fy along the row index). */
  fx: number;
  fy: number;
  /** Search radius around the click, in bins (default 3). */
  radiusBins?: number;
}

/** Arguments of filterSpots. */
export interface FilterArgs {
  image: GreyImage;
  /** Frequency vectors kept (their Friedel mates are added). */
  spots: { fx: number; fy: number }[];
  /** Longest side of the returned pictures, px. */
  displayPx: number;
}

/** Result of filterSpots: the region as it is and Fourier-filtered, for display. */
export interface FilterResult {
  original: Picture;
  filtered: Picture;
}
