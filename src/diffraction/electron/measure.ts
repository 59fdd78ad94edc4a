/**
 * d-spacings from a sample's electron-diffraction pattern with a calibrated camera constant:
 * rings from the elliptically corrected azimuthal average, spots with the angles between them,
 * and the library record that lets them join the diffraction cross-check. Pure: typed arrays only.
 */
import type { GreyImage } from '../../image/grey-image';
import type { DiffractionLine } from '../reconcile';
import { diffractionSetRecord, type DiffractionSet } from '../stored-set';
import { correction, correctedVector, ellipticity, type PatternGeometry } from './geometry';
import { analyseRings } from './rings';
import { spotPatternCentre, type SpotFindOptions } from './spots';
import { electronWavelengthForKv } from './wavelength';

/** What a measurement needs of a camera calibration. */
export interface CameraSetting {
  /** Camera constant, nm⁻¹ per px. */
  kInvNmPerPx: number;
  /** Its relative standard uncertainty (k = 1). */
  relUncertainty: number;
  /** The projector distortion measured with it. */
  distortion: { e1: number; e2: number };
  /** Where it comes from (shown with every result). */
  detail: string;
}

/** A ring's d-spacing. */
export interface RingSpacing {
  radiusPx: number;
  uRadiusPx: number;
  dNm: number;
  /** Standard uncertainties (k = 1) of d, nm, by part: the ring's radius and the camera constant. */
  uRadiusPartNm: number;
  uCameraPartNm: number;
  /** Combined standard uncertainty, nm. */
  uDNm: number;
  widthPx: number;
  height: number;
}

/** A spot's d-spacing and direction. */
export interface SpotSpacing {
  x: number;
  y: number;
  /** Corrected distance from the centre, px, and its standard uncertainty. */
  rPx: number;
  uRPx: number;
  dNm: number;
  uPositionPartNm: number;
  uCameraPartNm: number;
  uDNm: number;
  /** Direction of the reciprocal vector in the corrected pattern, degrees counter-clockwise from +x (y up), [0, 360), and its standard uncertainty. */
  directionDeg: number;
  uDirectionDeg: number;
  intensity: number;
  snr: number;
  /** True when measured from a Friedel pair (centre-free: half the distance between mates). */
  fromPair: boolean;
}

/** The angle between two spots' reciprocal vectors. */
export interface SpotAngle {
  /** Indices into the spots list. */
  i: number;
  j: number;
  /** Angle, degrees in [0, 180], and its standard uncertainty. */
  angleDeg: number;
  uAngleDeg: number;
}

/** What measuring a pattern gives. */
export interface PatternMeasurement {
  geometry: PatternGeometry;
  uCx: number;
  uCy: number;
  ellipticity: number;
  majorAxisDeg: number;
  rings: RingSpacing[];
  spots: SpotSpacing[];
  angles: SpotAngle[];
  camera: CameraSetting;
  notes: string[];
}

/** Options of {@link measureElectronPattern}. */
export interface PatternMeasureOptions extends SpotFindOptions {
  /** 'rings', 'spots' or 'both' (default 'both': rings when the pattern has them, spots when it has them). */
  what?: 'rings' | 'spots' | 'both';
  /** Most spots reported, strongest first (default 24); angles are given between the first 8. */
  reportSpots?: number;
}

function checkCamera(c: CameraSetting): void {
  if (!c || !(c.kInvNmPerPx > 0) || !Number.isFinite(c.kInvNmPerPx)) throw new RangeError(`the camera constant must be a positive number of nm⁻¹ per px, got ${String(c?.kInvNmPerPx)}`);
  if (!(c.relUncertainty >= 0 && c.relUncertainty < 1)) throw new RangeError(`the camera constant's relative uncertainty must be in [0, 1), got ${c.relUncertainty}`);
  if (!c.distortion || !Number.isFinite(c.distortion.e1) || !Number.isFinite(c.distortion.e2) || Math.hypot(c.distortion.e1, c.distortion.e2) >= 0.2) {
    throw new RangeError(`the distortion must be two finite numbers below 0.2 in size, got ${JSON.stringify(c?.distortion)}`);
  }
}

