/**
 * Automatic sheets and domain maps of a rectangle of an image, as measurement records with every
 * position in the image's own pixels (what the batch runner and the measurement-tool registry run).
 */
import { cropImage } from '../image/crop';
import type { GreyImage } from '../image/grey-image';
import type { Measurement } from '../measure/measurement';
import type { RectPx } from '../measure/spectrum';
import { detectSheets } from './detect';
import { domainMap } from './domains';
import { autoSheetsMeasurement, domainsMeasurement, expressSheet, sheetFromAuto } from './record';

/** The region's pixels (the image itself when the region covers it). */
function pixelsOf(image: GreyImage, rect: RectPx): GreyImage {
  return rect.x === 0 && rect.y === 0 && rect.width === image.width && rect.height === image.height ? image : cropImage(image, rect);
}

/**
 * Automatic sheets in a region (tool 'sheets-auto').
 * @param image calibrated or not (uncalibrated sheets have no nm thickness)
 * @param region the region (null: the whole image)
 * @param options file name recorded in the measurement
 * @returns the version-2 record of `autoSheetsMeasurement` (lengths in px, positions in image
 *   pixels, region set) and the thickness (n·d) in nm of every sheet, expressed late with the
 *   image's calibration along each sheet's normal (none when the image is uncalibrated)
 * Reference: as detectSheets (scale-space ridges, Lindeberg 1998; comb fits of layer lines).
 */
export async function sheetsInRegion(image: GreyImage, region: RectPx | null, options: { fileName?: string } = {}): Promise<{ measurement: Measurement; thicknessNm: number[] }> {
  const rect = region ?? { x: 0, y: 0, width: image.width, height: image.height };
  const found = detectSheets(pixelsOf(image, rect));
  const shift = (p: [number, number]): [number, number] => [p[0] + rect.x, p[1] + rect.y];
  const sheets = found.sheets.map((s) => ({
    ...s,
    centerPx: shift(s.centerPx),
    axisPx: s.axisPx.map(shift),
    outlinePx: s.outlinePx.map(shift),
    positions: s.positions.map((q) => ({ ...q, centerPx: shift(q.centerPx) })),
  }));
  const m = autoSheetsMeasurement({ ...found, sheets }, { id: globalThis.crypto.randomUUID(), imageId: null, fileName: options.fileName ?? '', calibration: image.calibration });
  return {
    measurement: { ...m, region: { kind: 'rect', ...rect } },
    thicknessNm: image.calibration ? sheets.map((s) => expressSheet(sheetFromAuto(s), image.calibration).thickness.value) : [],
  };
}

/**
 * The domain map of a region (tool 'domains').
 * @param image calibrated or not
 * @param region the region (null: the whole image)
 * @param options file name recorded in the measurement
 * @returns the record of `domainsMeasurement`, region set; domain centres in image pixels, the
 *   label grid starting at the region's corner (detail.originPx)
 * Reference: as domainMap (structure tensor, Bigün & Granlund 1987; region growing).
 */
export async function domainsInRegion(image: GreyImage, region: RectPx | null, options: { fileName?: string } = {}): Promise<Measurement> {
  const rect = region ?? { x: 0, y: 0, width: image.width, height: image.height };
  const map = domainMap(pixelsOf(image, rect));
  const domains = map.domains.map((d) => ({ ...d, centerPx: [d.centerPx[0] + rect.x, d.centerPx[1] + rect.y] as [number, number] }));
  const m = domainsMeasurement({ ...map, domains }, { id: globalThis.crypto.randomUUID(), imageId: null, fileName: options.fileName ?? '', calibration: image.calibration });
  return { ...m, region: { kind: 'rect', ...rect }, detail: { ...(m.detail ?? {}), originPx: [rect.x, rect.y] } };
}
