/**
 * The batch runner's core: one file in, one result record out.
 *
 * `processOne` is pure apart from the functions handed to it in `deps` (decoding, scale-bar
 * reading, the measurement tools), so the same code runs in a Node worker thread of the command
 * line and in a module Web Worker of the app. Listing files, threads, hashing and writing files
 * belong to the caller.
 */
import type { Calibration, GreyImage } from '../image/grey-image';
import { makeCalibration } from '../calibration/calibration';
import { checkCalibration, expressPeriod, type Measurement, type Periodicity, type Region } from '../measure/measurement';
import { RecordVersionError, upgradeMeasurement, upgradeSummaryPeriod } from '../measure/record-version';
import type { Acceptance, AnalysisArea, CalibrationRoute, Recipe } from './recipe';
import { toolOfRecipeStep } from '../measure/tools';

/** Sheets found by the automatic sheet tool, with the thickness of each sheet. */
export interface SheetsResult {
  /** The measurement record of the tool. */
  measurement: Measurement;
  /** Thickness of every detected sheet in nm (calibrated images only). */
  thicknessNm: number[];
}

/**
 * The environment- and tool-specific functions the runner calls. The command line and the app
 * pass the project's own implementations; tests pass small fakes.
 */
export interface BatchDeps {
  /**
   * Loads ahead of the first file what the recipe's steps need (opencv.js for the spectrum and
   * rings), so that a worker is ready only when it can measure and a loading failure shows once.
   */
  prepare?(recipe: Recipe): Promise<void>;
  /** Decodes file bytes to an image; throws on a corrupt or unsupported file. */
  decodeImage(bytes: Uint8Array, fileName: string): GreyImage;
  /** Height in px of the information strip along the bottom edge (0 when there is none). */
  findInfoStripPx?(image: GreyImage): number;
  /** Reads the scale bar burnt into the image; null when none is found. */
  findScaleBar?(image: GreyImage): Promise<Calibration | null>;
  /** Strongest periodicities of the 2D power spectrum of a region. */
  spectrum?(image: GreyImage, region: Region, options: { topK: number }): Promise<Measurement>;
  /** Rings of the radial average of the power spectrum of a region. */
  rings?(image: GreyImage, region: Region): Promise<Measurement>;
  /** Automatic sheet detection in a region. */
  sheets?(image: GreyImage, region: Region): Promise<SheetsResult>;
  /** Domain map of a region. */
  domains?(image: GreyImage, region: Region): Promise<Measurement>;
}

/** One accepted period in a file's summary: the periodicity (px, with its parts) and the tool that found it; nm through expressPeriod with the file's calibration. */
export interface TopPeriod extends Periodicity {
  /** The tool that found it. */
  tool: Measurement['tool'];
}

/** What a file's results come to. */
export interface FileSummary {
  /**
   * Accepted periods of all regions from the recipe's first period step (spectrum, rings or
   * domains: their strengths are on different scales), strongest first; at most the spectrum
   * step's topK, else 3.
   */
  topPeriods: TopPeriod[];
  /** Number of sheets found, or null when the sheets step did not run. */
  sheetCount: number | null;
  /** Mean sheet thickness in nm, or null (no sheets step, or no sheet found). */
  meanThicknessNm: number | null;
  /** Sample standard deviation of the sheet thickness in nm (0 for one sheet), or null. */
  sdThicknessNm: number | null;
  /** Every sheet thickness in nm, for pooling over the batch. */
  sheetThicknessNm: number[];
}

