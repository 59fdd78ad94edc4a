/**
 * Export of the whole library to one JSON text, and import of such a text back.
 *
 * The text holds every store; Blobs and byte arrays are written as base64. Import checks every
 * record (and every file's SHA-256) before it writes anything, then writes all of it in one
 * transaction.
 */
import { toBase64 } from './bytes';
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

import type { BatchFileRecord } from './records';
import { checkBatchFileRecord, checkBatchRecord, checkCalibrationProfile, checkDiffractionSet, checkImageRecord, checkRecipeRecord, isObj, shown, validateMeasurementShape } from './validate';

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

/** A record an import left out, and why. */
export interface SkippedRecord {
  /** The list it was in ('images', 'measurements', ...). */
  kind: string;
  /** Its position in that list. */
  index: number;
  /** Its id or file name, when it has one. */
  name: string | null;
  /** Why it cannot be used, in the user's terms. */
  reason: string;
}

/** How many records of each kind an import wrote, and the records it skipped. */
export interface ImportSummary {
  images: number;
  measurements: number;
  calibrations: number;
  diffraction: number;
  recipes: number;
  batches: number;
  batchFiles: number;
  /** Records that could not be used (none stored), with the reason for each. */
  skipped: SkippedRecord[];
}

/** Options of importLibrary. */
export interface ImportOptions {
  /** The library file's name, for messages. */
  fileName?: string;
}

type Obj = Record<string, unknown>;

