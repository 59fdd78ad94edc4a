/**
 * The library's IndexedDB schema and its upgrade path.
 *
 * The schema is built by a list of steps: step i upgrades a database from version i to
 * version i + 1. A later version adds a step at the end and raises SCHEMA_VERSION; the steps
 * already shipped are never edited, so every older database upgrades along the same path.
 */
import type { DBSchema, IDBPDatabase, IDBPTransaction, StoreNames } from 'idb';
import type {
  BatchRecord,
  CalibrationProfile,
  DiffractionSet,
  ImageRecord,
  Measurement,
  RecipeRecord,
  BatchFileRecord,
  DiagnosticEntry,
  ImageHistory,
} from './records';
import { upgradeMeasurement } from '../measure/record-version';
import { upgradeFileResult } from '../batch/run';

/** Name of the IndexedDB database. */
export const DB_NAME = 'stratameter';

/** The library's schema as idb types it. */
export interface LibrarySchema extends DBSchema {
  images: { key: string; value: ImageRecord; indexes: { bySha256: string; byAdded: string } };
  measurements: { key: string; value: Measurement; indexes: { byImage: string } };
  calibrations: { key: string; value: CalibrationProfile };
  diffraction: { key: string; value: DiffractionSet };
  recipes: { key: string; value: RecipeRecord };
  batches: { key: string; value: BatchRecord };
  batchFiles: { key: string; value: BatchFileRecord; indexes: { byBatch: string } };
  diagnostics: { key: string; value: DiagnosticEntry; indexes: { byTime: string } };
  history: { key: string; value: ImageHistory };
}

export type LibraryDb = IDBPDatabase<LibrarySchema>;
export type UpgradeTx = IDBPTransaction<LibrarySchema, StoreNames<LibrarySchema>[], 'versionchange'>;

/** One schema step: brings a database from version `index` to `index + 1`. */
export type UpgradeStep = (db: LibraryDb, tx: UpgradeTx) => void;

/** The shipped steps, oldest first. Never edit a shipped step: add a new one. */
export const UPGRADE_STEPS: readonly UpgradeStep[] = [
  // 0 → 1: images, their measurements, instrument profiles, diffraction sets, recipes.
  (db) => {
    db.createObjectStore('images', { keyPath: 'id' });
    const m = db.createObjectStore('measurements', { keyPath: 'id' });
    m.createIndex('byImage', 'imageId');
    db.createObjectStore('calibrations', { keyPath: 'id' });
    db.createObjectStore('diffraction', { keyPath: 'id' });
    db.createObjectStore('recipes', { keyPath: 'id' });
  },
  // 1 → 2: batch runs; images found by content (same file added twice) and by date.
  (db, tx) => {
    db.createObjectStore('batches', { keyPath: 'id' });
    const images = tx.objectStore('images');
    images.createIndex('bySha256', 'sha256Hex');
    images.createIndex('byAdded', 'addedIso');
  },
  // 2 → 3: the files of a batch run (original bytes, status, result), found by their batch.
  (db) => {
    const f = db.createObjectStore('batchFiles', { keyPath: 'id' });
    f.createIndex('byBatch', 'batchId');
  },
  // 3 → 4: the local diagnostics log (errors with time and context), found by time.
  (db) => {
    const d = db.createObjectStore('diagnostics', { keyPath: 'id' });
    d.createIndex('byTime', 'timeIso');
  },
  // 4 → 5: measurement record version 2 (pixels with uncertainty parts, calibration applied late):
  // every stored measurement and every batch file's result is upgraded in place.
  (_db, tx) => {
    upgradeRecordsInPlace(tx);
  },
  // 5 → 6: undo and redo of the work on an image (its history of work states), one entry per image.
  (db) => {
    db.createObjectStore('history', { keyPath: 'imageId' });
  },
];

/**
 * Rewrites every measurement and batch-file result in the current record layout (version 2),
 * inside the version-change transaction. A record that cannot be read as any known version is
 * left exactly as it was (the library's readers skip it), so one damaged record never stops the
 * library from opening.
 */
function upgradeRecordsInPlace(tx: UpgradeTx): void {
  const measurements = tx.objectStore('measurements');
  void measurements.openCursor().then(async function step(cursor): Promise<void> {
    if (!cursor) return;
    let next: Measurement | null = null;
    try {
      next = upgradeMeasurement(cursor.value, `measurement ${String(cursor.key)}`);
    } catch {
      next = null; // unreadable: kept unchanged
    }
    if (next && next !== cursor.value) await cursor.update(next);
    return step(await cursor.continue());
  });
  const files = tx.objectStore('batchFiles');
  void files.openCursor().then(async function step(cursor): Promise<void> {
    if (!cursor) return;
    const rec = cursor.value;
    if (rec.result) {
      try {
        await cursor.update({ ...rec, result: upgradeFileResult(rec.result, `batch file ${rec.name}`) });
      } catch {
        // unreadable: kept unchanged
      }
    }
    return step(await cursor.continue());
  });
}

/** The schema version this code writes: the number of steps. */
export const SCHEMA_VERSION = UPGRADE_STEPS.length;

/**
 * Runs the steps that take a database from `oldVersion` to `newVersion`.
 *
 * @param db the database being upgraded
 * @param tx the version-change transaction
 * @param oldVersion version found on disk (0 for a new database)
 * @param newVersion version being opened
 * @param steps the step list (UPGRADE_STEPS unless a test supplies its own)
 */
export function runUpgrade(
  db: LibraryDb,
  tx: UpgradeTx,
  oldVersion: number,
  newVersion: number,
  steps: readonly UpgradeStep[] = UPGRADE_STEPS,
): void {
  if (newVersion > steps.length) {
    throw new RangeError(`schema version ${newVersion} has no upgrade step (the code knows ${steps.length})`);
  }
  for (let v = oldVersion; v < newVersion; v++) steps[v](db, tx);
}
