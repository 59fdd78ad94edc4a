/**
 * Instrument calibration profiles: a pixel size measured once for one microscope setting
 * (instrument, nominal magnification, camera, binning), chosen again for later images taken at
 * that setting. Pure functions over the store's CalibrationProfile record.
 */
import type { CalibrationSource, Calibration, CalibrationUncertaintyPart } from '../image/grey-image';

/**
 * An instrument calibration profile: the pixel size measured once for one microscope setting,
 * applied later to images taken at the same setting.
 */
export interface CalibrationProfile {
  /** Unique id. */
  id: string;
  /** Name the user gave the profile, e.g. "TEM 1, 300 kV, 40 kx, bin 2". */
  name: string;
  /** Instrument as the user names it. */
  instrument: string;
  /** Nominal magnification (as indicated by the microscope). */
  magnification: number;
  /** Camera or detector as the user names it. */
  camera: string;
  /** Camera binning factor (1, 2, 4 ...). */
  binning: number;
  /** Pixel size in nm per pixel at this setting (along x for a two-axis calibration). */
  nmPerPx: number;
  /** Pixel size along y, nm per pixel, when the calibration has two axes (scan stretch); absent when square. */
  nmPerPxY?: number;
  /** Shear of the pixel grid, degrees, when the calibration has two axes; absent when none. */
  shearDeg?: number;
  /** The named parts of relUncertainty, when recorded. */
  parts?: CalibrationUncertaintyPart[];
  /** Relative standard uncertainty of nmPerPx (k = 1). */
  relUncertainty: number;
  /** How the pixel size was found. */
  method: CalibrationSource;
  /** ISO 8601 time the profile was made. */
  createdIso: string;
  /** Free text: standard used, lattice spacing, operator's remarks. */
  notes?: string;
}


/** The setting an image was recorded at (from its metadata or typed by the user). */
export interface ImageSetting {
  /** Instrument as the user names it. */
  instrument: string;
  /** Nominal (indicated) magnification. */
  magnification: number;
  /** Camera or detector; any camera matches when absent or empty. */
  camera?: string;
  /** Binning factor of the image; 1 when absent. */
  binning?: number;
}

export interface MatchOptions {
  /** Largest relative difference of nominal magnifications still taken as the same; 0.005 when absent. */
  magnificationRelTolerance?: number;
}

/** A chosen profile and the calibration it gives the image. */
export interface ProfileMatch {
  profile: CalibrationProfile;
  /** The profile's pixel size scaled to the image's binning, source 'profile'. */
  calibration: Calibration;
  /** True when the image's binning differs from the profile's and the pixel size was scaled. */
  scaledForBinning: boolean;
}

const norm = (s: string | undefined) => (s ?? '').trim().toLowerCase().replace(/\s+/g, ' ');

function checkBinning(name: string, b: number): void {
  if (!Number.isInteger(b) || b < 1) throw new RangeError(`${name} must be a positive integer, got ${b}`);
}

/**
 * Scales a pixel size from one binning to another.
 * @param nmPerPx pixel size at fromBinning
 * @param fromBinning the binning it was measured at
 * @param toBinning the binning wanted
 * @returns nmPerPx × toBinning / fromBinning
 * Notes: binning b sums b × b sensor pixels into one, so the pixel size grows by b (common practice).
 */
export function scaleForBinning(nmPerPx: number, fromBinning: number, toBinning: number): number {
  if (!(nmPerPx > 0) || !Number.isFinite(nmPerPx)) throw new RangeError(`nmPerPx must be a positive number, got ${nmPerPx}`);
  checkBinning('fromBinning', fromBinning);
  checkBinning('toBinning', toBinning);
  return (nmPerPx * toBinning) / fromBinning;
}

/**
 * The calibration a profile gives an image at the given binning.
 * Notes: both axes scale with the binning; the shear, an angle, does not. A two-axis profile keeps
 * its axes and shear, so measurements go on converting every direction through its metric.
 */
export function profileCalibration(profile: CalibrationProfile, binning = profile.binning): Calibration {
  const nmPerPx = scaleForBinning(profile.nmPerPx, profile.binning, binning);
  const scaled = binning !== profile.binning ? `, scaled from binning ${profile.binning} to ${binning}` : '';
  const axes = profile.nmPerPxY !== undefined ? `, two axes: y ${Number(profile.nmPerPxY.toPrecision(6))} nm/px at bin ${profile.binning}, shear ${profile.shearDeg ?? 0}°` : '';
  const c: Calibration = {
    nmPerPx,
    source: 'profile',
    relUncertainty: profile.relUncertainty,
    detail: `profile "${profile.name}" (${profile.instrument}, ${profile.magnification}×, ${profile.camera || 'any camera'}, bin ${profile.binning}; by ${profile.method}, ${profile.createdIso}${axes})${scaled}`,
  };
  if (profile.parts) c.parts = profile.parts.map((p) => ({ ...p }));
  if (profile.nmPerPxY !== undefined) c.nmPerPxY = scaleForBinning(profile.nmPerPxY, profile.binning, binning);
  if (profile.shearDeg !== undefined && profile.shearDeg !== 0) c.shearDeg = profile.shearDeg;
  return c;
}

