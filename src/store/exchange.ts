/**
 * Export of the whole library to one JSON text, and import of such a text back.
 *
 * The text holds every store; Blobs and byte arrays are written as base64. Import checks every
 * record (and every file's SHA-256) before it writes anything, then writes all of it in one
 * transaction.
 */
import type { SampleKind } from '../image/grey-image';
import { fromBase64, sha256Hex, toBase64 } from './bytes';
import { LibraryError, saveInOneTransaction } from './library';
import type {
  BatchRecord,
  CalibrationProfile,
  DiffractionSet,
  ImageRecord,
  Measurement,
  RecipeRecord,
} from './records';
import { SCHEMA_VERSION, type LibraryDb } from './schema';
import { RecordVersionError, upgradeMeasurement } from '../measure/record-version';
import { upgradeFileResult } from '../batch/run';

/** Runs a record upgrade, turning its error into an ImportError that names the record. */
function upgraded<T>(f: () => T): T {
  try {
    return f();
  } catch (e) {
    if (e instanceof RecordVersionError) throw new ImportError(`The library file is not usable: ${e.message}. Nothing was imported.`);
    throw e;
  }
}
import type { BatchFileRecord } from './batches';

/** The `format` field of an exported library. */
export const EXPORT_FORMAT = 'stratameter-library';
/**
 * Version of the export layout. 2: measurement records of version 2 (pixels with their
 * uncertainty parts, calibration applied late). Version-1 files are read and their records upgraded.
 */
export const EXPORT_FORMAT_VERSION = 2;

/** An image as it appears in the export: bytes as base64. */
export interface ExportedImage extends Omit<ImageRecord, 'file' | 'thumbnail'> {
  fileBase64: string;
  thumbnail: { width: number; height: number; greyBase64: string };
}

/** A batch's queued file as it appears in the export: the original bytes and the figure as base64. */
export interface ExportedBatchFile extends Omit<BatchFileRecord, 'file' | 'figurePng'> {
  fileBase64: string;
  figurePngBase64: string | null;
}

/** The layout of an exported library. */
export interface LibraryExport {
  format: typeof EXPORT_FORMAT;
  formatVersion: number;
  schemaVersion: number;
  exportedIso: string;
  images: ExportedImage[];
  measurements: Measurement[];
  calibrations: CalibrationProfile[];
  diffraction: DiffractionSet[];
  recipes: RecipeRecord[];
  batches: BatchRecord[];
  /** Absent in exports made before batch files were stored (read as none). */
  batchFiles: ExportedBatchFile[];
}

/** The import found a problem; nothing was written. */
export class ImportError extends LibraryError {
  override name = 'ImportError';
}

/**
 * Writes the whole library as one JSON text.
 *
 * @param db the open library
 * @returns JSON text in the LibraryExport layout
 */
export async function exportLibrary(db: LibraryDb): Promise<string> {
  const tx = db.transaction(['images', 'measurements', 'calibrations', 'diffraction', 'recipes', 'batches', 'batchFiles'], 'readonly');
  const [images, measurements, calibrations, diffraction, recipes, batches, batchFiles] = await Promise.all([
    tx.objectStore('images').getAll(),
    tx.objectStore('measurements').getAll(),
    tx.objectStore('calibrations').getAll(),
    tx.objectStore('diffraction').getAll(),
    tx.objectStore('recipes').getAll(),
    tx.objectStore('batches').getAll(),
    tx.objectStore('batchFiles').getAll(),
  ]);
  await tx.done;
  const exportedBatchFiles: ExportedBatchFile[] = [];
  for (const rec of batchFiles) {
    const { file, figurePng, ...rest } = rec;
    exportedBatchFiles.push({
      ...rest,
      fileBase64: toBase64(new Uint8Array(await file.arrayBuffer())),
      figurePngBase64: figurePng ? toBase64(figurePng) : null,
    });
  }
  const exportedImages: ExportedImage[] = [];
  for (const rec of images) {
    const { file, thumbnail, ...rest } = rec;
    exportedImages.push({
      ...rest,
      fileBase64: toBase64(new Uint8Array(await file.arrayBuffer())),
      thumbnail: { width: thumbnail.width, height: thumbnail.height, greyBase64: toBase64(thumbnail.grey) },
    });
  }
  const out: LibraryExport = {
    format: EXPORT_FORMAT,
    formatVersion: EXPORT_FORMAT_VERSION,
    schemaVersion: SCHEMA_VERSION,
    exportedIso: new Date().toISOString(),
    images: exportedImages,
    measurements,
    calibrations,
    diffraction,
    recipes,
    batches,
    batchFiles: exportedBatchFiles,
  };
  try {
    return JSON.stringify(out);
  } catch (e) {
    if (!(e instanceof RangeError)) throw e;
    const mb = images.reduce((sum, r) => sum + r.byteSize, 0) / 1048576;
    throw new LibraryError(
      `The library is too large to export as one file (${mb.toFixed(0)} MB of original images; ` +
        'a browser text holds about 500 MB). Export it in parts: delete some images after a first export, then export again.',
    );
  }
}