/**
 * Measures the rings and spots of a pattern with a calibrated camera.
 * @param image the pattern, recorded at the camera setting's camera length
 * @param camera the camera constant with its uncertainty and distortion
 * @param options what to measure, spot-finding options
 * @returns d-spacings of rings and spots with their uncertainty parts, the angles between spots, the geometry
 * @throws RangeError for a bad camera setting, or when neither rings nor spots are found
 * Notes: d = 1/(K·R), R the corrected radius: u(d)/d = √((u_R/R)² + (u_K/K)²) (GUM §5.1.6), the two
 * parts kept apart. Rings: analyseRings with the camera's distortion fixed. Spots: the centre from
 * Friedel pairs; a pair's vector is half the distance between the mates (the centre drops out); an
 * unpaired spot carries the centre's uncertainty; position uncertainties are scaled by the Birge
 * ratio of the pairs' midpoints when above 1 (their scatter shows the real position error). The angle between two spots' vectors in the
 * corrected pattern; its uncertainty from the positions (first order).
 */
export function measureElectronPattern(image: GreyImage, camera: CameraSetting, options: PatternMeasureOptions = {}): PatternMeasurement {
  checkCamera(camera);
  const what = options.what ?? 'both';
  if (!['rings', 'spots', 'both'].includes(what)) throw new RangeError(`what must be 'rings', 'spots' or 'both', got ${String(what)}`);
  const K = camera.kInvNmPerPx;
  const relK = camera.relUncertainty;
  const notes: string[] = [];
  let geometry: PatternGeometry | null = null;
  let uCx = 0;
  let uCy = 0;
  const rings: RingSpacing[] = [];
  if (what !== 'spots') {
    try {
      const a = analyseRings(image, { ...(options.mask ? { mask: options.mask } : {}), distortion: camera.distortion });
      geometry = a.geometry;
      uCx = a.uCx;
      uCy = a.uCy;
      for (const r of a.rings) {
        const d = 1 / (K * r.radiusPx);
        const uR = (d * r.uRadiusPx) / r.radiusPx;
        const uK = d * relK;
        rings.push({ radiusPx: r.radiusPx, uRadiusPx: r.uRadiusPx, dNm: d, uRadiusPartNm: uR, uCameraPartNm: uK, uDNm: Math.hypot(uR, uK), widthPx: r.widthPx, height: r.height });
      }
      notes.push(...a.notes);
    } catch (e) {
      if (what === 'rings') throw e;
      notes.push(`rings: ${(e as Error).message}`);
    }
  }
  const spots: SpotSpacing[] = [];
  const angles: SpotAngle[] = [];
  if (what !== 'rings') {
    const found = spotPatternCentre(image, camera.distortion, options);
    if (!geometry || found.pairs > 0) {
      geometry = found.geometry;
      uCx = found.uCx;
      uCy = found.uCy;
    }
    const geo = geometry;
    const t = correction(geo);
    // the spots' fitted position uncertainties, scaled when the Friedel pairs' midpoints scatter more than they allow
    const posScale = Math.max(1, found.birgeRatio);
    if (found.birgeRatio > 1.5) notes.push(`the Friedel pairs' midpoints scatter ${found.birgeRatio.toFixed(1)}× more than the spots' fitted positions allow: the position uncertainties are scaled by that ratio`);
    const done = new Set<number>();
    found.spots.forEach((s, i) => {
      if (done.has(i)) return;
      let v: [number, number];
      let uPos: number;
      let fromPair = false;
      if (s.mate !== null) {
        const m = found.spots[s.mate];
        done.add(s.mate);
        const dx = (s.x - m.x) / 2;
        const dy = (s.y - m.y) / 2;
        v = [t[0] * dx + t[1] * dy, t[1] * dx + t[2] * dy];
        uPos = posScale * 0.5 * Math.sqrt((s.uX ** 2 + m.uX ** 2 + s.uY ** 2 + m.uY ** 2) / 2);
        fromPair = true;
      } else {
        v = correctedVector(geo, s.x, s.y, t);
        uPos = Math.sqrt((posScale ** 2 * (s.uX ** 2 + s.uY ** 2)) / 2 + (uCx ** 2 + uCy ** 2) / 2);
      }
      done.add(i);
      const r = Math.hypot(v[0], v[1]);
      if (!(r > 0)) return;
      const d = 1 / (K * r);
      const uP = (d * uPos) / r;
      const uK = d * relK;
      let dir = (Math.atan2(-v[1], v[0]) * 180) / Math.PI;
      dir = (dir + 360) % 360;
      spots.push({ x: s.x, y: s.y, rPx: r, uRPx: uPos, dNm: d, uPositionPartNm: uP, uCameraPartNm: uK, uDNm: Math.hypot(uP, uK), directionDeg: dir, uDirectionDeg: (uPos / r) * (180 / Math.PI), intensity: s.intensity, snr: s.snr, fromPair });
    });
    const report = options.reportSpots ?? 24;
    spots.splice(report);
    const n = Math.min(8, spots.length);
    for (let i = 0; i < n; i++) {
      for (let j = i + 1; j < n; j++) {
        let a = Math.abs(spots[i].directionDeg - spots[j].directionDeg) % 360;
        if (a > 180) a = 360 - a;
        angles.push({ i, j, angleDeg: a, uAngleDeg: Math.hypot(spots[i].uDirectionDeg, spots[j].uDirectionDeg) });
      }
    }
    if (found.pairs === 0 && spots.length) notes.push('no Friedel pair was found: the centre rests on the pattern\'s symmetry alone, and every spot carries its uncertainty');
  }
  if (!geometry || (rings.length === 0 && spots.length === 0)) throw new RangeError('neither rings nor spots stand out of the background of this pattern');
  const el = ellipticity(geometry);
  return { geometry, uCx, uCy, ellipticity: el.ellipticity, majorAxisDeg: el.majorAxisDeg, rings, spots, angles, camera, notes };
}

