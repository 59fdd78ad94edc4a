/**
 * The calls the compute worker answers: name → argument and result types. Adding a call is one
 * line here and one entry in the handler table of compute-worker.ts.
 *
 * The image session: `openImage` decodes a file once and keeps the image in the worker under a
 * session id; every later call on it sends that id and a region or a line, never pixels (the
 * Periods, Calibration, Sheets and SAED panels, the export menu's `imageReport`; checked by
 * tests/architecture/compute-protocol.test.ts).
 */
import type { CameraConstant } from '../src/diffraction/electron/camera-constant';
import type { CameraSetting, PatternMeasurement } from '../src/diffraction/electron/measure';
import type { RingAnalysis } from '../src/diffraction/electron/rings';
import type { Calibration, GreyImage } from '../src/image/grey-image';
import type { Thumbnail } from '../src/store/records';
import type { DisplayLimits, GreyHistogram } from '../src/image/display';
import type { Measurement, Region } from '../src/measure/measurement';
import type { ProfileEstimator, ProfileLine } from '../src/measure/profile-measurement';
import type { FilterView, ProfileView, SpectrumSettings, SpectrumView } from '../src/measure/session';
import type { PlotData } from '../src/figure/plot';
import type { RectPx, Spot } from '../src/measure/spectrum';
import type { Pattern } from '../src/diffraction/pattern';
import type { PatternAnalysis } from '../src/diffraction/analyse';
import type { LpGeometry } from '../src/diffraction/lorentz-polarisation';
import type { ZoneAxisResult, ZoneSpot } from '../src/diffraction/zone-axis';
import type { AutoSheetsResult } from '../src/sheets/detect';
import type { LineSheetsResult } from '../src/sheets/line';

export type { FilterView, ProfileEstimator, ProfileView, SpectrumSettings, SpectrumView };

/** What a region call names: the session and the region of its image. */
interface InSession {
  /** The session's id (from openImage). */
  sessionId: string;
}