/** The result record of one file. */
export interface FileResult {
  /** File name as given (relative to the batch folder). */
  file: string;
  status: 'ok' | 'failed';
  /** Why the file failed (only when status is 'failed'). */
  reason?: string;
  /** Image size, or null when the file could not be decoded. */
  image: { widthPx: number; heightPx: number; bitDepth: number } | null;
  /** The pixel size used, or null when none could be had. */
  calibration: Calibration | null;
  /** Every measurement, with accepted periodicities only (rejected ones in detail.rejected). */
  measurements: Measurement[];
  summary: FileSummary;
  /** Notes for the user (information strip, clipped crop, rejected periods...). */
  notes: string[];
  /** SHA-256 of the file's bytes (lower-case hex), when the caller computed it: which file exactly. */
  sha256?: string;
  /**
   * The annotated figure's file name in the figures folder, when one was written: unique within
   * the batch, so this is the map from input file to figure (see figureNames).
   */
  figureFile?: string;
}

/**
 * A file result read back from a resume record, the library or an export, in the current record
 * layout: its measurements upgraded (upgradeMeasurement) and its summary periods returned to pixels.
 * @param raw the parsed result
 * @param where how to name it in messages
 * @returns the result (a new object)
 * @throws RecordVersionError naming the field at fault (a newer record version included)
 */
export function upgradeFileResult(raw: unknown, where = 'result'): FileResult {
  if (!raw || typeof raw !== 'object') throw new RecordVersionError(`${where} is not a file result`);
  const r = raw as Record<string, unknown>;
  if (r.status !== 'ok' && r.status !== 'failed') throw new RecordVersionError(`${where}.status must be 'ok' or 'failed', got ${String(r.status)}`);
  if (typeof r.file !== 'string') throw new RecordVersionError(`${where}.file must be a text`);
  let calibration: Calibration | null = null;
  if (r.calibration !== null && r.calibration !== undefined) {
    try {
      calibration = checkCalibration(r.calibration as Calibration, `${where}.calibration`);
    } catch (e) {
      throw new RecordVersionError((e as Error).message);
    }
  }
  const measurements = Array.isArray(r.measurements) ? r.measurements.map((m, i) => upgradeMeasurement(m, `${where}.measurements[${i}]`)) : [];
  const summary = { ...emptySummary(), ...((r.summary ?? {}) as Partial<FileSummary>) };
  const tops = Array.isArray(summary.topPeriods) ? (summary.topPeriods as unknown[]) : [];
  summary.topPeriods = tops.map((t, i) => upgradeSummaryPeriod((t ?? {}) as Record<string, unknown>, calibration, `${where}.summary.topPeriods[${i}]`));
  return { ...(r as unknown as FileResult), calibration, measurements, summary };
}

/** Options for `processOne`. */
export interface ProcessOptions {
  /** Also render the annotated figure (needs `renderFigure`). */
  figure?: boolean;
  /** Renders an annotated PNG of the image and its result; called only when `figure` is set. */
  renderFigure?(image: GreyImage, result: FileResult, regions: Region[]): Uint8Array;
}

/** What `processOne` hands back. */
export interface ProcessOutput {
  result: FileResult;
  /** The annotated figure as PNG bytes, when asked for and the file succeeded. */
  figurePng?: Uint8Array;
}

/** A failure of one file that the batch reports and steps over. */
class FileFailure extends Error {}

function emptySummary(): FileSummary {
  return { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] };
}

/**
 * The pixel size for an image by the recipe's route.
 *
 * @param image the decoded image (its own calibration is the metadata route's answer)
 * @param route the recipe's calibration route
 * @param deps for the scale-bar route
 * @returns the calibration
 * @throws FileFailure when the route needs a calibration that the file does not give
 */
async function calibrate(image: GreyImage, route: CalibrationRoute, deps: BatchDeps): Promise<Calibration> {
  switch (route.route) {
    case 'metadata':
      if (!image.calibration) throw new FileFailure('no pixel size in the file metadata (calibration route: metadata)');
      return image.calibration;
    case 'scale-bar': {
      if (!deps.findScaleBar) throw new FileFailure('scale-bar reading is not available in this build');
      const cal = await deps.findScaleBar(image);
      if (!cal) throw new FileFailure('no readable scale bar found (calibration route: scale-bar)');
      return cal;
    }
    case 'profile':
      return makeCalibration(route.nmPerPx, 'profile', `instrument profile ${route.profileId}`, [{ name: 'instrument profile', rel: route.relUncertainty, type: 'B' }]);
    case 'fixed':
      return makeCalibration(route.nmPerPx, 'manual', 'fixed pixel size from the batch recipe', [{ name: 'stated in the recipe', rel: route.relUncertainty, type: 'B' }]);
  }
}

