/**
 * The one measurement record (version 2), shared by the worker, the app, the command line, the
 * batch runner, the library and every export.
 *
 * A record keeps its lengths in pixels, each with its standard uncertainty split by what it is
 * (statistical, local variation, method). The calibration is applied late, in one place
 * ({@link expressLength}, {@link expressPeriod}): recalibrating a stored record replaces its
 * calibration and re-expresses the same pixel values, without recomputing anything.
 * Budget: GUM, JCGM 100:2008 (§5.1.2 combined standard uncertainty, §6 expanded uncertainty).
 */
import type { Calibration } from '../image/grey-image';

/** The record layout this code writes. */
export const RECORD_VERSION = 2;

/** Standard uncertainties (k = 1) of a length in pixels, by what they are. */
export interface UncertaintyPx {
  /** Type A, statistical: the estimator's own scatter under white noise (Cramér–Rao bound, fit), px. */
  statisticalPx: number;
  /**
   * Sample, local variation: what the data show beyond white noise, measured from the data
   * themselves (scatter over sub-regions or along the fringes, the spread of local periods), px.
   */
  localVariationPx: number;
  /** Method: disagreement of two estimators, window and finite-crystal bias allowance, px. */
  methodPx: number;
}

/** How a length in pixels turns into nanometres under a calibration with unequal axes or shear. */
export type LengthGeometry =
  /** A fringe spacing: the distance between lattice planes, along their normal (spectrum spots). */
  | 'normal'
  /** A distance along a drawn line (line profiles, sheets across a line). */
  | 'line'
  /** A ring of a radial average: no direction; the mean scale of the two axes is used. */
  | 'ring';

/** A periodicity flag: why a period is doubtful. A flagged period is never ranked first. */
export type PeriodFlag =
  /** Within a few per cent of the sampling limit (2 px): aliasing and detector artefacts live there. */
  | 'near-nyquist'
  /** Far weaker than the strongest spot of the same spectrum. */
  | 'weak-relative'
  /** On the x or y axis of the spectrum, where scan lines, readout and edge leakage put power. */
  | 'on-axis'
  /** At a simple fraction of the sampling (a fixed-pattern period of 2, 3, 4, 8 px...). */
  | 'fixed-pattern';

/** One periodicity: a lattice-fringe or lamellar period, kept in pixels with its uncertainty parts. */
export interface Periodicity {
  /** Period (d-spacing) in pixels. */
  periodPx: number;
  /**
   * Direction in degrees in [0, 180), counter-clockwise from +x as the image is shown (x right,
   * y up): the fringe normal for 'normal', the line for 'line', 0 for 'ring'.
   */
  angleDeg: number;
  /** How the period converts to nm. */
  geometry: LengthGeometry;
  /** Standard uncertainties (k = 1) of periodPx by what they are. */
  u: UncertaintyPx;
  /** Standard uncertainty of angleDeg, degrees (0 when not estimated). */
  uAngleDeg: number;
  /** Estimator-specific strength (e.g. spot power over background); larger is stronger. */
  strength: number;
  /** Why the period is doubtful (empty: no doubt). */
  flags: PeriodFlag[];
}

/** The part of the image a measurement looked at, in pixel coordinates. */
export type Region =
  | { kind: 'rect'; x: number; y: number; width: number; height: number }
  | { kind: 'line'; x0: number; y0: number; x1: number; y1: number; widthPx: number };

/**
 * The record kind of every measuring tool. Each has one entry in the tool registry
 * (src/measure/tools.ts); add a kind here and its entry there.
 */
export type ToolKind = 'profile' | 'spectrum' | 'rings' | 'sheets-line' | 'sheets-auto' | 'domains';

/** What produced a measurement: a tool of the registry (src/measure/tools.ts), or a calibration. */
export type MeasurementTool = ToolKind | 'calibration';