/**
 * Chooses the profile for an image: same instrument and camera (case and spacing ignored), the
 * same nominal magnification within the tolerance; among those, the same binning first, then
 * the most recent.
 * @param profiles the saved profiles
 * @param setting the image's instrument, magnification, camera and binning
 * @param options magnification tolerance
 * @returns the profile and its calibration scaled to the image's binning, or null when none fits
 * Notes: a profile is never extrapolated to another magnification: lens settings are not
 * linear between steps (ISO 29301 calibrates each magnification used).
 */
export function matchProfile(
  profiles: readonly CalibrationProfile[],
  setting: ImageSetting,
  options: MatchOptions = {},
): ProfileMatch | null {
  if (!Array.isArray(profiles)) throw new TypeError('profiles must be an array');
  if (!setting || typeof setting.instrument !== 'string' || !setting.instrument.trim()) {
    throw new RangeError(`setting.instrument must be a non-empty string, got ${JSON.stringify(setting?.instrument)}`);
  }
  if (!(setting.magnification > 0) || !Number.isFinite(setting.magnification)) {
    throw new RangeError(`setting.magnification must be a positive number, got ${setting.magnification}`);
  }
  const binning = setting.binning ?? 1;
  checkBinning('setting.binning', binning);
  const tol = options.magnificationRelTolerance ?? 0.005;
  if (!(tol >= 0 && tol < 1)) throw new RangeError(`magnificationRelTolerance must be in [0, 1), got ${tol}`);
  const inst = norm(setting.instrument);
  const cam = norm(setting.camera);
  const fits = profiles.filter(
    (p) =>
      norm(p.instrument) === inst &&
      (!cam || !norm(p.camera) || norm(p.camera) === cam) &&
      Math.abs(p.magnification / setting.magnification - 1) <= tol,
  );
  if (fits.length === 0) return null;
  fits.sort((p, q) => {
    const pb = p.binning === binning ? 0 : 1;
    const qb = q.binning === binning ? 0 : 1;
    if (pb !== qb) return pb - qb;
    return q.createdIso.localeCompare(p.createdIso);
  });
  const profile = fits[0];
  return { profile, calibration: profileCalibration(profile, binning), scaledForBinning: profile.binning !== binning };
}

export interface NewProfileInput {
  /** Unique id (e.g. crypto.randomUUID()). */
  id: string;
  /** Name; made from the setting when absent. */
  name?: string;
  /** The setting the calibration was made at. */
  setting: ImageSetting;
  /** The calibration measured at that setting (its source becomes the profile's method). */
  calibration: Calibration;
  /** ISO 8601 time; required so the function stays pure. */
  createdIso: string;
  /** Free text; the calibration's detail is added. */
  notes?: string;
}

/**
 * Records a calibration as a profile for its setting: when and how it was made; a two-axis
 * calibration keeps its y axis, shear and uncertainty parts.
 * @param input id, setting, calibration, time and notes
 * @returns a CalibrationProfile record for the store
 */
export function makeProfile(input: NewProfileInput): CalibrationProfile {
  const { id, setting, calibration, createdIso } = input ?? ({} as NewProfileInput);
  if (typeof id !== 'string' || !id) throw new RangeError(`id must be a non-empty string, got ${JSON.stringify(id)}`);
  if (!setting || typeof setting.instrument !== 'string' || !setting.instrument.trim()) {
    throw new RangeError(`setting.instrument must be a non-empty string, got ${JSON.stringify(setting?.instrument)}`);
  }
  if (!(setting.magnification > 0)) throw new RangeError(`setting.magnification must be positive, got ${setting.magnification}`);
  const binning = setting.binning ?? 1;
  checkBinning('setting.binning', binning);
  if (!calibration || !(calibration.nmPerPx > 0)) throw new RangeError(`calibration.nmPerPx must be positive, got ${calibration?.nmPerPx}`);
  if (calibration.source === 'profile') throw new RangeError("a profile cannot be made from a calibration whose source is 'profile'");
  if (typeof createdIso !== 'string' || Number.isNaN(Date.parse(createdIso))) {
    throw new RangeError(`createdIso must be an ISO 8601 time, got ${JSON.stringify(createdIso)}`);
  }
  const camera = (setting.camera ?? '').trim();
  return {
    id,
    name: input.name?.trim() || `${setting.instrument.trim()}, ${setting.magnification}×${camera ? `, ${camera}` : ''}, bin ${binning}`,
    instrument: setting.instrument.trim(),
    magnification: setting.magnification,
    camera,
    binning,
    nmPerPx: calibration.nmPerPx,
    ...(calibration.nmPerPxY !== undefined ? { nmPerPxY: calibration.nmPerPxY } : {}),
    ...(calibration.shearDeg !== undefined ? { shearDeg: calibration.shearDeg } : {}),
    ...(calibration.parts ? { parts: calibration.parts.map((p) => ({ ...p })) } : {}),
    relUncertainty: calibration.relUncertainty,
    method: calibration.source,
    createdIso,
    notes: [input.notes?.trim(), calibration.detail].filter(Boolean).join('; '),
  };
}
