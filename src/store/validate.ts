/**
 * Checks of library records coming from outside (an imported library file): each function says
 * why a record cannot be used, in the user's terms, or builds the record to store. A record that
 * fails is skipped with its reason; nothing unusable reaches the store.
 */
import { parseRecipe, RecipeError } from '../batch/recipe';
import { decodeImage, ImageReadError } from '../image/decode';
import type { CalibrationSource, SampleKind } from '../image/grey-image';
import { parsePattern } from '../diffraction/pattern';
import { fromBase64, sha256Hex } from './bytes';
import type { BatchFileRecord } from './records';
import type { ImageRecord } from './records';

type Obj = Record<string, unknown>;

/** True for a plain object (not null, not a list). */
export function isObj(v: unknown): v is Obj {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** A value for a message: numbers and short texts as written, lists and objects by kind only (a deeply nested value would overflow JSON.stringify). */
export function shown(v: unknown): string {
  if (Array.isArray(v)) return 'a list';
  if (isObj(v)) return 'an object';
  if (typeof v === 'number' && !Number.isFinite(v)) return 'a number too large to hold';
  const s = JSON.stringify(v) ?? String(v);
  return s.length > 60 ? `${s.slice(0, 57)}...` : s;
}

/** A reason a record cannot be used. */
export class RecordProblem extends Error {
  override name = 'RecordProblem';
}

/** Stops a check: "<where> <what>", or "<where><what>" when where ends with a dot (a field path). */
function problem(where: string, what: string): never {
  throw new RecordProblem(where.endsWith('.') ? `${where}${what}` : `${where} ${what}`);
}

function text(o: Obj, key: string, allowEmpty = false): string {
  const v = o[key];
  if (typeof v !== 'string' || (!allowEmpty && v.length === 0)) problem(key, `is ${shown(v)}; it must be a non-empty text`);
  return v as string;
}

function finite(o: Obj, key: string, check: (v: number) => boolean = () => true, rule = 'a number'): number {
  const v = o[key];
  if (typeof v !== 'number' || !Number.isFinite(v) || !check(v)) problem(key, `is ${shown(v)}; it must be ${rule}`);
  return v as number;
}

const SAMPLE_KINDS: SampleKind[] = ['uint', 'int', 'float'];
const CALIBRATION_SOURCES: CalibrationSource[] = ['metadata', 'manual', 'scale-bar', 'standard', 'profile'];
const ISO_TIME = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:\d{2})?$/;

function isoTime(o: Obj, key: string): string {
  const v = text(o, key);
  if (!ISO_TIME.test(v) || Number.isNaN(Date.parse(v))) problem(key, `is ${shown(v)}; it must be an ISO 8601 time`);
  return v;
}

/** Relative standard uncertainty: a fraction from 0 to below 1 (5 % is 0.05). */
function relUncertainty(o: Obj, key: string): number {
  return finite(o, key, (v) => v >= 0 && v < 1, 'a fraction from 0 to below 1 (5 % is 0.05)');
}

/** Checks a calibration (or null). */
function calibration(v: unknown, where: string): void {
  if (v === null || v === undefined) return;
  if (!isObj(v)) problem(where, `is ${shown(v)}; it must be a calibration or null`);
  const c = v as Obj;
  try {
    finite(c, 'nmPerPx', (x) => x > 0, 'a positive number of nm per pixel');
    if (c.nmPerPxY !== undefined) finite(c, 'nmPerPxY', (x) => x > 0, 'a positive number of nm per pixel');
    relUncertainty(c, 'relUncertainty');
    if (!CALIBRATION_SOURCES.includes(c.source as CalibrationSource)) problem('source', `is ${shown(c.source)}; it must be one of ${CALIBRATION_SOURCES.join(', ')}`);
  } catch (e) {
    if (e instanceof RecordProblem) problem(`${where}.`, e.message);
    throw e;
  }
}

