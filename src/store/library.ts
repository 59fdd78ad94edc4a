/**
 * The local library: images, measurements, instrument calibration profiles, diffraction sets
 * and recipes kept in the browser's IndexedDB (database `stratameter`).
 *
 * Pure TypeScript on idb: the same functions run in the page, in Web Workers and under
 * fake-indexeddb in Node. Nothing is cached here; every function takes the open database.
 * Every save is one transaction: it is stored whole or not at all.
 */
import { checkCalibration, RECORD_VERSION } from '../measure/measurement';
import { upgradeMeasurement } from '../measure/record-version';
import { openDB, type StoreNames } from 'idb';
import type { Calibration, GreyImage } from '../image/grey-image';
import { sha256Hex } from './bytes';
import type { CalibrationProfile, DiffractionSet, ImageRecord, Measurement, RecipeRecord, Thumbnail } from './records';
import { DB_NAME, SCHEMA_VERSION, UPGRADE_STEPS, runUpgrade, type LibraryDb, type LibrarySchema, type UpgradeStep } from './schema';
import { makeThumbnail } from './thumbnail';

export type { LibraryDb };

/** The browser refused to store more data (its quota for this site is used up). */
export class StorageFullError extends Error {
  override name = 'StorageFullError';
}

/** The library was asked for something it does not hold, or given a record it cannot take. */
export class LibraryError extends Error {
  override name = 'LibraryError';
}

/** Options for openLibrary. */
export interface OpenLibraryOptions {
  /** Database name (default `stratameter`; tests use their own). */
  name?: string;
  /** Schema version to open (default SCHEMA_VERSION). */
  version?: number;
  /** Upgrade steps (default the shipped ones; tests of the upgrade path pass their own). */
  steps?: readonly UpgradeStep[];
  /** Called when another tab wants a newer schema: the connection is closed after it. */
  onVersionChange?: () => void;
}

/**
 * Opens (creating or upgrading) the library database.
 *
 * @param options name, version and upgrade steps
 * @returns the open database handle
 */
export async function openLibrary(options: OpenLibraryOptions = {}): Promise<LibraryDb> {
  const steps = options.steps;
  const version = options.version ?? (steps ? steps.length : SCHEMA_VERSION);
  if (!Number.isInteger(version) || version < 1) throw new RangeError(`schema version must be a positive integer, got ${version}`);
  const known = (steps ?? UPGRADE_STEPS).length;
  if (version > known) throw new RangeError(`schema version ${version} has no upgrade step (the code knows ${known})`);
  const db = await openDB<LibrarySchema>(options.name ?? DB_NAME, version, {
    upgrade(database, oldVersion, newVersion, tx) {
      runUpgrade(database, tx, oldVersion, newVersion ?? version, steps);
    },
    blocking() {
      options.onVersionChange?.();
      db.close();
    },
  });
  return db;
}

function isQuotaError(e: unknown): boolean {
  if (!e || typeof e !== 'object') return false;
  const err = e as { name?: string; code?: number; inner?: unknown };
  return err.name === 'QuotaExceededError' || err.code === 22 || err.name === 'NS_ERROR_DOM_QUOTA_REACHED';
}

function formatBytes(n: number): string {
  if (n < 1024) return `${n} bytes`;
  if (n < 1024 * 1024) return `${(n / 1024).toFixed(1)} kB`;
  return `${(n / 1048576).toFixed(1)} MB`;
}

/**
 * Runs `work` inside one read-write transaction over `stores`; on any failure the transaction is
 * aborted (nothing of it is kept) and a quota failure becomes a StorageFullError naming `what`.
 */
export async function saveInOneTransaction<S extends StoreNames<LibrarySchema>, T>(
  db: LibraryDb,
  stores: S[],
  what: string,
  work: (tx: import('idb').IDBPTransaction<LibrarySchema, S[], 'readwrite'>) => Promise<T>,
): Promise<T> {
  const tx = db.transaction(stores, 'readwrite');
  try {
    const result = await work(tx);
    await tx.done;
    return result;
  } catch (e) {
    try {
      tx.abort();
    } catch {
      // already finished or aborted
    }
    await tx.done.catch(() => undefined);
    // Browsers report a full disk on the transaction (its error), the request only as aborted.
    let txError: unknown = null;
    try {
      txError = tx.error;
    } catch {
      // not readable once finished in some engines
    }
    if (isQuotaError(e) || isQuotaError(txError)) {
      throw new StorageFullError(
        `The browser's storage for Stratameter is full: ${what} could not be saved, and nothing of it was kept. ` +
          'Export the library to a file and delete images you no longer need, or free space on the disk.',
      );
    }
    throw e;
  }
}

