/**
 * Reading measurement records of every layout version: version 1 (lengths in nm bound to the
 * calibration at measurement time, one uncertainty) is upgraded to version 2 (pixels with their
 * uncertainty parts, calibration applied late); a version newer than this program is refused.
 */
import type { Calibration } from '../image/grey-image';
import { TOOLS } from './tools';
import { checkCalibration, type LengthGeometry, type Measurement, nmPerPxAlong, type Periodicity, RECORD_VERSION } from './measurement';

/** A record that cannot be read, with the field at fault in the message. */
export class RecordVersionError extends Error {
  override name = 'RecordVersionError';
}

/** How a tool's periods convert to nm, from the measurement-tool registry ('normal' for a kind it does not know). */
function geometryOfTool(tool: string): LengthGeometry {
  return TOOLS.find((t) => t.kind === tool)?.geometry ?? 'normal';
}

const finite = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

/**
 * A version-1 periodicity as version 2.
 * @param p the old periodicity ({ periodPx, periodNm, angleDeg, uncertaintyPx, uncertaintyNm, strength })
 * @param geometry how the tool's periods convert to nm
 * @param where the field's path, for messages
 * @returns the periodicity with its statistical part (the only one version 1 stated)
 */
function upgradePeriodicity(p: Record<string, unknown>, geometry: LengthGeometry, where: string): Periodicity {
  if (!finite(p.periodPx) || p.periodPx <= 0) throw new RecordVersionError(`${where}.periodPx must be a positive number, got ${String(p.periodPx)}`);
  const u = finite(p.uncertaintyPx) && p.uncertaintyPx >= 0 ? p.uncertaintyPx : 0;
  return {
    periodPx: p.periodPx,
    angleDeg: finite(p.angleDeg) ? p.angleDeg : 0,
    geometry,
    u: { statisticalPx: u, localVariationPx: 0, methodPx: 0 },
    uAngleDeg: 0,
    strength: finite(p.strength) ? p.strength : 0,
    flags: [],
  };
}

/**
 * Checks a calibration read from a record; version 1 wrote the same fields.
 * @returns the calibration or null
 * @throws RecordVersionError naming the field
 */
function readCalibration(c: unknown, where: string): Calibration | null {
  if (c === null || c === undefined) return null;
  try {
    return checkCalibration(c as Calibration, where);
  } catch (e) {
    throw new RecordVersionError((e as Error).message);
  }
}

/**
 * A stored or imported measurement record of any known version, as the current version.
 *
 * @param raw the record as parsed from JSON or read from the library
 * @param where how to name it in messages (e.g. "measurement 3f2a…")
 * @returns the record in the current layout (a new object; version 2 records are checked and returned as they are)
 * @throws RecordVersionError for an unknown or newer version, a bad calibration or a bad period, naming the field
 * Notes: a version-1 period keeps its pixel value and its standard uncertainty as the statistical
 * part (version 1 stated no other), and a note says so; nm values are no longer stored.
 */
export function upgradeMeasurement(raw: unknown, where = 'measurement'): Measurement {
  if (!raw || typeof raw !== 'object') throw new RecordVersionError(`${where} is not a record`);
  const r = raw as Record<string, unknown>;
  const version = r.recordVersion === undefined ? 1 : r.recordVersion;
  if (!Number.isInteger(version) || (version as number) < 1) throw new RecordVersionError(`${where}.recordVersion must be a positive integer, got ${String(version)}`);
  if ((version as number) > RECORD_VERSION) {
    throw new RecordVersionError(`${where}.recordVersion is ${String(version)}, newer than this program reads (${RECORD_VERSION}): update the program`);
  }
  if (typeof r.id !== 'string' || r.id === '') throw new RecordVersionError(`${where}.id must be a non-empty string`);
  if (!Array.isArray(r.periodicities)) throw new RecordVersionError(`${where}.periodicities must be a list`);
  const calibration = readCalibration(r.calibration, `${where}.calibration`);
  if (version === RECORD_VERSION) {
    (r.periodicities as unknown[]).forEach((p, i) => checkPeriodicity(p, `${where}.periodicities[${i}]`));
    return r as unknown as Measurement;
  }
  const tool = typeof r.tool === 'string' ? r.tool : 'spectrum';
  const geometry = geometryOfTool(tool);
  const periodicities = (r.periodicities as unknown[]).map((p, i) => upgradePeriodicity((p ?? {}) as Record<string, unknown>, geometry, `${where}.periodicities[${i}]`));
  const notes = Array.isArray(r.notes) ? (r.notes as unknown[]).map(String) : [];
  notes.push('upgraded from record version 1: its uncertainty holds the statistical part only');
  return {
    ...(r as unknown as Measurement),
    recordVersion: RECORD_VERSION,
    calibration,
    periodicities,
    notes,
  };
}