/**
 * The regions of an image that a recipe's analysis area asks for.
 *
 * @param widthPx image width
 * @param heightPx image height
 * @param area the recipe's area
 * @param stripPx height of the information strip to leave out along the bottom
 * @param notes receives a note when a crop had to be clipped to the image
 * @returns rectangles inside [0, width) × [0, height − strip), row by row for tiles
 * @throws FileFailure when too little image is left
 * Notes: tiles split the width and height into integer ranges floor(i·W/n), so they cover the
 * area exactly once.
 */
export function analysisRegions(widthPx: number, heightPx: number, area: AnalysisArea, stripPx: number, notes: string[] = []): Region[] {
  if (!(Number.isInteger(stripPx) && stripPx >= 0)) throw new RangeError(`stripPx must be a non-negative integer, got ${stripPx}`);
  const w = widthPx;
  const h = heightPx - stripPx;
  if (h < 8 || w < 8) throw new FileFailure(`too little image to analyse: ${w} × ${h} px after the information strip of ${stripPx} px`);
  switch (area.kind) {
    case 'whole':
      return [{ kind: 'rect', x: 0, y: 0, width: w, height: h }];
    case 'centre': {
      let cw: number;
      let ch: number;
      if (area.sizePx !== undefined) {
        cw = Math.min(area.sizePx, w);
        ch = Math.min(area.sizePx, h);
        if (cw < area.sizePx || ch < area.sizePx) notes.push(`centred crop of ${area.sizePx} px clipped to ${cw} × ${ch} px`);
      } else {
        const f = area.fraction ?? 0.5;
        cw = Math.max(1, Math.round(w * f));
        ch = Math.max(1, Math.round(h * f));
      }
      return [{ kind: 'rect', x: Math.floor((w - cw) / 2), y: Math.floor((h - ch) / 2), width: cw, height: ch }];
    }
    case 'tiles': {
      if (w < area.columns * 8 || h < area.rows * 8) {
        throw new FileFailure(`image of ${w} × ${h} px is too small for ${area.rows} × ${area.columns} tiles`);
      }
      const regions: Region[] = [];
      for (let r = 0; r < area.rows; r++) {
        const y0 = Math.floor((r * h) / area.rows);
        const y1 = Math.floor(((r + 1) * h) / area.rows);
        for (let c = 0; c < area.columns; c++) {
          const x0 = Math.floor((c * w) / area.columns);
          const x1 = Math.floor(((c + 1) * w) / area.columns);
          regions.push({ kind: 'rect', x: x0, y: y0, width: x1 - x0, height: y1 - y0 });
        }
      }
      return regions;
    }
  }
}

/** Why a periodicity fails the acceptance thresholds, or null when it passes. */
export function rejectionReason(p: Periodicity, acceptance: Acceptance, calibration: Calibration | null): string | null {
  if (p.strength < acceptance.minStrength) return `strength ${p.strength} below ${acceptance.minStrength}`;
  const b = calibration ? expressPeriod(p, calibration, 1) : null;
  if (acceptance.periodRangeNm) {
    const [low, high] = acceptance.periodRangeNm;
    if (!b) return 'uncalibrated period, a period range in nm cannot be checked';
    if (b.value < low || b.value > high) return `period ${Number(b.value.toPrecision(6))} nm outside [${low}, ${high}] nm`;
  }
  if (acceptance.maxRelUncertainty !== null) {
    if (!b) return 'uncalibrated period, no relative uncertainty';
    const rel = b.combined / b.value;
    if (!(rel <= acceptance.maxRelUncertainty)) return `relative standard uncertainty ${Number(rel.toPrecision(3))} above ${acceptance.maxRelUncertainty}`;
  }
  return null;
}