export interface ComputeCalls {
  /** Loads opencv.js in the worker ahead of the first measurement; resolves to its version. */
  warmUp: { args: Record<string, never>; result: { opencvVersion: string } };
  /**
   * Opens an image session: decodes the file, keeps the image in the worker, and returns the
   * session's id with a copy of the image, the view pyramid, the histogram and the display limits
   * at the given percentiles (default 0.5 and 99.5 %) for the viewer, and the library's thumbnail.
   */
  openImage: {
    /**
     * The file: a Blob or File (structured-cloned, not copied; the worker reads a TIFF from it
     * strip by strip with decodeImageSource), or its bytes where the page only has bytes.
     */
    args: { file: Blob | Uint8Array; fileName: string; lowPercent?: number; highPercent?: number };
    result: {
      sessionId: string; image: GreyImage; levels: GreyImage[]; histogram: GreyHistogram; limits: DisplayLimits; thumbnail: Thumbnail;
      /** The file's SHA-256 (lower-case hex), hashed here so the page never reads or hashes a large file. */
      sha256Hex: string;
    };
  };
  /**
   * A pyramid level of the session's image (0 = full resolution) stretched between black and
   * white to display-ready 8-bit grey, as an ImageBitmap the viewer draws with one drawImage
   * (so that no redraw of the page stretches pixels); refused above VIEW_PICTURE_MAX_PX pixels.
   */
  viewPicture: { args: InSession & ViewPictureKey; result: ViewPictureKey & { bitmap: ImageBitmap } };
  /** Ends a session and frees its image and cached spectra. */
  closeImage: { args: InSession; result: { closed: boolean } };
  /** Replaces a session's calibration; nothing is measured again (records keep pixels). */
  recalibrate: { args: InSession & { calibration: Calibration | null }; result: { sessionId: string } };
  /** Runs a registered measurement tool (src/measure/tools.ts) on the session's image. */
  runTool: { args: InSession & { tool: string; target: Region | null; settings?: Record<string, unknown> }; result: Measurement };
  /** A line profile of the session's image and its period by both estimators (Periods panel). */
  profile: { args: InSession & { line: ProfileLine; estimator: ProfileEstimator }; result: ProfileView };
  /**
   * A region's power spectrum: spots, radial average, rings and a display picture; cached per region
   * (Periods panel; Calibration panel with `prepareSpots: false`, as no spot of it will be clicked:
   * by default the worker prepares after the reply what a click on a spot needs).
   */
  spectrum: { args: InSession & { rect: RectPx; settings: SpectrumSettings; displayPx: number; prepareSpots?: boolean }; result: SpectrumView & { pictureId: number } };
  /**
   * The display picture of the session's last spectrum (its `pictureId`) at a zoom, stretched in
   * the worker (src/figure/spectrum-picture.ts) as an ImageBitmap the panel draws in one step.
   */
  spectrumPicture: { args: InSession & { pictureId: number; zoom: number }; result: { pictureId: number; zoom: number; bitmap: ImageBitmap } };
  /** The spot nearest a clicked frequency of a region's cached spectrum: no transform (statistical uncertainty only). */
  spotNear: { args: InSession & { rect: RectPx; settings: SpectrumSettings; fx: number; fy: number; radiusBins?: number }; result: { spot: Spot | null } };
  /** A spot refined where its fringes are, with its full budget (after spotNear). */
  spotBudget: { args: InSession & { rect: RectPx; settings: SpectrumSettings; spot: Spot }; result: { spot: Spot } };
  /** A region and its Fourier-filtered version (chosen spots and Friedel mates), as pictures. */
  filter: { args: InSession & { rect: RectPx; spots: { fx: number; fy: number }[]; displayPx: number }; result: FilterView };
  /** What a session has done: region transforms run and requests answered from its cache. */
  sessionStats: { args: InSession; result: { regionTransforms: number; cacheHits: number } };
  /** The report of the session's image as one self-contained HTML file, or its figure (image, overlays, scale bar) as SVG (src/figure/report.ts). */
  imageReport: { args: InSession & { form: 'html' | 'svg'; fileName: string; records: Measurement[]; plots: PlotData[]; k: number; software: string }; result: { text: string } };
  /** Reads a diffraction pattern's text and fits its peaks (seconds on a few thousand points). */
  /**
   * A powder pattern's peaks, budgets and indexing; with an internal standard (a built-in one by id,
   * or a cubic cell a ± u, standard uncertainty, nm) its cell is held and the zero shift fitted from its lines;
   * `lp` is the Lorentz–polarisation geometry fitted across each line (default: random powder, Bragg–Brentano, no monochromator).
   */
  analysePattern: {
    args: { text: string; wavelength?: string; columns?: string; fileName?: string; internalStandard?: { id: string } | { aNm: number; uANm: number; centring: 'F' | 'I' | 'P' }; lp?: LpGeometry };
    result: { pattern: Pattern; analysis: PatternAnalysis };
  };
  /** Every stack in the session's image, skipping a scale-bar strip or panel; the period when known (px). */
  sheetsFind: { args: InSession & { polarity: 'dark' | 'bright'; periodPx?: number }; result: { result: AutoSheetsResult; excludedBox: [number, number, number, number] | null } };
  /** Sheets along a drawn line in the session's image; the period when known, or the image's candidates. */
  sheetsLine: { args: InSession & { line: { x0: number; y0: number; x1: number; y1: number; widthPx: number }; polarity: 'dark' | 'bright'; periodPx?: number; periods?: number[] }; result: LineSheetsResult };
  /** Electron diffraction (issue 14): the camera constant from the session's image, a ring standard's pattern (SAED panel). */
  cameraConstant: {
    args: InSession & { standard: { id: string } | { aNm: number; uANm: number; centring: 'F' | 'I' | 'P' }; voltageKv?: number; detectorPixelUm?: number };
    result: ElectronCameraResult;
  };
  /** Electron diffraction: ring and spot d-spacings of the session's image, a sample's pattern, with a camera setting (SAED panel). */
  electronPattern: { args: InSession & { camera: CameraSetting; what: 'rings' | 'spots' | 'both' }; result: PatternMeasurement };
  /** Spot indexing: each spot's hkl and the zone axis with a structure file's text or a built-in phase (milliseconds). */
  indexSpots: { args: { spots: ZoneSpot[]; cifText?: string; cifName?: string; builtIn?: string }; result: ZoneAxisResult & { source: string } };
}

/** Largest level (pixels) the worker stretches into a view picture (64 MB of RGBA); larger levels are drawn by the viewer itself. */
export const VIEW_PICTURE_MAX_PX = 4096 * 4096;

/** What a view picture shows: a pyramid level and the display stretch applied to it. */
export interface ViewPictureKey {
  /** Pyramid level, 0 = full resolution. */
  level: number;
  /** Grey value shown black. */
  black: number;
  /** Grey value shown white (above black). */
  white: number;
  /** Black and white swapped. */
  invert: boolean;
}

/** A camera constant with the ring analysis it rests on (geometry, centre uncertainty, notes). */
export type ElectronCameraResult = CameraConstant & { analysis: Omit<RingAnalysis, 'rings'> };

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

/** Every ArrayBuffer (typed arrays included) and ImageBitmap inside a value, once each, for a transfer list. */
export function transferablesOf(value: unknown, found = new Set<Transferable>(), seen = new Set<unknown>()): Transferable[] {
  if (value && typeof value === 'object' && !seen.has(value)) {
    seen.add(value);
    if (value instanceof ArrayBuffer) found.add(value);
    else if (ArrayBuffer.isView(value)) {
      if (value.buffer instanceof ArrayBuffer) found.add(value.buffer);
    } else if (typeof ImageBitmap !== 'undefined' && value instanceof ImageBitmap) {
      found.add(value); // transferred, not copied
    } else if (!(typeof Blob !== 'undefined' && value instanceof Blob)) {
      for (const v of Object.values(value)) transferablesOf(v, found, seen);
    }
  }
  return [...found];
}
