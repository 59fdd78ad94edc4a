/**
 * The project's own decoder, scale-bar reader and measurement tools, wired into the shape the
 * batch runner calls (`BatchDeps`). Pure core modules only, so the same wiring serves a Node
 * worker thread and a module Web Worker.
 */
import { LABEL_CHARACTERS, readScaleBar } from '../calibration/label';
import type { TextReader } from '../calibration/ocr';
import { findScaleBar, type ScaleBar } from '../calibration/scale-bar';
import { decodeImage } from '../image/decode';
import type { GreyImage } from '../image/grey-image';
import { measureRegion } from '../measure/measure-region';
import { toNm, type Measurement, type Region } from '../measure/measurement';
import { findRings, powerSpectrum, radialProfile, type RectPx } from '../measure/spectrum';
import type { BatchDeps } from './run';

function rectOf(region: Region): RectPx | null {
  return region.kind === 'rect' ? { x: region.x, y: region.y, width: region.width, height: region.height } : null;
}

/**
 * Rings of the radial average of a region's power spectrum as a Measurement (tool 'rings').
 * @param image calibrated or not
 * @param region the region
 * @returns periodicities strongest first; angleDeg is 0 (a ring has no direction), strength is
 *   the ring's significance in standard deviations
 * Reference: as findRings (azimuthal average, Bonferroni-corrected peak test).
 */
export async function ringsMeasurement(image: GreyImage, region: Region): Promise<Measurement> {
  const rect = rectOf(region);
  const spectrum = await powerSpectrum(image, rect);
  const rings = findRings(radialProfile(spectrum));
  return {
    id: globalThis.crypto.randomUUID(),
    imageId: null,
    fileName: '',
    createdIso: new Date().toISOString(),
    tool: 'rings',
    region: rect ? { kind: 'rect', ...rect } : null,
    calibration: image.calibration,
    settings: { window: spectrum.window, area: spectrum.area, alpha: 0.001 },
    periodicities: rings.map((r) => ({
      periodPx: r.periodPx,
      uncertaintyPx: r.uncertaintyPx,
      angleDeg: 0,
      strength: r.strength,
      ...toNm(r.periodPx, r.uncertaintyPx, image.calibration),
    })),
    notes: rings.length ? ['rings have no direction: angleDeg is 0'] : ['no significant ring in the radial average'],
  };
}

/**
 * The batch runner's tools.
 * @returns decoder, information-strip and scale-bar reading, spectrum and ring steps
 * Notes: the information strip is the edge panel holding the scale bar (findScaleBar's
 * stripBox) when it lies along the bottom; the scale-bar route reads the bar's label offline
 * (one OCR engine per worker, started on first use). Steps not in this build (sheets, domains)
 * are absent; `processOne` names a missing one if a recipe asks for it.
 */
export async function createBatchDeps(): Promise<BatchDeps> {
  const bars = new WeakMap<Float32Array, ScaleBar | null>();
  const barOf = (image: GreyImage): ScaleBar | null => {
    if (!bars.has(image.data)) bars.set(image.data, findScaleBar(image));
    return bars.get(image.data) ?? null;
  };
  let reader: Promise<TextReader> | null = null;
  return {
    decodeImage: (bytes, fileName) => decodeImage(bytes, fileName),
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
    spectrum: (image, region, options) => measureRegion(image, rectOf(region), { maxSpots: options.topK }),
    rings: ringsMeasurement,
  };
}