export interface Measurement {
  /** Record layout version: {@link RECORD_VERSION}. */
  recordVersion: number;
  /** Unique id (e.g. crypto.randomUUID()). */
  id: string;
  /** Id of the stored image it belongs to, or null for a CLI run on a file. */
  imageId: string | null;
  /** The image's file name as the user knows it. */
  fileName: string;
  /** ISO 8601 time of the measurement. */
  createdIso: string;
  tool: MeasurementTool;
  region: Region | null;
  /** The calibration the pixel values are expressed with (replaceable: nothing in px depends on it). */
  calibration: Calibration | null;
  /** The settings that produced the result (window, estimator, thresholds...). */
  settings: Record<string, unknown>;
  /** Periods found, strongest first (may be empty: no significant periodicity). */
  periodicities: Periodicity[];
  /** Tool-specific detail (sheets, rings, profile samples...), plain JSON, lengths in px. */
  detail?: Record<string, unknown>;
  /** Notes and warnings for the user. */
  notes: string[];
}

/**
 * The fields every new record starts with: layout version, a new id, its image, now, its tool.
 * @param tool the record kind
 * @param options file name (default '') and stored image id (default null)
 * @returns the head of a record, to spread into it
 */
export function recordHead(tool: MeasurementTool, options: { fileName?: string; imageId?: string | null } = {}): Pick<Measurement, 'recordVersion' | 'id' | 'imageId' | 'fileName' | 'createdIso' | 'tool'> {
  return { recordVersion: RECORD_VERSION, id: globalThis.crypto.randomUUID(), imageId: options.imageId ?? null, fileName: options.fileName ?? '', createdIso: new Date().toISOString(), tool };
}

/** Who a record belongs to: what the library and the exports stamp on it. */
export interface RecordIdentity {
  /** Id of the stored image, or null for a file outside the library. */
  imageId: string | null;
  /** The image's file name. */
  fileName: string;
  /** The calibration in force (replaces the record's: its pixel values do not depend on it). */
  calibration: Calibration | null;
  /** Record id (default a new random UUID). */
  id?: string;
  /** ISO 8601 time (default now). */
  createdIso?: string;
}

/**
 * A record with its identity: a new id and time, the image it belongs to and the calibration in
 * force. The result itself (pixels, parts, settings, detail) is taken as it is.
 * @param m the record as a tool made it
 * @param identity image, file name, calibration (and optionally id and time)
 * @returns a new record
 */
export function withIdentity(m: Measurement, identity: RecordIdentity): Measurement {
  if (!identity || typeof identity.fileName !== 'string') throw new TypeError(`identity.fileName must be a string, got ${String(identity?.fileName)}`);
  if (identity.calibration) checkCalibration(identity.calibration, 'identity.calibration');
  return {
    ...m,
    id: identity.id ?? globalThis.crypto.randomUUID(),
    imageId: identity.imageId,
    fileName: identity.fileName,
    createdIso: identity.createdIso ?? new Date().toISOString(),
    calibration: identity.calibration,
  };
}

/** The names of the uncertainty parts, in the order they are listed. */
export const UNCERTAINTY_PARTS = ['statistical', 'localVariation', 'betweenImages', 'method', 'calibration'] as const;
export type UncertaintyPart = (typeof UNCERTAINTY_PARTS)[number];

/** The parts in the user's words. */
export const UNCERTAINTY_PART_WORDS: Readonly<Record<UncertaintyPart, string>> = Object.freeze({
  statistical: 'statistical',
  localVariation: 'local variation',
  betweenImages: 'between images',
  method: 'method',
  calibration: 'calibration',
});

/** A value with its uncertainty budget, in one unit. */
export interface UncertaintyBudget {
  /** The value. */
  value: number;
  /** Its unit: 'nm' when calibrated, else 'px'. */
  unit: 'nm' | 'px';
  /** Standard uncertainties (k = 1) by part, in `unit` (calibration is 0 in px; between images only for pooled values). */
  parts: Record<UncertaintyPart, number>;
  /** Combined standard uncertainty (k = 1): the root-sum-square of the parts. */
  combined: number;
  /** Coverage factor. */
  k: number;
  /** Expanded uncertainty k · combined. */
  expanded: number;
}