/**
 * Rejects a version-2 periodicity whose fields are missing or out of range, naming the field.
 */
export function checkPeriodicity(p: unknown, where: string): Periodicity {
  if (!p || typeof p !== 'object') throw new RecordVersionError(`${where} is not a periodicity`);
  const q = p as Record<string, unknown>;
  if (!finite(q.periodPx) || q.periodPx <= 0) throw new RecordVersionError(`${where}.periodPx must be a positive number, got ${String(q.periodPx)}`);
  if (!finite(q.angleDeg)) throw new RecordVersionError(`${where}.angleDeg must be a number, got ${String(q.angleDeg)}`);
  if (q.geometry !== 'normal' && q.geometry !== 'line' && q.geometry !== 'ring') throw new RecordVersionError(`${where}.geometry must be 'normal', 'line' or 'ring', got ${String(q.geometry)}`);
  const u = q.u as Record<string, unknown> | undefined;
  for (const k of ['statisticalPx', 'localVariationPx', 'methodPx']) {
    const v = u?.[k];
    if (!finite(v) || v < 0) throw new RecordVersionError(`${where}.u.${k} must be a non-negative number, got ${String(v)}`);
  }
  if (!Array.isArray(q.flags)) throw new RecordVersionError(`${where}.flags must be a list`);
  return q as unknown as Periodicity;
}

/**
 * A version-1 batch summary period ({ periodNm, uncertaintyNm, angleDeg, strength, tool }) as a
 * version-2 periodicity, using the file's calibration to return to pixels.
 * @param t the old summary entry
 * @param calibration the file's calibration (version 1 summaries exist only for calibrated files)
 * @param where for messages
 */
export function upgradeSummaryPeriod(t: Record<string, unknown>, calibration: Calibration | null, where: string): Periodicity & { tool: Measurement['tool'] } {
  const tool = (typeof t.tool === 'string' ? t.tool : 'spectrum') as Measurement['tool'];
  if ('periodPx' in t && 'u' in t) return { ...checkPeriodicity(t, where), tool };
  if (!calibration) throw new RecordVersionError(`${where}: a version-1 summary period needs the file's calibration`);
  if (!finite(t.periodNm) || t.periodNm <= 0) throw new RecordVersionError(`${where}.periodNm must be a positive number, got ${String(t.periodNm)}`);
  const geometry = geometryOfTool(tool);
  const angleDeg = finite(t.angleDeg) ? t.angleDeg : 0;
  const scale = nmPerPxAlong(calibration, geometry, angleDeg);
  const uNm = finite(t.uncertaintyNm) ? t.uncertaintyNm : 0;
  const stat = Math.sqrt(Math.max(0, uNm * uNm - (t.periodNm * calibration.relUncertainty) ** 2)) / scale;
  return {
    periodPx: t.periodNm / scale,
    angleDeg,
    geometry,
    u: { statisticalPx: stat, localVariationPx: 0, methodPx: 0 },
    uAngleDeg: 0,
    strength: finite(t.strength) ? t.strength : 0,
    flags: [],
    tool,
  };
}