/** What putImage needs to store an image. */
export interface NewImage {
  /** The original file as read from disk (give this or `file`). */
  bytes?: Uint8Array;
  /**
   * The original file as a Blob or File (give this or `bytes`): stored as it is, never read here,
   * so a large file is not copied on the caller's thread. Give its `sha256Hex` with it.
   */
  file?: Blob;
  /** The file's SHA-256 as lower-case hex, when already known (required with `file`; checked for form only). */
  sha256Hex?: string;
  /** Its name. */
  fileName: string;
  /** The decoded image (for size, bit depth, calibration and the thumbnail). */
  image: GreyImage;
  /** MIME type of the file, if known. */
  mimeType?: string;
  /** A smaller version of the image to make the thumbnail from (e.g. a pyramid level); default the image. */
  thumbnailFrom?: GreyImage;
  /** The thumbnail itself, made elsewhere (e.g. by the app's compute worker); when given, thumbnailFrom is not used. */
  thumbnail?: Thumbnail;
  /** Id to use (default a new random UUID). */
  id?: string;
  /** Time added (default now). */
  addedIso?: string;
}

/**
 * Stores an image with its original file, SHA-256, dimensions, calibration and a thumbnail.
 *
 * @param db the open library
 * @param input the file and its decoded image
 * @returns the stored record
 */
export async function putImage(db: LibraryDb, input: NewImage): Promise<ImageRecord> {
  const hasBytes = input.bytes !== undefined;
  const hasFile = input.file !== undefined;
  if (hasBytes === hasFile) throw new TypeError(`putImage: give the file's bytes or the file as a Blob, exactly one of them (got ${hasBytes ? 'both' : 'neither'})`);
  if (hasBytes && !(input.bytes instanceof Uint8Array)) throw new TypeError('putImage: bytes must be a Uint8Array');
  if (hasFile && !(input.file instanceof Blob)) throw new TypeError('putImage: file must be a Blob');
  if (input.sha256Hex !== undefined && !/^[0-9a-f]{64}$/.test(input.sha256Hex)) throw new TypeError(`putImage: sha256Hex must be 64 lower-case hex digits, got ${JSON.stringify(input.sha256Hex)}`);
  if (hasFile && input.sha256Hex === undefined) throw new TypeError('putImage: a file given as a Blob needs its sha256Hex (hash it where it is read, e.g. in the compute worker)');
  if (typeof input.fileName !== 'string' || !input.fileName) throw new TypeError(`putImage: fileName must be a non-empty string, got ${JSON.stringify(input.fileName)}`);
  const { image } = input;
  if (!image || !(image.width >= 1) || !(image.height >= 1)) throw new TypeError(`putImage: image for ${input.fileName} has no pixels`);
  const record: ImageRecord = {
    id: input.id ?? crypto.randomUUID(),
    fileName: input.fileName,
    addedIso: input.addedIso ?? new Date().toISOString(),
    file: input.file ?? new Blob([input.bytes as Uint8Array<ArrayBuffer>], { type: input.mimeType ?? '' }),
    mimeType: input.mimeType ?? '',
    byteSize: input.file ? input.file.size : (input.bytes as Uint8Array).byteLength,
    sha256Hex: input.sha256Hex ?? (await sha256Hex(input.bytes as Uint8Array)),
    width: image.width,
    height: image.height,
    bitDepth: image.bitDepth,
    sampleKind: image.sampleKind,
    calibration: image.calibration,
    thumbnail: input.thumbnail ?? makeThumbnail(input.thumbnailFrom ?? image),
  };
  await saveInOneTransaction(db, ['images'], `the image ${record.fileName} (${formatBytes(record.byteSize)})`, async (tx) => {
    await tx.objectStore('images').put(record);
  });
  return record;
}

/** All stored images, oldest first. */
export async function listImages(db: LibraryDb): Promise<ImageRecord[]> {
  return db.getAllFromIndex('images', 'byAdded');
}

/** One stored image, or undefined. */
export async function getImage(db: LibraryDb, id: string): Promise<ImageRecord | undefined> {
  return db.get('images', id);
}

/** Stored images whose file has this SHA-256 (the same file added before). */
export async function findImagesBySha256(db: LibraryDb, sha256: string): Promise<ImageRecord[]> {
  return db.getAllFromIndex('images', 'bySha256', sha256);
}

