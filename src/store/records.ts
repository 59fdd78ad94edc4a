/**
 * The record types of the local library (IndexedDB database `stratameter`).
 *
 * Every record is plain structured-cloneable data, so the same types travel between the page,
 * Web Workers and the JSON export.
 */
import type { Calibration, CalibrationSource, SampleKind } from '../image/grey-image';
import type { Measurement } from '../measure/measurement';

export type { Measurement };

/** A small 8-bit grey preview of an image, contrast-stretched, row-major. */
export interface Thumbnail {
  /** Width in pixels. */
  width: number;
  /** Height in pixels. */
  height: number;
  /** Grey values 0–255, length width * height. */
  grey: Uint8Array;
}

/** One stored micrograph or pattern image: the original file plus what was read from it. */
export interface ImageRecord {
  /** Unique id. */
  id: string;
  /** The file name as the user knows it. */
  fileName: string;
  /** ISO 8601 time the image entered the library. */
  addedIso: string;
  /** The original file, byte for byte. */
  file: Blob;
  /** MIME type of the original file ('' when unknown). */
  mimeType: string;
  /** Size of the original file in bytes. */
  byteSize: number;
  /** SHA-256 of the original file, lower-case hex. */
  sha256Hex: string;
  /** Width in pixels. */
  width: number;
  /** Height in pixels. */
  height: number;
  /** Bits per sample in the original file. */
  bitDepth: number;
  /** Sample type in the original file. */
  sampleKind: SampleKind;
  /** Pixel size in use for this image, or null when uncalibrated. */
  calibration: Calibration | null;
  /** A preview at most THUMBNAIL_SIDE_PX on its longer side. */
  thumbnail: Thumbnail;
}

/**
 * An instrument calibration profile: the pixel size measured once for one microscope setting,
 * applied later to images taken at the same setting.
 */
export interface CalibrationProfile {
  /** Unique id. */
  id: string;
  /** Name the user gave the profile, e.g. "TEM 1, 300 kV, 40 kx, bin 2". */
  name: string;
  /** Instrument as the user names it. */
  instrument: string;
  /** Nominal magnification (as indicated by the microscope). */
  magnification: number;
  /** Camera or detector as the user names it. */
  camera: string;
  /** Camera binning factor (1, 2, 4 ...). */
  binning: number;
  /** Pixel size in nm per pixel at this setting. */
  nmPerPx: number;
  /** Relative standard uncertainty of nmPerPx (k = 1). */
  relUncertainty: number;
  /** How the pixel size was found. */
  method: CalibrationSource;
  /** ISO 8601 time the profile was made. */
  createdIso: string;
  /** Free text: standard used, lattice spacing, operator's remarks. */
  notes?: string;
}

/** One diffraction peak as the user or a peak search gives it. */
export interface DiffractionPeak {
  /** Peak position, degrees 2θ. */
  twoThetaDeg: number;
  /** Peak height or area in the pattern's own units (may be 0 when unknown). */
  intensity: number;
}

/** A stored XRD/SAXS pattern or peak list, with what was worked out from it. */
export interface DiffractionSet {
  /** Unique id. */
  id: string;
  /** Name the user gave the set. */
  name: string;
  /** ISO 8601 time the set was stored. */
  createdIso: string;
  /** The pattern as text (two columns, 2θ and counts), or null when only peaks are kept. */
  patternText: string | null;
  /** Peaks, or null when only the pattern text is kept. */
  peaks: DiffractionPeak[] | null;
  /** Radiation wavelength in nm. */
  wavelengthNm: number;
  /** Results (d-spacings, assignments, reconciliation with micrographs), plain JSON. */
  results: Record<string, unknown> | null;
}

/** A saved set of measurement settings, applied to many images. */
export interface RecipeRecord {
  /** Unique id. */
  id: string;
  /** Name the user gave the recipe. */
  name: string;
  /** Version of the recipe's JSON layout. */
  version: number;
  /** The recipe itself as JSON text. */
  json: string;
}

/** A batch run over many images (its layout is defined by the batch code). */
export interface BatchRecord {
  /** Unique id. */
  id: string;
  /** ISO 8601 time the batch was started. */
  createdIso: string;
  [field: string]: unknown;
}