/** Every number inside a value is finite (a JSON number too large to hold reads as Infinity). */
function allFinite(v: unknown, where: string): void {
  const stack: [unknown, string][] = [[v, where]];
  while (stack.length) {
    const [x, path] = stack.pop()!;
    if (typeof x === 'number' && !Number.isFinite(x)) problem(path, 'holds a number too large to hold');
    if (typeof x === 'object' && x !== null) {
      if (Array.isArray(x)) x.forEach((c, i) => stack.push([c, `${path}[${i}]`]));
      else for (const [k, c] of Object.entries(x)) stack.push([c, `${path}.${k}`]);
    }
  }
}

/**
 * The basic shape of a measurement record: an object with a non-empty id and tool, an image id
 * (text or null), a creation time, a list of periodicities (each an object with a finite
 * positive periodPx), a valid calibration or null, and only finite numbers anywhere.
 *
 * @param m - the record as read from JSON.
 * @returns null when the shape is usable, else the reason in the user's terms.
 */
export function validateMeasurementShape(m: unknown): string | null {
  try {
    if (!isObj(m)) problem('the record', `is ${shown(m)}, not an object`);
    const o = m as Obj;
    text(o, 'id');
    text(o, 'tool');
    if (o.imageId !== null && typeof o.imageId !== 'string') problem('imageId', `is ${shown(o.imageId)}; it must be a text or null`);
    text(o, 'createdIso');
    if (!Array.isArray(o.periodicities)) problem('periodicities', `is ${shown(o.periodicities)}; it must be a list`);
    (o.periodicities as unknown[]).forEach((p, i) => {
      if (!isObj(p)) problem(`periodicities[${i}]`, `is ${shown(p)}, not a periodicity`);
      try {
        finite(p as Obj, 'periodPx', (v) => v > 0, 'a positive number of pixels');
      } catch (e) {
        if (e instanceof RecordProblem) problem(`periodicities[${i}].`, e.message);
        throw e;
      }
    });
    calibration(o.calibration, 'calibration');
    allFinite(o, 'the record');
    return null;
  } catch (e) {
    if (e instanceof RecordProblem) return e.message;
    throw e;
  }
}

/** Runs a check and gives its reason, or null. */
function reasonOf(check: () => void): string | null {
  try {
    check();
    return null;
  } catch (e) {
    if (e instanceof RecordProblem || e instanceof RecipeError) return e.message;
    throw e;
  }
}

/** Budget for decoding an imported image to check it (the default pixel budget). */
export interface ImageCheckOptions {
  /** Largest image decoded to check it (pixels); default the decoder's default. */
  maxPixels?: number;
}

/**
 * Checks an exported image record and builds the record to store: its file decodes as an image
 * of the recorded width, height, bit depth and sample kind, its SHA-256 matches, its thumbnail
 * is the size it says, its calibration is valid.
 *
 * @param o - the record as read from the export (file and thumbnail as base64).
 * @param options - the decoding budget.
 * @returns the image record, or the reason it cannot be used.
 */
