/**
 * The calls the compute worker answers: name → argument and result types. Adding a call is one
 * line here and one entry in the handler table of compute-worker.ts.
 */
import type { GreyImage } from '../src/image/grey-image';
import type { Histogram } from './pyramid';
import type { FilterArgs, FilterResult, ProfileArgs, ProfileResult, SpectrumArgs, SpectrumResult, SpotNearArgs } from './measure-types';
import type { Spot } from '../src/measure/spectrum';
import type { Pattern } from '../src/diffraction/pattern';
import type { PatternAnalysis } from '../src/diffraction/analyse';
import type { AutoSheetsResult } from '../src/sheets/detect';

export interface ComputeCalls {
  /** Decodes a file's bytes into a GreyImage. */
  decode: { args: { bytes: Uint8Array; fileName: string }; result: GreyImage };
  /** Box-mean reduction by a whole factor (src/image/downsample). */
  downsample: { args: { image: GreyImage; factor: number }; result: GreyImage };
  /** Box-averaged pyramid levels below full resolution, and a histogram for the display. */
  prepareView: { args: { image: GreyImage; smallestSidePx?: number }; result: { levels: GreyImage[]; histogram: Histogram } };
  /** Loads opencv.js in the worker ahead of the first measurement; resolves to its version. */
  warmUp: { args: Record<string, never>; result: { opencvVersion: string } };
  /** Decodes and prepares in one round trip (what opening a file needs). */
  openImage: {
    args: { bytes: Uint8Array; fileName: string };
    result: { image: GreyImage; levels: GreyImage[]; histogram: Histogram };
  };
  /** Width-averaged line profile of a crop and its period by both estimators (measuring panel). */
  profilePeriods: { args: ProfileArgs; result: ProfileResult };
  /** Power spectrum of a region copy: spots, radial average, rings and a display picture (measuring panel). */
  regionSpectrum: { args: SpectrumArgs; result: SpectrumResult };
  /** The spot nearest a clicked frequency of the region's spectrum, refined (measuring panel). */
  addSpotNear: { args: SpotNearArgs; result: { spot: Spot | null } };
  /** The region Fourier-filtered to chosen spots and their Friedel mates, as pictures (measuring panel). */
  filterSpots: { args: FilterArgs; result: FilterResult };
  /** Reads a diffraction pattern's text and fits its peaks (seconds on a few thousand points). */
  analysePattern: { args: { text: string; wavelength?: string; fileName?: string }; result: { pattern: Pattern; analysis: PatternAnalysis } };
  /** Automatic sheet detection over an image (a copy is sent), skipping a scale-bar strip or panel. */
  autoSheets: { args: { image: GreyImage; polarity: 'dark' | 'bright' }; result: { sheets: AutoSheetsResult; excludedBox: [number, number, number, number] | null } };
}

export type CallName = keyof ComputeCalls;
export type CallArgs<K extends CallName> = ComputeCalls[K]['args'];
export type CallResult<K extends CallName> = ComputeCalls[K]['result'];

/** Page → worker. */
export interface ComputeRequest {
  id: number;
  name: CallName;
  args: unknown;
}

/** Worker → page. */
export type ComputeResponse =
  | { id: number; ok: true; result: unknown }
  | { id: number; ok: false; error: { name: string; message: string } };

/** Every ArrayBuffer inside a value (typed arrays included), once each, for a transfer list. */
export function transferablesOf(value: unknown, found = new Set<ArrayBuffer>(), seen = new Set<unknown>()): ArrayBuffer[] {
  if (value && typeof value === 'object' && !seen.has(value)) {
    seen.add(value);
    if (value instanceof ArrayBuffer) found.add(value);
    else if (ArrayBuffer.isView(value)) {
      if (value.buffer instanceof ArrayBuffer) found.add(value.buffer);
    } else if (!(typeof Blob !== 'undefined' && value instanceof Blob)) {
      for (const v of Object.values(value)) transferablesOf(v, found, seen);
    }
  }
  return [...found];
}