/** The original file bytes of a stored image. */
export async function imageBytes(record: ImageRecord): Promise<Uint8Array> {
  return new Uint8Array(await record.file.arrayBuffer());
}

/**
 * Sets (or clears) the calibration of a stored image, and re-expresses the image's stored
 * measurements with it.
 *
 * Records keep their lengths in pixels and the calibration beside them, so re-expressing one is
 * replacing its calibration: every nm value and its calibration part follow from the one place that
 * applies it. Each re-expressed record gets a note saying from which pixel size to which. Records of
 * the calibration itself (tool 'calibration') keep theirs: they are what it came from.
 *
 * @param db the open library
 * @param id the image's id
 * @param calibration the new calibration, or null
 * @returns the updated record and the number of measurements re-expressed
 */
export async function setImageCalibration(
  db: LibraryDb,
  id: string,
  calibration: Calibration | null,
): Promise<ImageRecord & { reexpressed: number }> {
  if (calibration) checkCalibration(calibration, 'calibration');
  return saveInOneTransaction(db, ['images', 'measurements'], 'the calibration', async (tx) => {
    const store = tx.objectStore('images');
    const rec = await store.get(id);
    if (!rec) throw new LibraryError(`no stored image with id ${id}`);

    rec.calibration = calibration;
    await store.put(rec);
    let reexpressed = 0;
    let cursor = await tx.objectStore('measurements').index('byImage').openCursor(id);
    while (cursor) {
      const m = cursor.value;
      if (m.tool !== 'calibration') {
        const from = m.calibration ? `${m.calibration.nmPerPx.toPrecision(6)} nm/px` : 'no calibration';
        const to = calibration ? `${calibration.nmPerPx.toPrecision(6)} nm/px (${calibration.source})` : 'no calibration (px only)';
        m.calibration = calibration;
        m.notes = [...(m.notes ?? []), `re-expressed on ${new Date().toISOString().slice(0, 10)}: ${from} → ${to}`];
        await cursor.update(m);
        reexpressed++;
      }
      cursor = await cursor.continue();
    }
    return { ...rec, reexpressed };
  });
}

/**
 * Deletes an image, every measurement made on it and its undo history, in one transaction.
 *
 * @returns the number of measurements deleted with it
 */
export async function deleteImage(db: LibraryDb, id: string): Promise<number> {
  return saveInOneTransaction(db, ['images', 'measurements', 'history'], 'the deletion', async (tx) => {
    await tx.objectStore('images').delete(id);
    await tx.objectStore('history').delete(id);
    const index = tx.objectStore('measurements').index('byImage');
    let n = 0;
    let cursor = await index.openCursor(id);
    while (cursor) {
      await cursor.delete();
      n++;
      cursor = await cursor.continue();
    }
    return n;
  });
}

function checkMeasurement(m: Measurement): void {
  if (!m || typeof m.id !== 'string' || !m.id) throw new TypeError(`measurement id must be a non-empty string, got ${JSON.stringify(m?.id)}`);
  if (m.imageId !== null && typeof m.imageId !== 'string') throw new TypeError(`measurement ${m.id}: imageId must be a string or null`);
  if (m.recordVersion !== RECORD_VERSION) throw new TypeError(`measurement ${m.id}: recordVersion must be ${RECORD_VERSION}, got ${String(m.recordVersion)}`);
  upgradeMeasurement(m, `measurement ${m.id}`); // checks the calibration and every periodicity
}

/** Stores (or replaces) a measurement. */
export async function putMeasurement(db: LibraryDb, m: Measurement): Promise<Measurement> {
  checkMeasurement(m);
  await saveInOneTransaction(db, ['measurements'], `the ${m.tool} measurement`, async (tx) => {
    await tx.objectStore('measurements').put(m);
  });
  return m;
}

/** Measurements of one image (or all measurements), oldest first, in the current record layout (damaged records left out). */
export async function listMeasurements(db: LibraryDb, imageId?: string): Promise<Measurement[]> {
  const raw = imageId === undefined ? await db.getAll('measurements') : await db.getAllFromIndex('measurements', 'byImage', imageId);
  // a record no known version can read (damaged) is left out, never shown with made-up numbers
  const all = raw.flatMap((m) => {
    try {
      return [upgradeMeasurement(m, `measurement ${m?.id}`)];
    } catch {
      return [];
    }
  });
  return all.sort((a, b) => (a.createdIso < b.createdIso ? -1 : a.createdIso > b.createdIso ? 1 : 0));
}