export async function checkImageRecord(o: unknown, options: ImageCheckOptions = {}): Promise<{ record: ImageRecord } | { reason: string }> {
  let bytes: Uint8Array = new Uint8Array(0);
  let grey: Uint8Array = new Uint8Array(0);
  let r: Obj = {};
  let width = 0;
  let height = 0;
  let fileName = '';
  const shape = reasonOf(() => {
    if (!isObj(o)) problem('the record', `is ${shown(o)}, not an object`);
    r = o as Obj;
    text(r, 'id');
    fileName = text(r, 'fileName');
    isoTime(r, 'addedIso');
    width = finite(r, 'width', (v) => Number.isInteger(v) && v > 0, 'a positive whole number of pixels');
    height = finite(r, 'height', (v) => Number.isInteger(v) && v > 0, 'a positive whole number of pixels');
    finite(r, 'bitDepth', (v) => v === 8 || v === 16 || v === 32, '8, 16 or 32');
    if (!SAMPLE_KINDS.includes(r.sampleKind as SampleKind)) problem('sampleKind', `is ${shown(r.sampleKind)}; it must be one of ${SAMPLE_KINDS.join(', ')}`);
    calibration(r.calibration ?? null, 'calibration');
    if (r.mimeType !== undefined && typeof r.mimeType !== 'string') problem('mimeType', `is ${shown(r.mimeType)}; it must be a text`);
    try {
      bytes = fromBase64(text(r, 'fileBase64', true));
    } catch (e) {
      if (e instanceof RecordProblem) throw e;
      problem('fileBase64', 'is damaged: it is not base64 text');
    }
    if (bytes.length === 0) problem('the image file', 'is empty');
    if (!isObj(r.thumbnail)) problem('thumbnail', `is ${shown(r.thumbnail)}; it must be an object`);
    const t = r.thumbnail as Obj;
    const tw = finite(t, 'width', (v) => Number.isInteger(v) && v > 0 && v <= 4096, 'a whole number of pixels from 1 to 4096');
    const th = finite(t, 'height', (v) => Number.isInteger(v) && v > 0 && v <= 4096, 'a whole number of pixels from 1 to 4096');
    try {
      grey = fromBase64(text(t, 'greyBase64'));
    } catch (e) {
      if (e instanceof RecordProblem) problem('thumbnail.', e.message);
      problem('thumbnail', 'is damaged: it is not base64 text');
    }
    if (grey.length !== tw * th) problem('thumbnail', `has ${grey.length} values for ${tw} × ${th} pixels`);
  });
  if (shape) return { reason: shape };
  const hash = await sha256Hex(bytes);
  if (hash !== r.sha256Hex) return { reason: "the file's SHA-256 does not match the one recorded, so the file is damaged" };
  let decoded;
  try {
    decoded = decodeImage(bytes, fileName, { maxPixels: options.maxPixels, nonFinite: 'replace' });
  } catch (e) {
    if (e instanceof ImageReadError) return { reason: `the stored file is not a readable image (${e.reason})` };
    throw e;
  }
  if (decoded.width !== width || decoded.height !== height) {
    return { reason: `the record says ${width} × ${height} pixels but the file holds ${decoded.width} × ${decoded.height}` };
  }
  if (decoded.bitDepth !== r.bitDepth || decoded.sampleKind !== r.sampleKind) {
    return { reason: `the record says ${shown(r.bitDepth)}-bit ${shown(r.sampleKind)} samples but the file holds ${decoded.bitDepth}-bit ${decoded.sampleKind}` };
  }
  const { fileBase64: _f, thumbnail: _t, ...rest } = r;
  const mimeType = typeof r.mimeType === 'string' ? r.mimeType : '';
  const t = r.thumbnail as Obj;
  return {
    record: {
      ...(rest as unknown as Omit<ImageRecord, 'file' | 'thumbnail'>),
      width,
      height,
      mimeType,
      byteSize: bytes.byteLength,
      calibration: (r.calibration ?? null) as ImageRecord['calibration'],
      file: new Blob([bytes as Uint8Array<ArrayBuffer>], { type: mimeType }),
      thumbnail: { width: t.width as number, height: t.height as number, grey },
    },
  };
}

/**
 * Checks a calibration profile: id, name, creation time, positive finite pixel size, a relative
 * uncertainty from 0 to below 1, a known method, positive magnification and whole binning.
 * @param o - the record.
 * @returns null when usable, else the reason.
 */
export function checkCalibrationProfile(o: unknown): string | null {
  return reasonOf(() => {
    if (!isObj(o)) problem('the record', `is ${shown(o)}, not an object`);
    const p = o as Obj;
    text(p, 'id');
    text(p, 'name');
    finite(p, 'nmPerPx', (v) => v > 0, 'a positive number of nm per pixel');
    relUncertainty(p, 'relUncertainty');
    if (p.method !== undefined && !CALIBRATION_SOURCES.includes(p.method as CalibrationSource)) problem('method', `is ${shown(p.method)}; it must be one of ${CALIBRATION_SOURCES.join(', ')}`);
    if (p.magnification !== undefined) finite(p, 'magnification', (v) => v > 0, 'a positive number');
    if (p.binning !== undefined) finite(p, 'binning', (v) => Number.isInteger(v) && v >= 1, 'a whole number, 1 or more');
    if (p.createdIso !== undefined) isoTime(p, 'createdIso');
    allFinite(p, 'the record');
  });
}