/** Default coverage factor: k = 2, about 95 % for a normal distribution (GUM §6.3.3). */
export const DEFAULT_COVERAGE_FACTOR = 2;

/** A zero uncertainty. */
export function noUncertainty(): UncertaintyPx {
  return { statisticalPx: 0, localVariationPx: 0, methodPx: 0 };
}

/** Root-sum-square of the pixel parts: the combined standard uncertainty in px (calibration excluded). */
export function combinedPx(u: UncertaintyPx): number {
  return Math.sqrt(u.statisticalPx ** 2 + u.localVariationPx ** 2 + u.methodPx ** 2);
}

/** Rejects a coverage factor that is not a positive finite number, naming it. */
export function checkCoverageFactor(k: number): number {
  if (typeof k !== 'number' || !Number.isFinite(k) || k <= 0) throw new RangeError(`coverage factor k must be a positive number, got ${String(k)}`);
  return k;
}

/**
 * Rejects a calibration that cannot be used, naming the field.
 * @param c the calibration
 * @param what how to name it in the message (default 'calibration')
 * @returns c
 */
export function checkCalibration(c: Calibration, what = 'calibration'): Calibration {
  if (!c || typeof c !== 'object') throw new TypeError(`${what} must be an object, got ${String(c)}`);
  const positive = (name: string, v: unknown) => {
    if (typeof v !== 'number' || !Number.isFinite(v) || v <= 0) throw new RangeError(`${what}.${name} must be a positive number, got ${String(v)}`);
  };
  positive('nmPerPx', c.nmPerPx);
  if (c.nmPerPxY !== undefined) positive('nmPerPxY', c.nmPerPxY);
  if (c.shearDeg !== undefined && (typeof c.shearDeg !== 'number' || !Number.isFinite(c.shearDeg) || Math.abs(c.shearDeg) >= 45)) {
    throw new RangeError(`${what}.shearDeg must be a number of degrees within ±45, got ${String(c.shearDeg)}`);
  }
  if (c.relUncertainty === undefined || c.relUncertainty === null) throw new RangeError(`${what}.relUncertainty is missing: a calibration needs its relative standard uncertainty`);
  if (typeof c.relUncertainty !== 'number' || !Number.isFinite(c.relUncertainty) || c.relUncertainty < 0 || c.relUncertainty >= 1) {
    throw new RangeError(`${what}.relUncertainty must be a number in [0, 1), got ${String(c.relUncertainty)}`);
  }
  return c;
}

/**
 * Nanometres per pixel along a direction, for a length of the given geometry.
 *
 * @param calibration the pixel size (x, optional y and shear)
 * @param geometry 'normal' (a fringe spacing whose normal points along angleDeg), 'line' (a
 *   distance along angleDeg) or 'ring' (no direction)
 * @param angleDeg direction, counter-clockwise from +x as shown (y up)
 * @returns nm per px for that length
 * Notes: the pixel grid's metric is G = [[sx², sx·sy·sin γ], [sx·sy·sin γ, sy²]] (sx, sy the pixel
 * sizes along x and the row direction, γ the shear: the deviation of the pixel axes from a right
 * angle). A displacement v in px has length √(vᵀGv) nm; a fringe of frequency f (cycles/px) has
 * spacing 1/√(fᵀG⁻¹f) nm. A ring uses √(sx·sy), the scale of equal areas.
 * Reference: metric tensor of an oblique lattice (common practice in crystallography).
 */
