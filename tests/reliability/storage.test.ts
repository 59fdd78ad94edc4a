// Storage faults on the library (fake-indexeddb stands in for the browser's IndexedDB): a full
// disk, a write cut off in the middle, every schema upgrade, and a whole-library round trip.
// The rule checked throughout is IndexedDB's own: a transaction is kept whole or not at all
// (W3C Indexed Database API 3.0, §2.7 "Transaction").
import 'fake-indexeddb/auto';
import { afterEach, describe, expect, test, vi } from 'vitest';
import type { Measurement } from '../../src/measure/measurement';
import { upgradeMeasurement } from '../../src/measure/record-version';
import {
  SCHEMA_VERSION,
  StorageFullError,
  UPGRADE_STEPS,
  deleteImage,
  exportLibrary,
  imageBytes,
  importLibrary,
  listImages,
  listMeasurements,
  openLibrary,
  putImage,
  putMeasurement,
  saveInOneTransaction,
  type LibraryDb,
} from '../../src/store';
import { fileBytes, freshLibrary, fringeFile, fringeImage } from '../store/helpers';

afterEach(() => vi.restoreAllMocks());

function measurement(id: string, imageId: string, fileName: string): Measurement {
  return {
    recordVersion: 2, id, imageId, fileName, createdIso: `2026-02-01T10:00:0${id.length % 10}Z`, tool: 'profile',
    region: { kind: 'line', x0: 0, y0: 10, x1: 63, y1: 10, widthPx: 5 },
    calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02, detail: 'typed in' },
    settings: { window: 'hann' },
    periodicities: [{ periodPx: 8, angleDeg: 0, geometry: 'normal' as const, u: { statisticalPx: 0.05, localVariationPx: 0, methodPx: 0 }, uAngleDeg: 0, strength: 40, flags: [] }],
    notes: ['basal fringes of a tactoid'],
  };
}

/** A library with two images and a measurement on each. */
async function filled(): Promise<{ db: LibraryDb; bytes: Uint8Array[] }> {
  const db = await freshLibrary();
  const bytes = [fringeFile(11), fringeFile(12)];
  const a = await putImage(db, { bytes: bytes[0], fileName: 'film-a.tif', image: fringeImage(), mimeType: 'image/tiff' });
  const b = await putImage(db, { bytes: bytes[1], fileName: 'film-b.tif', image: fringeImage(), mimeType: 'image/tiff' });
  await putMeasurement(db, measurement('ma', a.id, a.fileName));
  await putMeasurement(db, measurement('mb', b.id, b.fileName));
  return { db, bytes };
}

/** Everything the library holds, with the original files as byte arrays. */
async function snapshot(db: LibraryDb): Promise<unknown> {
  const images = await listImages(db);
  return {
    images: await Promise.all(images.map(async (r) => ({ ...r, file: Array.from(await imageBytes(r)) }))),
    measurements: await listMeasurements(db),
  };
}

const quota = () => new DOMException('The quota has been exceeded.', 'QuotaExceededError');

describe('a full disk during a save', () => {
  test('a clear message, no partial record, and every earlier record intact', async () => {
    const { db } = await filled();
    const before = await snapshot(db);
    // The browser refuses the write when the transaction commits (the request succeeded, the transaction fails).
    const realPut = IDBObjectStore.prototype.put;
    vi.spyOn(IDBObjectStore.prototype, 'put').mockImplementation(function (this: IDBObjectStore, ...args: [unknown, IDBValidKey?]) {
      const req = realPut.apply(this, args);
      Object.defineProperty(this.transaction, 'error', { value: quota(), configurable: true });
      this.transaction.abort();
      return req;
    });
    const err = await putImage(db, { bytes: fileBytes(3_000_000, 13), fileName: 'film-c.tif', image: fringeImage() }).catch((e) => e);
    vi.restoreAllMocks();
    expect(err).toBeInstanceOf(StorageFullError);
    expect(err.message).toMatch(/storage for Stratameter is full: the image film-c\.tif \(2\.9 MB\) could not be saved, and nothing of it was kept/);
    expect(await snapshot(db)).toEqual(before);
    db.close();
  });

  test('a full disk halfway through a batch of measurements keeps none of the batch', async () => {
    const { db } = await filled();
    const before = await snapshot(db);
    const realPut = IDBObjectStore.prototype.put;
    let n = 0;
    vi.spyOn(IDBObjectStore.prototype, 'put').mockImplementation(function (this: IDBObjectStore, ...args: [unknown, IDBValidKey?]) {
      if (++n === 3) throw quota(); // the third write of five fails
      return realPut.apply(this, args);
    });
    const [img] = await listImages(db);
    const err = await saveInOneTransaction(db, ['measurements'], 'five measurements', async (tx) => {
      for (let i = 0; i < 5; i++) await tx.objectStore('measurements').put(measurement(`new${i}`, img.id, img.fileName));
    }).catch((e) => e);
    vi.restoreAllMocks();
    expect(err).toBeInstanceOf(StorageFullError);
    expect(err.message).toMatch(/five measurements could not be saved/);
    expect(await snapshot(db)).toEqual(before);
    db.close();
  });
});