/**
 * Checks a diffraction set: id, name, a wavelength in (0, 10] nm, pattern text that reads as a
 * pattern (or null), peaks with 2θ in (0, 180) (or null), stored lines with positive d.
 * @param o - the record.
 * @returns null when usable, else the reason.
 */
export function checkDiffractionSet(o: unknown): string | null {
  return reasonOf(() => {
    if (!isObj(o)) problem('the record', `is ${shown(o)}, not an object`);
    const d = o as Obj;
    text(d, 'id');
    if (d.name !== undefined) text(d, 'name', true);
    finite(d, 'wavelengthNm', (v) => v > 0 && v <= 10, 'a wavelength in nm, above 0 and at most 10');
    if (d.patternText !== null && d.patternText !== undefined) {
      if (typeof d.patternText !== 'string') problem('patternText', `is ${shown(d.patternText)}; it must be a text or null`);
      try {
        parsePattern(d.patternText as string);
      } catch (e) {
        if (e instanceof SyntaxError || e instanceof RangeError) problem('patternText', `is not a readable pattern (${e.message})`);
        throw e;
      }
    }
    if (d.peaks !== null && d.peaks !== undefined) {
      if (!Array.isArray(d.peaks)) problem('peaks', `is ${shown(d.peaks)}; it must be a list or null`);
      (d.peaks as unknown[]).forEach((p, i) => {
        if (!isObj(p)) problem(`peaks[${i}]`, `is ${shown(p)}, not a peak`);
        const q = p as Obj;
        if (typeof q.twoThetaDeg !== 'number' || !(q.twoThetaDeg > 0 && q.twoThetaDeg < 180)) problem(`peaks[${i}].twoThetaDeg`, `is ${shown(q.twoThetaDeg)}; it must be an angle in (0, 180)`);
      });
    }
    if (d.results !== null && d.results !== undefined) {
      if (!isObj(d.results)) problem('results', `is ${shown(d.results)}; it must be an object or null`);
      const lines = (d.results as Obj).lines;
      if (lines !== undefined) {
        if (!Array.isArray(lines)) problem('results.lines', `is ${shown(lines)}; it must be a list`);
        (lines as unknown[]).forEach((l, i) => {
          if (!isObj(l) || typeof l.dNm !== 'number' || !(l.dNm > 0) || typeof l.dUncNm !== 'number' || !(l.dUncNm >= 0)) {
            problem(`results.lines[${i}]`, 'must have a positive d (dNm) and an uncertainty of 0 or more (dUncNm)');
          }
        });
      }
    }
    allFinite(d, 'the record');
  });
}

/**
 * Checks a saved recipe: id, name, a whole version of 1 or more, and recipe text that the batch
 * recipe reader accepts.
 * @param o - the record.
 * @returns null when usable, else the reason.
 */
export function checkRecipeRecord(o: unknown): string | null {
  return reasonOf(() => {
    if (!isObj(o)) problem('the record', `is ${shown(o)}, not an object`);
    const r = o as Obj;
    text(r, 'id');
    text(r, 'name');
    if (r.version !== undefined) finite(r, 'version', (v) => Number.isInteger(v) && v >= 1, 'a whole number, 1 or more');
    const json = text(r, 'json');
    try {
      parseRecipe(json);
    } catch (e) {
      if (e instanceof RecipeError) problem('json', `is not a usable recipe: ${e.message}`);
      throw e;
    }
  });
}

const RUN_STATES = ['running', 'paused', 'cancelled', 'finished'];
const FILE_STATUSES = ['queued', 'ok', 'failed'];
const HEX64 = /^[0-9a-f]{64}$/;

