/**
 * The project's own decoder, scale-bar reader and measurement tools, wired into the shape the
 * batch runner calls (`BatchDeps`). Pure core modules only, so the same wiring serves a Node
 * worker thread and a module Web Worker.
 */
import { LABEL_CHARACTERS, readScaleBar } from '../calibration/label';
import type { TextReader } from '../calibration/ocr';
import { findScaleBar, type ScaleBar } from '../calibration/scale-bar';
import { decodeImage } from '../image/decode';
import { makeGreyImage, type GreyImage } from '../image/grey-image';
import { loadCv } from '../image/cv';
import { createWorkspace, type Workspace } from '../image/workspace';
import { checkSpectrumRegion } from '../image/size-limits';
import { measureRegion } from '../measure/measure-region';
import { RECORD_VERSION, type Measurement, type Region } from '../measure/measurement';
import { domainMap } from '../sheets/domains';
import { detectSheets } from '../sheets/detect';
import { autoSheetsMeasurement, domainsMeasurement } from '../sheets/record';
import { findRings, powerSpectrum, radialProfile, ringPeriodicity, type RectPx } from '../measure/spectrum';
import type { BatchDeps, SheetsResult } from './run';

function rectOf(region: Region): RectPx | null {
  return region.kind === 'rect' ? { x: region.x, y: region.y, width: region.width, height: region.height } : null;
}

/**
 * Rings of the radial average of a region's power spectrum as a Measurement (tool 'rings').
 * @param image calibrated or not
 * @param region the region
 * @param workspace buffers to reuse for the power spectrum (optional)
 * @returns periodicities strongest first; angleDeg is 0 (a ring has no direction), strength is
 *   the ring's significance in standard deviations
 * Reference: as findRings (azimuthal average, Bonferroni-corrected peak test).
 */
export async function ringsMeasurement(image: GreyImage, region: Region, workspace?: Workspace): Promise<Measurement> {
  const rect = rectOf(region);
  const spectrum = await powerSpectrum(image, rect, { workspace });
  const rings = findRings(radialProfile(spectrum));
  return {
    recordVersion: RECORD_VERSION,
    id: globalThis.crypto.randomUUID(),
    imageId: null,
    fileName: '',
    createdIso: new Date().toISOString(),
    tool: 'rings',
    region: rect ? { kind: 'rect', ...rect } : null,
    calibration: image.calibration,
    settings: { window: spectrum.window, area: spectrum.area, alpha: 0.001 },
    periodicities: rings.map(ringPeriodicity),
    notes: rings.length ? ['rings have no direction: angleDeg is 0'] : ['no significant ring in the radial average'],
  };
}

/** The pixels of a rectangle as an image of its own (same calibration and sample type). */
function cropImage(image: GreyImage, r: RectPx): GreyImage {
  if (r.x === 0 && r.y === 0 && r.width === image.width && r.height === image.height) return image;
  const data = new Float32Array(r.width * r.height);
  for (let y = 0; y < r.height; y++) data.set(image.data.subarray((r.y + y) * image.width + r.x, (r.y + y) * image.width + r.x + r.width), y * r.width);
  return makeGreyImage(r.width, r.height, data, { bitDepth: image.bitDepth, sampleKind: image.sampleKind, calibration: image.calibration });
}

/**
 * Automatic sheets in a region as a Measurement (tool 'sheets-auto') with each sheet's thickness.
 * @param image calibrated or not (uncalibrated sheets have no nm thickness)
 * @param region the region
 * @returns the measurement of `autoSheetsMeasurement` (positions in image pixels, region set) and
 *   the thickness in nm of every sheet that has one
 * Reference: as detectSheets (structure-tensor coherence, Bigün & Granlund 1987; analytic-signal profiles).
 */
export async function sheetsMeasurement(image: GreyImage, region: Region): Promise<SheetsResult> {
  const rect = rectOf(region) ?? { x: 0, y: 0, width: image.width, height: image.height };
  const found = detectSheets(cropImage(image, rect));
  const shift = (p: [number, number]): [number, number] => [p[0] + rect.x, p[1] + rect.y];
  const sheets = found.sheets.map((s) => ({
    ...s,
    centerPx: shift(s.centerPx),
    outlinePx: s.outlinePx.map(shift),
    crossings: s.crossings.map((c) => ({ ...c, centerPx: shift(c.centerPx) })),
  }));
  const m = autoSheetsMeasurement({ ...found, sheets }, { id: globalThis.crypto.randomUUID(), imageId: null, fileName: '', calibration: image.calibration });
  return {
    measurement: { ...m, region: { kind: 'rect', ...rect } },
    thicknessNm: sheets.map((s) => s.thicknessNm).filter((t): t is number => t !== null),
  };
}

/**
 * The domain map of a region as a Measurement (tool 'domains').
 * @param image calibrated or not
 * @param region the region
 * @returns the measurement of `domainsMeasurement`, region set; domain centres in image pixels,
 *   the label grid starting at the region's corner (detail.originPx)
 * Reference: as domainMap (structure tensor, Bigün & Granlund 1987; region growing).
 */
export async function domainsOfRegion(image: GreyImage, region: Region): Promise<Measurement> {
  const rect = rectOf(region) ?? { x: 0, y: 0, width: image.width, height: image.height };
  const map = domainMap(cropImage(image, rect));
  const domains = map.domains.map((d) => ({ ...d, centerPx: [d.centerPx[0] + rect.x, d.centerPx[1] + rect.y] as [number, number] }));
  const m = domainsMeasurement({ ...map, domains }, { id: globalThis.crypto.randomUUID(), imageId: null, fileName: '', calibration: image.calibration });
  return { ...m, region: { kind: 'rect', ...rect }, detail: { ...(m.detail ?? {}), originPx: [rect.x, rect.y] } };
}

/** Refuses a region the spectrum cannot hold, with recipe advice (before opencv.js runs out of its heap). */
function guardSpectrum(image: GreyImage, region: Region): void {
  const rect = rectOf(region) ?? { x: 0, y: 0, width: image.width, height: image.height };
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
  const bars = new WeakMap<Float32Array, ScaleBar | null>();
  const barOf = (image: GreyImage): ScaleBar | null => {
    if (!bars.has(image.data)) bars.set(image.data, findScaleBar(image));
    return bars.get(image.data) ?? null;
  };
  let reader: Promise<TextReader> | null = null;
  return {
    async prepare(recipe) {
      if (recipe.measurements.some((m) => m.tool === 'spectrum' || m.tool === 'rings')) await loadCv();
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
    spectrum: (image, region, options) => {
      guardSpectrum(image, region);
      return measureRegion(image, rectOf(region), { maxSpots: options.topK, workspace });
    },
    rings: (image, region) => {
      guardSpectrum(image, region);
      return ringsMeasurement(image, region, workspace);
    },
    sheets: sheetsMeasurement,
    domains: domainsOfRegion,
  };
}