/** Deletes one measurement. */
export async function deleteMeasurement(db: LibraryDb, id: string): Promise<void> {
  await db.delete('measurements', id);
}

/** Stores (or replaces) an instrument calibration profile. */
export async function putCalibrationProfile(db: LibraryDb, p: CalibrationProfile): Promise<CalibrationProfile> {
  if (!p || typeof p.id !== 'string' || !p.id) throw new TypeError(`profile id must be a non-empty string, got ${JSON.stringify(p?.id)}`);
  if (!(p.nmPerPx > 0)) throw new RangeError(`profile ${p.name}: nmPerPx must be positive, got ${p.nmPerPx}`);
  if (!(p.relUncertainty >= 0)) throw new RangeError(`profile ${p.name}: relUncertainty must be ≥ 0, got ${p.relUncertainty}`);
  await saveInOneTransaction(db, ['calibrations'], `the calibration profile ${p.name}`, async (tx) => {
    await tx.objectStore('calibrations').put(p);
  });
  return p;
}

/** All instrument calibration profiles, by name. */
export async function listCalibrationProfiles(db: LibraryDb): Promise<CalibrationProfile[]> {
  return (await db.getAll('calibrations')).sort((a, b) => a.name.localeCompare(b.name));
}

/** Deletes an instrument calibration profile. */
export async function deleteCalibrationProfile(db: LibraryDb, id: string): Promise<void> {
  await db.delete('calibrations', id);
}

/** Stores (or replaces) a diffraction set. */
export async function putDiffractionSet(db: LibraryDb, d: DiffractionSet): Promise<DiffractionSet> {
  if (!d || typeof d.id !== 'string' || !d.id) throw new TypeError(`diffraction set id must be a non-empty string, got ${JSON.stringify(d?.id)}`);
  if (!(d.wavelengthNm > 0)) throw new RangeError(`diffraction set ${d.name}: wavelengthNm must be positive, got ${d.wavelengthNm}`);
  await saveInOneTransaction(db, ['diffraction'], `the diffraction set ${d.name}`, async (tx) => {
    await tx.objectStore('diffraction').put(d);
  });
  return d;
}

/** All diffraction sets, newest first. */
export async function listDiffractionSets(db: LibraryDb): Promise<DiffractionSet[]> {
  return (await db.getAll('diffraction')).sort((a, b) => (a.createdIso < b.createdIso ? 1 : -1));
}

/** Deletes a diffraction set. */
export async function deleteDiffractionSet(db: LibraryDb, id: string): Promise<void> {
  await db.delete('diffraction', id);
}

/** Stores (or replaces) a recipe. */
export async function putRecipe(db: LibraryDb, r: RecipeRecord): Promise<RecipeRecord> {
  if (!r || typeof r.id !== 'string' || !r.id) throw new TypeError(`recipe id must be a non-empty string, got ${JSON.stringify(r?.id)}`);
  try {
    JSON.parse(r.json);
  } catch {
    throw new TypeError(`recipe ${r.name}: json is not valid JSON`);
  }
  await saveInOneTransaction(db, ['recipes'], `the recipe ${r.name}`, async (tx) => {
    await tx.objectStore('recipes').put(r);
  });
  return r;
}

/** All recipes, by name. */
export async function listRecipes(db: LibraryDb): Promise<RecipeRecord[]> {
  return (await db.getAll('recipes')).sort((a, b) => a.name.localeCompare(b.name));
}

/** How much the browser lets this site store, and how much is used (null when unknown). */
export interface StorageEstimate {
  /** Bytes used by this site. */
  usageBytes: number;
  /** Bytes this site may use. */
  quotaBytes: number;
  /** True when the browser promised not to evict the data under storage pressure. */
  persisted: boolean;
}

/** Asks the browser how much storage is used and available; null where it cannot tell. */
export async function storageEstimate(): Promise<StorageEstimate | null> {
  const storage = (globalThis as { navigator?: Navigator }).navigator?.storage;
  if (!storage?.estimate) return null;
  const e = await storage.estimate();
  const persisted = storage.persisted ? await storage.persisted() : false;
  return { usageBytes: e.usage ?? 0, quotaBytes: e.quota ?? 0, persisted };
}

/** Asks the browser to keep the library under storage pressure; resolves to its answer. */
export async function requestPersistence(): Promise<boolean> {
  const storage = (globalThis as { navigator?: Navigator }).navigator?.storage;
  if (!storage?.persist) return false;
  if (storage.persisted && (await storage.persisted())) return true;
  return storage.persist();
}
