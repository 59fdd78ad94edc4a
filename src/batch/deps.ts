/**
 * The project's own decoder, scale-bar reader and measurement tools, wired into the shape the
 * batch runner calls (`BatchDeps`). Pure core modules only, so the same wiring serves a Node
 * worker thread and a module Web Worker.
 */
import { LABEL_CHARACTERS } from '../calibration/label';
import { readScaleBar } from '../calibration/label-read';
import type { TextReader } from '../calibration/ocr';
import { findScaleBar, type ScaleBar } from '../calibration/scale-bar';
import { decodeImage } from '../image/decode';
import type { GreyImage, PixelArray } from '../image/grey-image';
import { loadFft } from '../image/fft';
import { createWorkspace, type Workspace } from '../image/workspace';
import { checkSpectrumRegion } from '../image/size-limits';
import type { Measurement, Region } from '../measure/measurement';
import { toolOfRecipeStep } from '../measure/tools';
import { expressSheet, sheetsOfMeasurement } from '../sheets/record';
import type { BatchDeps } from './run';

/** The registry's tool for a recipe step (every step of a valid recipe has one). */
function stepTool(step: string) {
  const t = toolOfRecipeStep(step);
  if (!t) throw new RangeError(`no measurement tool runs the recipe step '${step}'`);
  return t;
}

/** Refuses a region the spectrum cannot hold, with recipe advice (before opencv.js runs out of its heap). */
function guardSpectrum(image: GreyImage, region: Region): void {
  const rect = region.kind === 'rect' ? region : { x: 0, y: 0, width: image.width, height: image.height };
  checkSpectrumRegion(rect.width, rect.height, rect, 'recipe');
}

/**
 * The batch runner's tools.
 * @returns decoder, information-strip and scale-bar reading, and every measurement step
 * @param workspace buffers reused from file to file (default: a new workspace of these tools)
 * @param budgets the decoder's pixel and decompressed-bytes budgets (default the decoder's own),
 *   set by the batch from its per-file memory limit
 * Notes: the information strip is the edge panel holding the scale bar (findScaleBar's
 * stripBox) when it lies along the bottom; the scale-bar route reads the bar's label offline
 * (one OCR engine per worker, started on first use). The decoded image and the spectra reuse the
 * workspace's buffers, so an image decoded by these tools is valid until the next decode: the
 * tools serve one file at a time (as processOne uses them).
 */
export async function createBatchDeps(workspace: Workspace = createWorkspace(), budgets: { maxPixels?: number; maxDecompressedBytes?: number } = {}): Promise<BatchDeps> {
  const bars = new WeakMap<PixelArray, ScaleBar | null>();
  const barOf = (image: GreyImage): ScaleBar | null => {
    if (!bars.has(image.data)) bars.set(image.data, findScaleBar(image));
    return bars.get(image.data) ?? null;
  };
  let reader: Promise<TextReader> | null = null;
  return {
    async prepare(recipe) {
      if (recipe.measurements.some((m) => m.tool === 'spectrum' || m.tool === 'rings')) await loadFft();
    },
    decodeImage: (bytes, fileName) => decodeImage(bytes, fileName, { workspace, maxPixels: budgets.maxPixels, maxDecompressedBytes: budgets.maxDecompressedBytes }),
    findInfoStripPx(image) {
      const strip = barOf(image)?.stripBox;
      if (!strip) return 0;
      const [, y, , h] = strip;
      return y > 0 && y + h >= image.height ? image.height - y : 0;
    },
    async findScaleBar(image) {
      if (!barOf(image)?.labelBox) return null;
      reader ??= import('../calibration/ocr').then((m) => m.createTextReader({ whitelist: LABEL_CHARACTERS }));
      return (await readScaleBar(image, await reader)).calibration;
    },
    // every step runs its tool from the measurement-tool registry (src/measure/tools.ts)
    spectrum: (image, region, options) => {
      guardSpectrum(image, region);
      return stepTool('spectrum').run(image, region, { maxSpots: options.topK }, { workspace });
    },
    rings: (image, region) => {
      guardSpectrum(image, region);
      return stepTool('rings').run(image, region, {}, { workspace });
    },
    sheets: async (image, region) => {
      const measurement: Measurement = await stepTool('sheets').run(image, region);
      // thickness in nm expressed late from the record's px and calibration (none uncalibrated)
      const cal = measurement.calibration;
      return { measurement, thicknessNm: cal ? sheetsOfMeasurement(measurement).map((s) => expressSheet(s, cal).thickness.value) : [] };
    },
    domains: (image, region) => stepTool('domains').run(image, region),
  };
}
