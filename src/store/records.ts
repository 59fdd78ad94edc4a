/**
 * The record types of the local library (IndexedDB database `stratameter`).
 *
 * Every record is plain structured-cloneable data, so the same types travel between the page,
 * Web Workers and the JSON export.
 */
import type { Calibration, SampleKind } from '../image/grey-image';
import type { Measurement } from '../measure/measurement';
import type { CalibrationProfile } from '../calibration/profiles';
import type { DiffractionPeak, DiffractionSet } from '../diffraction/stored-set';

export type { CalibrationProfile, DiffractionPeak, DiffractionSet };

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
