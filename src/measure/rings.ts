/**
 * The rings of a region's power spectrum as a measurement record: periods of randomly oriented
 * fringes (polycrystalline films, fingerprint lamellae).
 */
import type { GreyImage } from '../image/grey-image';
import type { Workspace } from '../image/workspace';
import { recordHead, type Measurement } from './measurement';
import { findRings, powerSpectrum, radialProfile, ringPeriodicity, type RectPx } from './spectrum';

/** Options of {@link ringsMeasurement}. */
export interface RingsMeasurementOptions {
  /** Family-wise false-alarm probability over the rings searched (default 0.001). */
  alpha?: number;
  /** Buffers to reuse for the power spectrum (batch workers; default fresh arrays). */
  workspace?: Workspace;
  /** File name recorded in the measurement (default ''). */
  fileName?: string;
  /** Stored image id recorded in the measurement (default null). */
  imageId?: string | null;
}

/**
 * Rings of the radial average of a region's power spectrum (tool 'rings').
 * @param image calibrated or not
 * @param region the region (null: the whole image)
 * @param options false-alarm probability, workspace, file name and image id
 * @returns periodicities strongest first; angleDeg is 0 (a ring has no direction), strength is
 *   the ring's significance in standard deviations
 * Reference: as findRings (azimuthal average, Bonferroni-corrected peak test).
 */
export async function ringsMeasurement(image: GreyImage, region: RectPx | null, options: RingsMeasurementOptions = {}): Promise<Measurement> {
  const alpha = options.alpha ?? 0.001;
  const spectrum = await powerSpectrum(image, region, { workspace: options.workspace });
  const rings = findRings(radialProfile(spectrum), { alpha });
  return {
    ...recordHead('rings', options),
    region: region ? { kind: 'rect', ...region } : null,
    calibration: image.calibration,
    settings: { window: spectrum.window, area: spectrum.area, alpha },
    periodicities: rings.map(ringPeriodicity),
    notes: rings.length ? ['rings have no direction: angleDeg is 0'] : ['no significant ring in the radial average'],
  };
}