export function nmPerPxAlong(calibration: Calibration, geometry: LengthGeometry, angleDeg: number): number {
  const sx = calibration.nmPerPx;
  const sy = calibration.nmPerPxY ?? sx;
  const g = calibration.shearDeg ? Math.sin((calibration.shearDeg * Math.PI) / 180) : 0;
  if (sx === sy && g === 0) return sx;
  if (geometry === 'ring') return Math.sqrt(sx * sy);
  const a = (angleDeg * Math.PI) / 180;
  // Direction in pixel coordinates with the row index growing downwards.
  const vx = Math.cos(a);
  const vy = -Math.sin(a);
  const gxx = sx * sx;
  const gyy = sy * sy;
  const gxy = sx * sy * g;
  if (geometry === 'line') return Math.sqrt(gxx * vx * vx + 2 * gxy * vx * vy + gyy * vy * vy);
  // 'normal': a unit frequency along v, spacing 1/√(vᵀG⁻¹v) per unit period in px.
  const det = gxx * gyy - gxy * gxy;
  const q = (gyy * vx * vx - 2 * gxy * vx * vy + gxx * vy * vy) / det;
  return 1 / Math.sqrt(q);
}

/**
 * A length in pixels expressed with its uncertainty budget: the one place where a calibration is
 * applied to a result.
 *
 * @param lengthPx the length (period, thickness...) in px
 * @param u its standard uncertainties in px by part
 * @param calibration the pixel size (validated), or null: the budget stays in px
 * @param options geometry and direction of the length (default 'line' at 0°), coverage factor k (default 2)
 * @returns value, parts, combined standard and expanded uncertainty
 * Notes: every pixel part scales by the nm per px along the length's direction; the calibration
 * part is value × the calibration's relative standard uncertainty. The parts are taken as
 * independent and combined in quadrature (GUM §5.1.2); U = k·u_c (GUM §6.2.1).
 * Reference: GUM, JCGM 100:2008.
 */
export function expressLength(
  lengthPx: number,
  u: UncertaintyPx,
  calibration: Calibration | null,
  options: { geometry?: LengthGeometry; angleDeg?: number; k?: number } = {},
): UncertaintyBudget {
  if (typeof lengthPx !== 'number' || Number.isNaN(lengthPx)) throw new RangeError(`lengthPx must be a number, got ${String(lengthPx)}`);
  for (const key of ['statisticalPx', 'localVariationPx', 'methodPx'] as const) {
    const v = u?.[key];
    if (typeof v !== 'number' || !(v >= 0)) throw new RangeError(`u.${key} must be a non-negative number, got ${String(v)}`);
  }
  const k = checkCoverageFactor(options.k ?? DEFAULT_COVERAGE_FACTOR);
  let scale = 1;
  let rel = 0;
  if (calibration) {
    checkCalibration(calibration);
    scale = nmPerPxAlong(calibration, options.geometry ?? 'line', options.angleDeg ?? 0);
    rel = calibration.relUncertainty;
  }
  const value = lengthPx * scale;
  const parts: Record<UncertaintyPart, number> = {
    statistical: u.statisticalPx * scale,
    localVariation: u.localVariationPx * scale,
    betweenImages: 0,
    method: u.methodPx * scale,
    calibration: Math.abs(value) * rel,
  };
  const combined = Math.sqrt(UNCERTAINTY_PARTS.reduce((s, p) => s + parts[p] ** 2, 0));
  return { value, unit: calibration ? 'nm' : 'px', parts, combined, k, expanded: k * combined };
}

/**
 * A periodicity expressed in nm (or px when uncalibrated) with its full budget.
 * @param p the periodicity
 * @param calibration the pixel size, or null
 * @param k coverage factor (default 2)
 * @returns the budget (see {@link expressLength})
 */
export function expressPeriod(p: Periodicity, calibration: Calibration | null, k: number = DEFAULT_COVERAGE_FACTOR): UncertaintyBudget {
  return expressLength(p.periodPx, p.u, calibration, { geometry: p.geometry, angleDeg: p.angleDeg, k });
}