/**
 * Checks a batch record: id, creation time, name, recipe text the recipe reader accepts with its
 * SHA-256 form, whole counts and a known state.
 * @param o - the record.
 * @returns null when usable, else the reason.
 */
export function checkBatchRecord(o: unknown): string | null {
  return reasonOf(() => {
    if (!isObj(o)) problem('the record', `is ${shown(o)}, not an object`);
    const b = o as Obj;
    text(b, 'id');
    isoTime(b, 'createdIso');
    text(b, 'name', true);
    const json = text(b, 'recipeJson');
    try {
      parseRecipe(json);
    } catch (e) {
      if (e instanceof RecipeError) problem('recipeJson', `is not a usable recipe: ${e.message}`);
      throw e;
    }
    if (typeof b.recipeHash !== 'string' || !HEX64.test(b.recipeHash)) problem('recipeHash', `is ${shown(b.recipeHash)}; it must be 64 lower-case hex digits`);
    if (typeof b.figures !== 'boolean') problem('figures', `is ${shown(b.figures)}; it must be true or false`);
    for (const k of ['total', 'ok', 'failed']) finite(b, k, (v) => Number.isInteger(v) && v >= 0, 'a whole number, 0 or more');
    if (!RUN_STATES.includes(b.state as string)) problem('state', `is ${shown(b.state)}; it must be one of ${RUN_STATES.join(', ')}`);
    allFinite(b, 'the record');
  });
}

/**
 * Checks an exported batch file and builds the record to store: ids, position, name, status,
 * the original bytes with a matching SHA-256, a result object when finished, a PNG figure or null.
 * The original bytes need not be an image (a failed file is kept as it was).
 * @param o - the record as read from the export (file and figure as base64).
 * @returns the record, or the reason it cannot be used.
 */
export async function checkBatchFileRecord(o: unknown): Promise<{ record: BatchFileRecord } | { reason: string }> {
  let bytes: Uint8Array = new Uint8Array(0);
  let figure: Uint8Array | null = null;
  let r: Obj = {};
  const shape = reasonOf(() => {
    if (!isObj(o)) problem('the record', `is ${shown(o)}, not an object`);
    r = o as Obj;
    text(r, 'id');
    text(r, 'batchId');
    text(r, 'name');
    finite(r, 'index', (v) => Number.isInteger(v) && v >= 0, 'a whole number, 0 or more');
    if (!FILE_STATUSES.includes(r.status as string)) problem('status', `is ${shown(r.status)}; it must be one of ${FILE_STATUSES.join(', ')}`);
    if (r.status !== 'queued' && !isObj(r.result)) problem('result', `is ${shown(r.result)}; a finished file must have its result`);
    if (r.result !== null && r.result !== undefined && (!isObj(r.result) || !['ok', 'failed'].includes((r.result as Obj).status as string))) problem('result', 'is not a file result (status ok or failed)');
    try {
      bytes = fromBase64(text(r, 'fileBase64', true));
      if (r.figurePngBase64 !== null && r.figurePngBase64 !== undefined) figure = fromBase64(text(r, 'figurePngBase64'));
    } catch (e) {
      if (e instanceof RecordProblem) throw e;
      problem('the file or its figure', 'is damaged: it is not base64 text');
    }
    if (figure && !(figure.length > 8 && figure[0] === 0x89 && figure[1] === 0x50 && figure[2] === 0x4e && figure[3] === 0x47)) problem('the figure', 'is not a PNG');
    allFinite(r.result ?? null, 'result');
  });
  if (shape) return { reason: shape };
  if ((await sha256Hex(bytes)) !== r.sha256Hex) return { reason: "the file's SHA-256 does not match the one recorded, so the file is damaged" };
  const { fileBase64: _f, figurePngBase64: _p, ...rest } = r;
  return {
    record: {
      ...(rest as unknown as Omit<BatchFileRecord, 'file' | 'figurePng'>),
      byteSize: bytes.byteLength,
      file: new Blob([bytes as Uint8Array<ArrayBuffer>]),
      figurePng: figure,
    },
  };
}