describe('a write cut off in the middle', () => {
  test('an exception after two of three writes leaves every record complete or absent (here: absent)', async () => {
    const { db } = await filled();
    const before = await snapshot(db);
    const [img] = await listImages(db);
    const err = await saveInOneTransaction(db, ['images', 'measurements'], 'an edit', async (tx) => {
      await tx.objectStore('measurements').put(measurement('half1', img.id, img.fileName));
      await tx.objectStore('images').put({ ...img, fileName: 'renamed.tif' });
      throw new Error('the tab was closed');
    }).catch((e) => e);
    expect(err.message).toBe('the tab was closed');
    expect(await snapshot(db)).toEqual(before);
    db.close();
  });

  test('a transaction aborted in the middle of deleting an image keeps the image and all its measurements', async () => {
    const { db } = await filled();
    const [img] = await listImages(db);
    await putMeasurement(db, measurement('ma2', img.id, img.fileName));
    const before = await snapshot(db);
    // The abort comes while the measurements are being deleted, after the image itself was.
    const realContinue = IDBCursor.prototype.continue;
    vi.spyOn(IDBCursor.prototype, 'continue').mockImplementation(function (this: IDBCursor, ...args: [IDBValidKey?]) {
      (this.source as IDBIndex).objectStore.transaction.abort();
      return realContinue.apply(this, args);
    });
    await expect(deleteImage(db, img.id)).rejects.toBeDefined();
    vi.restoreAllMocks();
    expect(await snapshot(db)).toEqual(before);
    db.close();
  });
});

describe('schema upgrades from every earlier version', () => {
  /** Index key paths of the shipped schema, so the records written at an old version carry them. */
  const fields = { sha256Hex: 'ab12', addedIso: '2025-06-01T00:00:00Z', imageId: 'img-0', batchId: 'batch-0' };

  for (let v = 1; v < SCHEMA_VERSION; v++) {
    test(`a version ${v} database with a record in every store opens at version ${SCHEMA_VERSION} with every record kept (measurements upgraded to record version 2)`, async () => {
      const name = `upgrade-from-${v}-${process.pid}-${Math.random()}`;
      const old = await openLibrary({ name, steps: UPGRADE_STEPS.slice(0, v) });
      expect(old.version).toBe(v);
      const written: Record<string, unknown[]> = {};
      for (const store of [...old.objectStoreNames]) {
        const records = [0, 1].map((i) => ({
          id: `${store}-${i}`, ...fields, note: `written at version ${v}`,
          bytes: Uint8Array.from({ length: 64 }, (_, k) => (k * 7 + i) & 255),
          nested: { periods: [0.62, 1.24], calibration: null },
          // measurements as record version 1 wrote them: nm bound to the calibration, one uncertainty
          ...(store === 'measurements' ? {
            tool: 'spectrum', createdIso: '2025-06-01T00:00:00Z', calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02, detail: '' },
            periodicities: [{ periodPx: 25 + i, periodNm: (25 + i) * 0.05, angleDeg: 10, uncertaintyPx: 0.01, uncertaintyNm: 0.03, strength: 9 }], notes: [],
          } : {}),
        }));
        // from version 5 on (the record-version-2 step) the library holds version 2 records only
        const stored = store === 'measurements' && v >= 5 ? records.map((r) => upgradeMeasurement(r)) : records;
        for (const r of stored) await old.put(store as never, r as never);
        written[store] = stored;
      }
      old.close();

      const cur = await openLibrary({ name });
      expect(cur.version).toBe(SCHEMA_VERSION);
      for (const [store, records] of Object.entries(written)) {
        // measurement records are upgraded to the current record version; every other record is unchanged
        const want = store === 'measurements' ? records.map((r) => upgradeMeasurement(r)) : records;
        expect(await cur.getAll(store as never), `store ${store}`).toEqual(want);
      }
      const [m0] = await listMeasurements(cur);
      expect(m0.recordVersion).toBe(2);
      expect(m0.periodicities[0].u.statisticalPx).toBe(0.01);
      // Every store of the current schema exists.
      const fresh = await freshLibrary();
      expect([...cur.objectStoreNames].sort()).toEqual([...fresh.objectStoreNames].sort());
      fresh.close();
      cur.close();
    });
  }
});

describe('export and import of the whole library', () => {
  test('round-trips the stored originals byte for byte and every result; a second export is the same text', async () => {
    const { db, bytes } = await filled();
    const first = await exportLibrary(db);
    const target = await freshLibrary();
    await importLibrary(target, first);
    expect(await snapshot(target)).toEqual(await snapshot(db));
    const images = await listImages(target);
    expect(await Promise.all(images.map((r) => imageBytes(r)))).toEqual(bytes);
    const second = await exportLibrary(target);
    const strip = (t: string) => ({ ...JSON.parse(t), exportedIso: null });
    expect(strip(second)).toEqual(strip(first));
    db.close();
    target.close();
  });
});