/** Runs a record upgrade; an upgrade error (an unknown or newer record version, a bad field) becomes the reason to skip the record. */
function upgraded<T>(f: () => T): T | string {
  try {
    return f();
  } catch (e) {
    if (e instanceof RecordVersionError) return e.message;
    throw e;
  }
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

/**
 * Reads an exported library and writes its usable records into the open library (records with
 * the same id are replaced; others are kept).
 *
 * @param db the open library
 * @param json the text exportLibrary wrote
 * @param options the file's name, for messages
 * @returns how many records of each kind were written, and every record skipped with its reason
 * @throws ImportError when the file as a whole cannot be used (not JSON, not a library export, a
 *   format version this program did not write, a list that is not a list, a record nested too
 *   deeply); then nothing is written
 * Notes: every record is checked against its schema first (src/store/validate.ts): an image must
 * decode to the width, height and sample type it records and match its SHA-256, a recipe must be
 * a recipe the batch reader accepts, a pixel size and its relative uncertainty must be
 * plausible, a measurement must have its basic shape. A record that fails is skipped with its
 * reason and never stored, as is a measurement of a skipped image or a file of a skipped batch;
 * the usable records are written in one transaction.
 */
export async function importLibrary(db: LibraryDb, json: string, options: ImportOptions = {}): Promise<ImportSummary> {
  if (typeof json !== 'string') throw new TypeError(`importLibrary: expected JSON text, got ${typeof json}`);
  const file = options.fileName ? `The library file ${options.fileName}` : 'The library file';
  const need = (cond: boolean, where: string, what: string): void => {
    if (!cond) throw new ImportError(`${file} is not usable: ${where} ${what}. Nothing was imported.`);
  };
  let parsed: unknown;
  try {
    parsed = JSON.parse(json);
  } catch {
    throw new ImportError(`${file} is not JSON (it is damaged or not a library export). Nothing was imported.`);
  }
  need(isObj(parsed), 'the file', 'must hold one JSON object');
  const root = parsed as Obj;
  need(root.format === EXPORT_FORMAT, 'the file', `is not a Stratameter library export (format is ${shown(root.format)})`);
  need(typeof root.formatVersion === 'number' && root.formatVersion <= EXPORT_FORMAT_VERSION, 'formatVersion',
    `${shown(root.formatVersion)} is newer than this version of Stratameter reads (${EXPORT_FORMAT_VERSION})`);
  need(Number.isInteger(root.formatVersion) && (root.formatVersion as number) >= 1, 'formatVersion', `${shown(root.formatVersion)} is not a version this program wrote (1 to ${EXPORT_FORMAT_VERSION})`);

  const list = (key: string): unknown[] => {
    const v = root[key] ?? [];
    need(Array.isArray(v), key, 'must be a list');
    return v as unknown[];
  };
  for (const key of ['images', 'measurements', 'calibrations', 'diffraction', 'recipes', 'batches', 'batchFiles']) {
    const records = root[key];
    if (!Array.isArray(records)) continue;
    records.forEach((r, i) => need(nestingDepth(r, MAX_NESTING) <= MAX_NESTING, `${key}[${i}]`, `is nested more than ${MAX_NESTING} levels deep`));
  }

  const skipped: SkippedRecord[] = [];
  const nameOf = (o: unknown, key = 'id'): string | null => (isObj(o) && typeof o[key] === 'string' ? (o[key] as string).slice(0, 80) : null);
  const skip = (kind: string, index: number, o: unknown, reason: string, key = 'id') => skipped.push({ kind, index, name: nameOf(o, key), reason });
  /** Keeps the records of a list that pass a check, skipping the others with their reason. */
  const keep = <T>(kind: string, check: (o: unknown) => string | null): T[] =>
    list(kind).flatMap((o, i) => {
      const reason = check(o);
      if (reason) {
        skip(kind, i, o, reason);
        return [];
      }
      return [o as T];
    });

  const images: ImageRecord[] = [];
  const skippedImageIds = new Set<string>();
  const rawImages = list('images');
  for (let i = 0; i < rawImages.length; i++) {
    const checked = await checkImageRecord(rawImages[i]);
    if ('reason' in checked) {
      skip('images', i, rawImages[i], checked.reason, 'fileName');
      const id = nameOf(rawImages[i]);
      if (id) skippedImageIds.add(id);
    } else images.push(checked.record);
  }
  const measurements: Measurement[] = [];
  list('measurements').forEach((o, i) => {
    const where = `measurements[${i}]`;
    const reason = validateMeasurementShape(o);
    if (reason) return skip('measurements', i, o, reason);
    const imageId = (o as Obj).imageId;
    if (typeof imageId === 'string' && skippedImageIds.has(imageId) && !images.some((r) => r.id === imageId)) return skip('measurements', i, o, `its image ${imageId} was skipped`);
    const up = upgraded(() => upgradeMeasurement(o, where));
    if (typeof up === 'string') skip('measurements', i, o, up);
    else measurements.push(up);
  });
  const calibrations = keep<CalibrationProfile>('calibrations', checkCalibrationProfile);
  const diffraction = keep<DiffractionSet>('diffraction', checkDiffractionSet);
  const recipes = keep<RecipeRecord>('recipes', checkRecipeRecord);
  const batches = keep<BatchRecord>('batches', checkBatchRecord);
  const skippedBatchIds = new Set(skipped.filter((k) => k.kind === 'batches' && k.name).map((k) => k.name as string));

  const batchFiles: BatchFileRecord[] = [];
  const rawBatchFiles = list('batchFiles');
  for (let i = 0; i < rawBatchFiles.length; i++) {
    const checked = await checkBatchFileRecord(rawBatchFiles[i]);
    if ('reason' in checked) skip('batchFiles', i, rawBatchFiles[i], checked.reason, 'name');
    else if (skippedBatchIds.has(checked.record.batchId) && !batches.some((b) => b.id === checked.record.batchId)) skip('batchFiles', i, rawBatchFiles[i], `its batch ${checked.record.batchId} was skipped`, 'name');
    else {
      const r = checked.record;
      const result = r.result === null || r.result === undefined ? null : upgraded(() => upgradeFileResult(r.result, 'result'));
      if (typeof result === 'string') skip('batchFiles', i, rawBatchFiles[i], result, 'name');
      else batchFiles.push({ ...r, result });
    }
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
    skipped,
  };
}