/** What the library keeps of an electron-diffraction measurement, beside its lines. */
export interface ElectronSetDetail {
  kind: 'electron-diffraction' | 'camera-constant';
  voltageKv: number;
  camera: CameraSetting;
  geometry: PatternGeometry;
  spots: SpotSpacing[];
  angles: SpotAngle[];
  notes: string[];
}

/**
 * The library record of a measured pattern: its ring and spot d-spacings as diffraction lines, so
 * they join the reconciliation with micrograph periods like any other diffraction set.
 * @param m the measurement
 * @param input id, name, time, file name and the accelerating voltage (kV, 1–3000; the set's wavelength)
 * @returns a DiffractionSet (src/diffraction/stored-set.ts); lines carry the combined standard uncertainty
 */
export function electronDiffractionSet(
  m: PatternMeasurement,
  input: { id: string; name: string; createdIso: string; fileName: string | null; voltageKv: number; kind?: 'electron-diffraction' | 'camera-constant' },
): DiffractionSet {
  const lambda = electronWavelengthForKv(input.voltageKv);
  const lines: DiffractionLine[] = [
    ...m.rings.map((r, i) => ({ dNm: r.dNm, dUncNm: r.uDNm, label: `ring ${i + 1} (${r.radiusPx.toFixed(2)} px)`, intensity: r.height })),
    ...m.spots.map((s, i) => ({ dNm: s.dNm, dUncNm: s.uDNm, label: `spot ${i + 1}${s.fromPair ? ' (Friedel pair)' : ''} at ${s.directionDeg.toFixed(1)}°`, intensity: s.intensity })),
  ];
  if (lines.length === 0) throw new RangeError('the measurement has no ring or spot to store');
  const set = diffractionSetRecord({
    id: input.id,
    name: input.name,
    createdIso: input.createdIso,
    patternText: null,
    fileName: input.fileName,
    wavelengthNm: lambda,
    ka2Nm: null,
    peaks: [],
    lines,
    series: [],
  });
  const detail: ElectronSetDetail = { kind: input.kind ?? 'electron-diffraction', voltageKv: input.voltageKv, camera: m.camera, geometry: m.geometry, spots: m.spots, angles: m.angles, notes: m.notes };
  (set.results as Record<string, unknown>).electron = detail;
  return set;
}

/** The electron-diffraction detail of a stored set, or null when it is another kind of set. */
export function electronDetailOf(set: DiffractionSet): ElectronSetDetail | null {
  const e = (set.results as Record<string, unknown> | null)?.electron as ElectronSetDetail | undefined;
  if (!e || (e.kind !== 'electron-diffraction' && e.kind !== 'camera-constant') || !e.camera || !(e.camera.kInvNmPerPx > 0)) return null;
  return e;
}
