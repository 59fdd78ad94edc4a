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
import type { FileResult } from '../batch/run';

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

/** Where one file of a batch stands. */
export type BatchFileStatus = 'queued' | 'ok' | 'failed';

/** One file of a batch (store `batchFiles`). */
export interface BatchFileRecord {
  /** `${batchId}/${index}`, index zero-padded so keys sort in queue order. */
  id: string;
  batchId: string;
  /** Position in the queue, from 0. */
  index: number;
  /** File name (relative to the chosen folder). */
  name: string;
  /** Size of the original file in bytes. */
  byteSize: number;
  /** SHA-256 of the original file, lower-case hex. */
  sha256Hex: string;
  /** The original file, byte for byte. */
  file: Blob;
  status: BatchFileStatus;
  /** The result record with its measurements, once finished. */
  result: FileResult | null;
  /** The annotated figure (PNG), when the batch draws figures and the file succeeded. */
  figurePng: Uint8Array | null;
  /** ISO 8601 time it finished, or null. */
  finishedIso: string | null;
}

/** Where an entry came from. */
export type DiagnosticKind = 'error' | 'unhandledrejection' | 'worker' | 'status';

/** One logged problem. */
export interface DiagnosticEntry {
  /** Unique id (the time, then random characters). */
  id: string;
  /** ISO 8601 time it happened. */
  timeIso: string;
  /** Where it came from: window error, unhandled rejection, a Web Worker, or an error message shown. */
  kind: DiagnosticKind;
  /** The error message (at most MAX_MESSAGE_CHARS characters). */
  message: string;
  /** What the app was doing (panel, file, action), '' when unknown. */
  context: string;
  /** Stack trace when there was one (at most MAX_STACK_CHARS characters), else null. */
  stack: string | null;
}

/** What the user has set up on an image: the calibration and each panel's state (its own plain JSON). */
export interface WorkState {
  calibration: Calibration | null;
  /** By panel id (`periods`, `sheets`...): whatever the panel needs to show its results again. */
  panels: Record<string, unknown>;
}

/** One step of the history. */
export interface HistoryStep {
  /** What the step did, in the user's words ("spot #3 added", "calibration from scale bar"). */
  label: string;
  /** ISO 8601 time of the step. */
  timeIso: string;
  /** The work state after the step. */
  state: WorkState;
}

/** The history of one image. */
export interface ImageHistory {
  /** The stored image it belongs to (the key of the store). */
  imageId: string;
  /** Oldest first; steps[0] is the state when the image was first opened. */
  steps: HistoryStep[];
  /** The step shown now. */
  index: number;
}