/** Decimal places that show `u` to `significant` significant digits (0–10). */
export function decimalsFor(u: number, significant = 2): number {
  if (!(u > 0) || !Number.isFinite(u)) return 4;
  return Math.max(0, Math.min(10, significant - 1 - Math.floor(Math.log10(u))));
}

/**
 * "1.2503 ± 0.0041": value and uncertainty rounded to the uncertainty's second significant digit.
 * A value without a stated uncertainty (u zero, not finite, or rounding dust below 10⁻⁹ of the
 * value) is written to four significant digits and says so: "6.454 (no ±)".
 */
export function formatPlusMinus(value: number, u: number, significant = 2): string {
  if (!Number.isFinite(value)) return '–';
  if (!(u > 0) || !Number.isFinite(u) || u < 1e-9 * Math.abs(value)) return `${Number(value.toPrecision(4))} (no ±)`;
  const d = decimalsFor(u, significant);
  return `${value.toFixed(d)} ± ${u.toFixed(d)}`;
}

/** The parts a budget contains (non-zero), in the user's words: "statistical, local variation, calibration". */
export function budgetContents(b: UncertaintyBudget): string {
  const named = UNCERTAINTY_PARTS.filter((p) => b.parts[p] > 0).map((p) => UNCERTAINTY_PART_WORDS[p]);
  return named.length ? named.join(', ') : 'no stated uncertainty';
}

/**
 * A budget as one line that says what its ± contains:
 * "1.2503 ± 0.0082 nm (k = 2; statistical, local variation, calibration)".
 */
export function formatBudget(b: UncertaintyBudget): string {
  return `${formatPlusMinus(b.value, b.expanded)} ${b.unit} (k = ${Number(b.k.toPrecision(3))}; ${budgetContents(b)})`;
}

/**
 * Column names of a budget in CSV, the unit in every name: the value, the five parts, combined,
 * k and expanded ("periodNm, uStatisticalNm, uLocalVariationNm, uBetweenImagesNm, uMethodNm,
 * uCalibrationNm, uCombinedNm, coverageFactorK, expandedUncertaintyNm").
 * @param valueName name of the value column without its unit, e.g. 'period'
 * @param unit 'nm' or 'px'
 */
export function budgetCsvHeader(valueName: string, unit: 'nm' | 'px'): string[] {
  const u = unit === 'nm' ? 'Nm' : 'Px';
  return [`${valueName}${u}`, ...UNCERTAINTY_PARTS.map((p) => `u${p[0].toUpperCase()}${p.slice(1)}${u}`), `uCombined${u}`, 'coverageFactorK', `expandedUncertainty${u}`];
}

/**
 * The cells of a budget in the order of {@link budgetCsvHeader}: the value to the decimal place of
 * the third significant digit of its combined uncertainty (7 significant digits when it has none),
 * each uncertainty to 3 significant digits.
 */
export function budgetCsvCells(b: UncertaintyBudget): number[] {
  const u3 = (v: number) => (v > 0 ? Number(v.toPrecision(3)) : 0);
  const value = b.combined > 0 ? Number(b.value.toFixed(decimalsFor(b.combined, 3))) : Number(b.value.toPrecision(7));
  return [value, ...UNCERTAINTY_PARTS.map((p) => u3(b.parts[p])), u3(b.combined), b.k, u3(b.expanded)];
}

/** A budget as plain JSON with the field names of {@link budgetCsvHeader}, plus what its ± contains. */
export function budgetJson(b: UncertaintyBudget, valueName = 'value'): Record<string, number | string> {
  const names = budgetCsvHeader(valueName, b.unit);
  const cells = [b.value, ...UNCERTAINTY_PARTS.map((p) => b.parts[p]), b.combined, b.k, b.expanded];
  const out: Record<string, number | string> = {};
  names.forEach((n, i) => (out[n] = cells[i]));
  out.uncertaintyContains = budgetContents(b);
  return out;
}