/** The measurement with only its accepted periodicities; the rejected ones go to detail.rejected. */
function applyAcceptance(m: Measurement, acceptance: Acceptance): Measurement {
  const accepted: Periodicity[] = [];
  const rejected: { periodicity: Periodicity; reason: string }[] = [];
  for (const p of m.periodicities) {
    const reason = rejectionReason(p, acceptance, m.calibration);
    if (reason) rejected.push({ periodicity: p, reason });
    else accepted.push(p);
  }
  if (rejected.length === 0) return m;
  return {
    ...m,
    periodicities: accepted,
    detail: { ...(m.detail ?? {}), rejected },
    notes: [...m.notes, `${rejected.length} of ${m.periodicities.length} periodicities rejected by the recipe's acceptance thresholds`],
  };
}

function meanSd(values: number[]): { mean: number; sd: number } {
  let sum = 0;
  for (const v of values) sum += v;
  const mean = sum / values.length;
  let ss = 0;
  for (const v of values) ss += (v - mean) ** 2;
  return { mean, sd: values.length > 1 ? Math.sqrt(ss / (values.length - 1)) : 0 };
}

function failed(file: string, reason: string, image: FileResult['image'], calibration: Calibration | null, notes: string[]): FileResult {
  return { file, status: 'failed', reason, image, calibration, measurements: [], summary: emptySummary(), notes };
}

/** The recipe's steps for which `deps` has no tool (empty when the recipe can run). */
export function missingTools(recipe: Recipe, deps: BatchDeps): string[] {
  const missing: string[] = [];
  if (typeof deps?.decodeImage !== 'function') missing.push('decodeImage');
  for (const step of recipe.measurements) if (typeof deps?.[step.tool] !== 'function') missing.push(step.tool);
  return missing;
}

function checkRecipeDeps(recipe: Recipe, deps: BatchDeps): void {
  const missing = missingTools(recipe, deps);
  if (missing.length) throw new TypeError(`the recipe needs ${missing.join(', ')}, not given in deps (deps.${missing[0]})`);
}

/**
 * Runs a batch recipe on one file: decode, calibrate by the recipe's route, split into the
 * analysis regions (leaving out the information strip), measure, apply the acceptance thresholds
 * and summarise.
 *
 * @param fileBytes the file's bytes
 * @param fileName its name (used by the decoder to pick the format, and in the record)
 * @param recipe a validated recipe (`parseRecipe`)
 * @param deps the decoder and measurement tools (see BatchDeps)
 * @param options figure rendering
 * @returns the file's result record (status 'failed' with a reason for a corrupt or unsupported
 *   file, a missing calibration or a failing tool) and, when asked for, the figure
 * @throws TypeError only for programming errors: a recipe step without its tool in deps
 * Notes: a file never throws; the batch goes on with the next one. Sheet thickness is summarised
 * as mean and sample standard deviation (n − 1).
 */