/** How many records of each kind an import wrote. */
export interface ImportSummary {
  images: number;
  measurements: number;
  calibrations: number;
  diffraction: number;
  recipes: number;
  batches: number;
  batchFiles: number;
}

type Obj = Record<string, unknown>;

function isObj(v: unknown): v is Obj {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function need(cond: boolean, where: string, what: string): void {
  if (!cond) throw new ImportError(`The library file is not usable: ${where} ${what}. Nothing was imported.`);
}

function str(o: Obj, key: string, where: string, allowEmpty = false): string {
  const v = o[key];
  need(typeof v === 'string' && (allowEmpty || v.length > 0), `${where}.${key}`, 'must be a non-empty text');
  return v as string;
}

function num(o: Obj, key: string, where: string, positive = false): number {
  const v = o[key];
  need(typeof v === 'number' && Number.isFinite(v) && (!positive || v > 0), `${where}.${key}`, positive ? 'must be a positive number' : 'must be a number');
  return v as number;
}

function list(o: Obj, key: string): unknown[] {
  const v = o[key] ?? [];
  need(Array.isArray(v), key, 'must be a list');
  return v as unknown[];
}

function calibrationOk(v: unknown, where: string): void {
  if (v === null) return;
  need(isObj(v), where, 'must be a calibration or null');
  num(v as Obj, 'nmPerPx', where, true);
  num(v as Obj, 'relUncertainty', where);
  str(v as Obj, 'source', where);
}

/** A value for a message: numbers and short texts as written, lists and objects by kind only (a deeply nested value would overflow JSON.stringify). */
function shown(v: unknown): string {
  if (Array.isArray(v)) return 'a list';
  if (isObj(v)) return 'an object';
  const s = JSON.stringify(v) ?? String(v);
  return s.length > 60 ? `${s.slice(0, 57)}...` : s;
}

/**
 * Deepest nesting of lists and objects accepted in an imported record. Our own records are less
 * than 10 deep; a deeper one cannot be stored (structured cloning recurses and overflows the stack).
 */
const MAX_NESTING = 64;

/** Nesting depth of a JSON value (a number or text is 0), counted without recursion, stopping above `limit`. */
function nestingDepth(v: unknown, limit: number): number {
  let deepest = 0;
  const stack: [unknown, number][] = [[v, 0]];
  while (stack.length > 0) {
    const [x, d] = stack.pop()!;
    if (typeof x !== 'object' || x === null) continue;
    const depth = d + 1;
    if (depth > deepest) deepest = depth;
    if (deepest > limit) return deepest;
    for (const c of Array.isArray(x) ? x : Object.values(x)) if (typeof c === 'object' && c !== null) stack.push([c, depth]);
  }
  return deepest;
}

const SAMPLE_KINDS: SampleKind[] = ['uint', 'int', 'float'];

/**
 * Reads an exported library and writes its records into the open library (records with the same
 * id are replaced; others are kept).
 *
 * @param db the open library
 * @param json the text exportLibrary wrote
 * @returns how many records of each kind were written
 * Notes: everything is checked first (layout, types, base64, every file's SHA-256); one bad
 * record rejects the whole file with an ImportError naming it, and nothing is written.
 */
export async function importLibrary(db: LibraryDb, json: string): Promise<ImportSummary> {
  if (typeof json !== 'string') throw new TypeError(`importLibrary: expected JSON text, got ${typeof json}`);
  let parsed: unknown;
  try {
    parsed = JSON.parse(json);
  } catch (e) {
    throw new ImportError(`The library file is not JSON (${(e as Error).message}). Nothing was imported.`);
  }
  need(isObj(parsed), 'the file', 'must hold one JSON object');
  const root = parsed as Obj;
  need(root.format === EXPORT_FORMAT, 'the file', `is not a Stratameter library export (format is ${shown(root.format)})`);
  need(typeof root.formatVersion === 'number' && root.formatVersion <= EXPORT_FORMAT_VERSION, 'formatVersion',
    `${shown(root.formatVersion)} is newer than this version of Stratameter reads (${EXPORT_FORMAT_VERSION})`);

  for (const key of ['images', 'measurements', 'calibrations', 'diffraction', 'recipes', 'batches', 'batchFiles']) {
    const records = root[key];
    if (!Array.isArray(records)) continue;
    records.forEach((r, i) => need(nestingDepth(r, MAX_NESTING) <= MAX_NESTING, `${key}[${i}]`, `is nested more than ${MAX_NESTING} levels deep`));
  }

  const images: ImageRecord[] = [];
  const rawImages = list(root, 'images');
  for (let i = 0; i < rawImages.length; i++) {
    const where = `images[${i}]`;
    const o = rawImages[i];
    need(isObj(o), where, 'must be an object');
    const r = o as Obj;
    const id = str(r, 'id', where);
    const fileName = str(r, 'fileName', where);
    str(r, 'addedIso', where);
    const width = num(r, 'width', where, true);
    const height = num(r, 'height', where, true);
    num(r, 'bitDepth', where, true);
    need(SAMPLE_KINDS.includes(r.sampleKind as SampleKind), `${where}.sampleKind`, `must be one of ${SAMPLE_KINDS.join(', ')}`);
    calibrationOk(r.calibration ?? null, `${where}.calibration`);
    let bytes: Uint8Array;
    try {
      bytes = fromBase64(str(r, 'fileBase64', where, true));
    } catch (e) {
      throw new ImportError(`The library file is not usable: ${where}.fileBase64 (${fileName}) is damaged: ${(e as Error).message}. Nothing was imported.`);
    }
    const hash = await sha256Hex(bytes);
    need(hash === r.sha256Hex, where, `(${fileName}): the file's SHA-256 does not match the one recorded, so the file is damaged`);
    need(isObj(r.thumbnail), `${where}.thumbnail`, 'must be an object');
    const t = r.thumbnail as Obj;
    const tw = num(t, 'width', `${where}.thumbnail`, true);
    const th = num(t, 'height', `${where}.thumbnail`, true);
    let grey: Uint8Array;
    try {
      grey = fromBase64(str(t, 'greyBase64', `${where}.thumbnail`, true));
    } catch (e) {
      throw new ImportError(`The library file is not usable: ${where}.thumbnail is damaged: ${(e as Error).message}. Nothing was imported.`);
    }
    need(grey.length === tw * th, `${where}.thumbnail`, `has ${grey.length} values for ${tw} × ${th} pixels`);
    const { fileBase64: _f, thumbnail: _t, ...rest } = r;
    const mimeType = typeof r.mimeType === 'string' ? r.mimeType : '';
    images.push({
      ...(rest as unknown as Omit<ImageRecord, 'file' | 'thumbnail'>),
      id,
      fileName,
      width,
      height,
      mimeType,
      byteSize: bytes.byteLength,
      calibration: (r.calibration ?? null) as ImageRecord['calibration'],
      file: new Blob([bytes as Uint8Array<ArrayBuffer>], { type: mimeType }),
      thumbnail: { width: tw, height: th, grey },
    });
  }

  const measurements = list(root, 'measurements').map((o, i) => {
    const where = `measurements[${i}]`;
    need(isObj(o), where, 'must be an object');
    const m = o as Obj;
    str(m, 'id', where);
    need(m.imageId === null || typeof m.imageId === 'string', `${where}.imageId`, 'must be a text or null');
    str(m, 'tool', where);
    str(m, 'createdIso', where);
    need(Array.isArray(m.periodicities), `${where}.periodicities`, 'must be a list');
    calibrationOk(m.calibration ?? null, `${where}.calibration`);
    return upgraded(() => upgradeMeasurement(m, where));
  });
  const calibrations = list(root, 'calibrations').map((o, i) => {
    const where = `calibrations[${i}]`;
    need(isObj(o), where, 'must be an object');
    const p = o as Obj;
    str(p, 'id', where);
    str(p, 'name', where);
    num(p, 'nmPerPx', where, true);
    num(p, 'relUncertainty', where);
    return p as unknown as CalibrationProfile;
  });
  const diffraction = list(root, 'diffraction').map((o, i) => {
    const where = `diffraction[${i}]`;
    need(isObj(o), where, 'must be an object');
    const d = o as Obj;
    str(d, 'id', where);
    num(d, 'wavelengthNm', where, true);
    return d as unknown as DiffractionSet;
  });
  const recipes = list(root, 'recipes').map((o, i) => {
    const where = `recipes[${i}]`;
    need(isObj(o), where, 'must be an object');
    const r = o as Obj;
    str(r, 'id', where);
    str(r, 'json', where);
    return r as unknown as RecipeRecord;
  });
  const batches = list(root, 'batches').map((o, i) => {
    const where = `batches[${i}]`;
    need(isObj(o), where, 'must be an object');
    str(o as Obj, 'id', where);
    return o as unknown as BatchRecord;
  });

  const batchFiles: BatchFileRecord[] = [];
  const rawBatchFiles = list(root, 'batchFiles');
  for (let i = 0; i < rawBatchFiles.length; i++) {
    const where = `batchFiles[${i}]`;
    const o = rawBatchFiles[i];
    need(isObj(o), where, 'must be an object');
    const r = o as Obj;
    str(r, 'id', where);
    str(r, 'batchId', where);
    const name = str(r, 'name', where);
    str(r, 'status', where);
    let bytes: Uint8Array;
    let figure: Uint8Array | null = null;
    try {
      bytes = fromBase64(str(r, 'fileBase64', where, true));
      if (r.figurePngBase64 !== null && r.figurePngBase64 !== undefined) figure = fromBase64(str(r, 'figurePngBase64', where, true));
    } catch (e) {
      throw new ImportError(`The library file is not usable: ${where} (${name}) is damaged: ${(e as Error).message}. Nothing was imported.`);
    }
    need((await sha256Hex(bytes)) === r.sha256Hex, where, `(${name}): the file's SHA-256 does not match the one recorded, so the file is damaged`);
    const { fileBase64: _f, figurePngBase64: _p, ...rest } = r;
    const result = r.result === null || r.result === undefined ? null : upgraded(() => upgradeFileResult(r.result, `${where}.result`));
    batchFiles.push({
      ...(rest as unknown as Omit<BatchFileRecord, 'file' | 'figurePng'>),
      result,
      byteSize: bytes.byteLength,
      file: new Blob([bytes as Uint8Array<ArrayBuffer>]),
      figurePng: figure,
    });
  }

  const bytesTotal = images.reduce((s, r) => s + r.byteSize, 0);
  await saveInOneTransaction(
    db,
    ['images', 'measurements', 'calibrations', 'diffraction', 'recipes', 'batches', 'batchFiles'],
    `the imported library (${images.length} images, ${(bytesTotal / 1048576).toFixed(1)} MB)`,
    async (tx) => {
      for (const r of images) await tx.objectStore('images').put(r);
      for (const r of measurements) await tx.objectStore('measurements').put(r);
      for (const r of calibrations) await tx.objectStore('calibrations').put(r);
      for (const r of diffraction) await tx.objectStore('diffraction').put(r);
      for (const r of recipes) await tx.objectStore('recipes').put(r);
      for (const r of batches) await tx.objectStore('batches').put(r);
      for (const r of batchFiles) await tx.objectStore('batchFiles').put(r);
    },
  );
  return {
    images: images.length,
    measurements: measurements.length,
    calibrations: calibrations.length,
    diffraction: diffraction.length,
    recipes: recipes.length,
    batches: batches.length,
    batchFiles: batchFiles.length,
  };
}