export async function processOne(
  fileBytes: Uint8Array,
  fileName: string,
  recipe: Recipe,
  deps: BatchDeps,
  options: ProcessOptions = {},
): Promise<ProcessOutput> {
  if (!(fileBytes instanceof Uint8Array)) throw new TypeError(`fileBytes must be a Uint8Array, got ${Object.prototype.toString.call(fileBytes)}`);
  if (typeof fileName !== 'string' || !fileName) throw new TypeError(`fileName must be a non-empty string, got ${JSON.stringify(fileName)}`);
  checkRecipeDeps(recipe, deps);
  const notes: string[] = [];
  let image: GreyImage;
  try {
    image = deps.decodeImage(fileBytes, fileName);
  } catch (e) {
    return { result: failed(fileName, `cannot read the file: ${(e as Error).message}`, null, null, notes) };
  }
  const info = { widthPx: image.width, heightPx: image.height, bitDepth: image.bitDepth };
  for (const w of image.warnings) notes.push(w);
  let calibration: Calibration | null = null;
  try {
    try {
      calibration = await calibrate(image, recipe.calibration, deps);
    } catch (e) {
      if (e instanceof FileFailure) throw e;
      throw new FileFailure(`calibration (${recipe.calibration.route}) failed: ${(e as Error)?.message ?? String(e)}`);
    }
    const calibrated: GreyImage = { ...image, calibration };

    let stripPx = 0;
    if (recipe.area.infoStripPx === 'auto') {
      if (deps.findInfoStripPx) stripPx = deps.findInfoStripPx(calibrated);
      else notes.push('information strip detection is not available: the whole height was analysed');
    } else {
      stripPx = recipe.area.infoStripPx;
    }
    if (stripPx > 0) notes.push(`information strip of ${stripPx} px along the bottom left out`);
    const regions = analysisRegions(image.width, image.height, recipe.area, stripPx, notes);

    const measurements: Measurement[] = [];
    const sheetThicknessNm: number[] = [];
    let sheetCount: number | null = null;
    // every measurement is recorded under the batch's file name
    const own = (m: Measurement): Measurement => (m.fileName === fileName ? m : { ...m, fileName });
    for (const step of recipe.measurements) {
      for (const region of regions) {
        try {
          switch (step.tool) {
            case 'spectrum':
              measurements.push(applyAcceptance(own(await deps.spectrum!(calibrated, region, { topK: step.topK })), recipe.acceptance));
              break;
            case 'rings':
              measurements.push(applyAcceptance(own(await deps.rings!(calibrated, region)), recipe.acceptance));
              break;
            case 'domains':
              measurements.push(applyAcceptance(own(await deps.domains!(calibrated, region)), recipe.acceptance));
              break;
            case 'sheets': {
              const s = await deps.sheets!(calibrated, region);
              measurements.push(own(s.measurement));
              sheetCount = (sheetCount ?? 0) + s.thicknessNm.length;
              sheetThicknessNm.push(...s.thicknessNm);
              break;
            }
          }
        } catch (e) {
          if (e instanceof FileFailure) throw e;
          throw new FileFailure(`${step.tool} failed: ${(e as Error).message}`);
        }
      }
    }

    // periods of the first periodic step of the recipe (spectrum, rings or domains): their strength scales differ
    const periodStep = recipe.measurements.find((st) => st.tool !== 'sheets');
    const topK = periodStep?.tool === 'spectrum' ? periodStep.topK : 3;
    const periodTool = periodStep ? toolOfRecipeStep(periodStep.tool)?.kind ?? null : null;
    const topPeriods: TopPeriod[] = measurements
      .filter((m) => m.tool === periodTool)
      .flatMap((m) =>
        m.periodicities.map((p) => ({ ...p, tool: m.tool })),
      )
      .sort((a, b) => b.strength - a.strength)
      .slice(0, topK);
    const ms = sheetThicknessNm.length > 0 ? meanSd(sheetThicknessNm) : null;
    const result: FileResult = {
      file: fileName,
      status: 'ok',
      image: info,
      calibration,
      measurements,
      summary: { topPeriods, sheetCount, meanThicknessNm: ms?.mean ?? null, sdThicknessNm: ms?.sd ?? null, sheetThicknessNm },
      notes,
    };
    const out: ProcessOutput = { result };
    if (options.figure && options.renderFigure) {
      try {
        out.figurePng = options.renderFigure(calibrated, result, regions);
      } catch (e) {
        notes.push(`figure not drawn: ${(e as Error).message}`);
      }
    }
    return out;
  } catch (e) {
    const reason = e instanceof FileFailure ? e.message : `unexpected error: ${(e as Error)?.message ?? String(e)}`;
    return { result: failed(fileName, reason, info, calibration, notes) };
  }
}
