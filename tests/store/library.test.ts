import 'fake-indexeddb/auto';
import { openDB } from 'idb';
import { afterEach, describe, expect, test, vi } from 'vitest';
import type { Measurement } from '../../src/measure/measurement';
import {
  DB_NAME,
  SCHEMA_VERSION,
  StorageFullError,
  UPGRADE_STEPS,
  deleteImage,
  findImagesBySha256,
  getImage,
  imageBytes,
  listCalibrationProfiles,
  listDiffractionSets,
  listImages,
  listMeasurements,
  openLibrary,
  putCalibrationProfile,
  putDiffractionSet,
  putImage,
  putMeasurement,
  requestPersistence,
  setImageCalibration,
  storageEstimate,
  type CalibrationProfile,
} from '../../src/store';
import { fileBytes, freshLibrary, fringeImage } from './helpers';

afterEach(() => {
  vi.restoreAllMocks();
  vi.unstubAllGlobals();
});

function measurement(id: string, imageId: string | null, createdIso: string): Measurement {
  return {
    recordVersion: 2,
    id,
    imageId,
    fileName: 'tactoid-01.tif',
    createdIso,
    tool: 'profile',
    region: { kind: 'line', x0: 0, y0: 10, x1: 63, y1: 10, widthPx: 5 },
    calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02, detail: 'typed in' },
    settings: { window: 'hann' },
    periodicities: [{ periodPx: 8, angleDeg: 0, geometry: 'normal' as const, u: { statisticalPx: 0.05, localVariationPx: 0, methodPx: 0 }, uAngleDeg: 0, strength: 40, flags: [] }],
    notes: [],
  };
}

function quotaError(): DOMException {
  return new DOMException('The quota has been exceeded.', 'QuotaExceededError');
}

describe('schema and upgrade path', () => {
  test('the database is called stratameter and the version is the number of steps', () => {
    expect(DB_NAME).toBe('stratameter');
    expect(SCHEMA_VERSION).toBe(UPGRADE_STEPS.length);
  });

  test('a version 1 database with data upgrades to the current version and keeps its records', async () => {
    const name = `upgrade-${Math.random()}`;
    const v1 = await openLibrary({ name, steps: UPGRADE_STEPS.slice(0, 1) });
    expect([...v1.objectStoreNames].sort()).toEqual(['calibrations', 'diffraction', 'images', 'measurements', 'recipes']);
    // Write through the raw connection: version 1 had no byAdded index for listImages.
    await v1.put('images', { id: 'old', fileName: 'old.tif', addedIso: '2025-01-01T00:00:00Z', sha256Hex: 'ab' } as never);
    await v1.put('measurements', measurement('m-old', 'old', '2025-01-01T00:00:01Z'));
    v1.close();

    const cur = await openLibrary({ name });
    expect(cur.version).toBe(SCHEMA_VERSION);
    expect([...cur.objectStoreNames]).toContain('batches');
    expect((await listImages(cur)).map((r) => r.id)).toEqual(['old']);
    expect((await findImagesBySha256(cur, 'ab')).map((r) => r.id)).toEqual(['old']);
    expect((await listMeasurements(cur, 'old')).map((m) => m.id)).toEqual(['m-old']);
    cur.close();
  });

  test('a later version only adds a step; older databases take every step in order', async () => {
    const name = `later-${Math.random()}`;
    const ran: number[] = [];
    const steps = [
      ...UPGRADE_STEPS,
      (db: Parameters<(typeof UPGRADE_STEPS)[number]>[0]) => {
        ran.push(UPGRADE_STEPS.length);
        (db as unknown as { createObjectStore(n: string, o: object): void }).createObjectStore('future', { keyPath: 'id' });
      },
    ];
    const db = await openLibrary({ name, steps: steps.slice(0, 1) });
    db.close();
    const next = await openLibrary({ name, steps });
    expect(next.version).toBe(UPGRADE_STEPS.length + 1);
    expect([...next.objectStoreNames]).toEqual(expect.arrayContaining(['batches', 'future']));
    expect(ran).toEqual([UPGRADE_STEPS.length]);
    next.close();
  });

  test('asking for a version with no step is refused with the version named', async () => {
    await expect(openLibrary({ name: `bad-${Math.random()}`, version: SCHEMA_VERSION + 3 })).rejects.toThrow(
      new RegExp(`schema version ${SCHEMA_VERSION + 3} has no upgrade step`),
    );
  });
});

describe('images', () => {
  test('putImage stores the original bytes, their SHA-256, the size and the calibration', async () => {
    const db = await freshLibrary();
    const bytes = fileBytes(5000);
    const rec = await putImage(db, { bytes, fileName: 'tactoid-01.tif', image: fringeImage(), mimeType: 'image/tiff' });
    const back = await getImage(db, rec.id);
    expect(back).toBeDefined();
    expect(back!.byteSize).toBe(5000);
    expect(Buffer.from(await imageBytes(back!)).equals(Buffer.from(bytes))).toBe(true);
    // The hash must be the standard SHA-256 of the file: compare with Node's implementation.
    const { createHash } = await import('node:crypto');
    expect(back!.sha256Hex).toBe(createHash('sha256').update(bytes).digest('hex'));
    expect([back!.width, back!.height, back!.bitDepth, back!.sampleKind]).toEqual([64, 48, 16, 'uint']);
    expect(back!.calibration?.nmPerPx).toBe(0.05);
    expect(back!.thumbnail.width).toBe(64);
    expect(back!.thumbnail.grey.length).toBe(64 * 48);
    db.close();
  });

  test('putImage stores a file given as a Blob as it is, with the hash computed where it was read; one of bytes or file, never both', async () => {
    const db = await freshLibrary();
    const bytes = fileBytes(3000, 5) as Uint8Array<ArrayBuffer>;
    const { createHash } = await import('node:crypto');
    const sha = createHash('sha256').update(bytes).digest('hex');
    const rec = await putImage(db, { file: new Blob([bytes], { type: 'image/tiff' }), sha256Hex: sha, fileName: 'tactoid-03.tif', image: fringeImage(), mimeType: 'image/tiff' });
    const back = await getImage(db, rec.id);
    expect(back!.byteSize).toBe(3000);
    expect(back!.sha256Hex).toBe(sha);
    expect(Buffer.from(await imageBytes(back!)).equals(Buffer.from(bytes))).toBe(true);
    await expect(putImage(db, { bytes, file: new Blob([bytes]), sha256Hex: sha, fileName: 'x.tif', image: fringeImage() })).rejects.toThrow(/exactly one of them \(got both\)/);
    await expect(putImage(db, { fileName: 'x.tif', image: fringeImage() })).rejects.toThrow(/got neither/);
    await expect(putImage(db, { file: new Blob([bytes]), fileName: 'x.tif', image: fringeImage() })).rejects.toThrow(/needs its sha256Hex/);
    await expect(putImage(db, { file: new Blob([bytes]), sha256Hex: 'ABC', fileName: 'x.tif', image: fringeImage() })).rejects.toThrow(/64 lower-case hex digits, got "ABC"/);
    db.close();
  });

  test('putImage keeps a thumbnail made elsewhere (the app\'s compute worker) as given', async () => {
    const db = await freshLibrary();
    const grey = Uint8Array.from({ length: 6 }, (_, i) => 40 * i);
    const rec = await putImage(db, { bytes: fileBytes(100), fileName: 'tactoid-02.tif', image: fringeImage(), thumbnail: { width: 3, height: 2, grey } });
    const back = await getImage(db, rec.id);
    expect([back!.thumbnail.width, back!.thumbnail.height, [...back!.thumbnail.grey]]).toEqual([3, 2, [0, 40, 80, 120, 160, 200]]);
    db.close();
  });

  test('listImages returns images oldest first; the same file is found by its hash', async () => {
    const db = await freshLibrary();
    const b = fileBytes(100, 7);
    await putImage(db, { bytes: b, fileName: 'b.png', image: fringeImage(), addedIso: '2026-01-02T00:00:00Z' });
    await putImage(db, { bytes: fileBytes(100, 8), fileName: 'a.png', image: fringeImage(), addedIso: '2026-01-01T00:00:00Z' });
    expect((await listImages(db)).map((r) => r.fileName)).toEqual(['a.png', 'b.png']);
    const again = await putImage(db, { bytes: b, fileName: 'b-copy.png', image: fringeImage() });
    expect((await findImagesBySha256(db, again.sha256Hex)).map((r) => r.fileName).sort()).toEqual(['b-copy.png', 'b.png']);
    db.close();
  });

  test('setImageCalibration replaces the calibration; an unknown id is named', async () => {
    const db = await freshLibrary();
    const rec = await putImage(db, { bytes: fileBytes(), fileName: 'x.tif', image: fringeImage() });
    const cal = { nmPerPx: 0.0312, source: 'profile' as const, relUncertainty: 0.01, detail: 'TEM 1, 40 kx' };
    await setImageCalibration(db, rec.id, cal);
    expect((await getImage(db, rec.id))!.calibration).toEqual(cal);
    await expect(setImageCalibration(db, 'nope', cal)).rejects.toThrow(/no stored image with id nope/);
    await expect(setImageCalibration(db, rec.id, { ...cal, nmPerPx: -1 })).rejects.toThrow(/got -1/);
    await expect(setImageCalibration(db, rec.id, { ...cal, relUncertainty: -0.01 })).rejects.toThrow(/relUncertainty/);
    expect((await getImage(db, rec.id))!.calibration).toEqual(cal); // nothing stored changed
    db.close();
  });

  test('recalibrating an image re-expresses its stored measurements, each with a note, and no other image\'s', async () => {
    const db = await freshLibrary();
    const a = await putImage(db, { bytes: fileBytes(), fileName: 'a.tif', image: fringeImage() });
    const b = await putImage(db, { bytes: fileBytes(), fileName: 'b.tif', image: fringeImage() });
    await putMeasurement(db, measurement('m1', a.id, '2026-01-01T00:00:00Z'));
    await putMeasurement(db, measurement('m2', b.id, '2026-01-01T00:00:01Z'));
    const cal = { nmPerPx: 0.04, source: 'manual' as const, relUncertainty: 0.02, detail: 'typed' };
    const r = await setImageCalibration(db, a.id, cal);
    expect(r.reexpressed).toBe(1);
    const m1 = (await listMeasurements(db, a.id))[0];
    expect(m1.calibration).toEqual(cal);
    expect(m1.notes.at(-1)).toMatch(/re-expressed on \d{4}-\d{2}-\d{2}: .* → 0\.0400000 nm\/px \(manual\)/);
    const m2 = (await listMeasurements(db, b.id))[0];
    expect(m2.calibration).not.toEqual(cal);
    db.close();
  });

  test('deleteImage removes the image and its measurements, and no other', async () => {
    const db = await freshLibrary();
    const a = await putImage(db, { bytes: fileBytes(), fileName: 'a.tif', image: fringeImage() });
    const b = await putImage(db, { bytes: fileBytes(), fileName: 'b.tif', image: fringeImage() });
    await putMeasurement(db, measurement('m1', a.id, '2026-01-01T00:00:00Z'));
    await putMeasurement(db, measurement('m2', a.id, '2026-01-01T00:00:01Z'));
    await putMeasurement(db, measurement('m3', b.id, '2026-01-01T00:00:02Z'));
    await putMeasurement(db, measurement('m4', null, '2026-01-01T00:00:03Z'));
    expect(await deleteImage(db, a.id)).toBe(2);
    expect(await getImage(db, a.id)).toBeUndefined();
    expect((await listMeasurements(db)).map((m) => m.id)).toEqual(['m3', 'm4']);
    expect((await listMeasurements(db, b.id)).map((m) => m.id)).toEqual(['m3']);
    db.close();
  });

  test('putImage rejects a missing file name, naming what it got', async () => {
    const db = await freshLibrary();
    await expect(putImage(db, { bytes: fileBytes(), fileName: '', image: fringeImage() })).rejects.toThrow(/fileName .* got ""/);
    db.close();
  });
});

describe('measurements, profiles and diffraction sets', () => {
  test('measurements come back whole, oldest first, per image', async () => {
    const db = await freshLibrary();
    await putMeasurement(db, measurement('late', 'img', '2026-03-01T00:00:00Z'));
    await putMeasurement(db, measurement('early', 'img', '2026-02-01T00:00:00Z'));
    const got = await listMeasurements(db, 'img');
    expect(got.map((m) => m.id)).toEqual(['early', 'late']);
    expect(got[0]).toEqual(measurement('early', 'img', '2026-02-01T00:00:00Z'));
    db.close();
  });

  test('calibration profiles are kept and listed by name; a non-positive pixel size is refused', async () => {
    const db = await freshLibrary();
    const p: CalibrationProfile = {
      id: 'p1', name: 'TEM 1, 200 kV, 50 kx', instrument: 'TEM 1', magnification: 50000, camera: 'CCD 2k', binning: 2,
      nmPerPx: 0.0421, relUncertainty: 0.015, method: 'standard', createdIso: '2026-01-01T00:00:00Z',
    };
    await putCalibrationProfile(db, { ...p, id: 'p2', name: 'A first' });
    await putCalibrationProfile(db, p);
    expect((await listCalibrationProfiles(db)).map((x) => x.name)).toEqual(['A first', 'TEM 1, 200 kV, 50 kx']);
    await expect(putCalibrationProfile(db, { ...p, nmPerPx: 0 })).rejects.toThrow(/nmPerPx must be positive, got 0/);
    db.close();
  });

  test('diffraction sets keep their peaks and wavelength; a bad wavelength is refused', async () => {
    const db = await freshLibrary();
    await putDiffractionSet(db, {
      id: 'd1', name: 'film, basal reflections', createdIso: '2026-01-01T00:00:00Z', patternText: null,
      // Cu Kα1 = 0.154059292 nm: International Tables for Crystallography Vol. C, Table 4.2.2.6.
      peaks: [{ twoThetaDeg: 7.1, intensity: 100 }], wavelengthNm: 0.154059292, results: null,
    });
    const [d] = await listDiffractionSets(db);
    expect(d.peaks).toEqual([{ twoThetaDeg: 7.1, intensity: 100 }]);
    await expect(putDiffractionSet(db, { ...d, wavelengthNm: Number.NaN })).rejects.toThrow(/wavelengthNm must be positive, got NaN/);
    db.close();
  });
});

describe('a full disk', () => {
  test('a quota failure while saving an image gives a StorageFullError and stores nothing', async () => {
    const db = await freshLibrary();
    vi.spyOn(IDBObjectStore.prototype, 'put').mockImplementation(() => {
      throw quotaError();
    });
    const err = await putImage(db, { bytes: fileBytes(2_000_000), fileName: 'huge.tif', image: fringeImage() }).catch((e) => e);
    expect(err).toBeInstanceOf(StorageFullError);
    expect(err.message).toMatch(/storage for Stratameter is full: the image huge\.tif \(1\.9 MB\) could not be saved/);
    expect(err.message).toMatch(/nothing of it was kept/);
    vi.restoreAllMocks();
    expect(await listImages(db)).toEqual([]);
    db.close();
  });

  test('a quota failure when the transaction commits also leaves no record', async () => {
    const db = await freshLibrary();
    // The failure arrives as the request's error, as browsers report a full disk at write time.
    const realPut = IDBObjectStore.prototype.put;
    vi.spyOn(IDBObjectStore.prototype, 'put').mockImplementation(function (this: IDBObjectStore, ...args: [unknown, IDBValidKey?]) {
      const req = realPut.apply(this, args);
      this.transaction.abort();
      Object.defineProperty(this.transaction, 'error', { value: quotaError() });
      return req;
    });
    const err = await putMeasurement(db, measurement('m', 'x', '2026-01-01T00:00:00Z')).catch((e) => e);
    expect(err).toBeInstanceOf(StorageFullError);
    vi.restoreAllMocks();
    expect(await listMeasurements(db)).toEqual([]);
    db.close();
  });
});

describe('storage estimate', () => {
  test('reports usage, quota and persistence from the browser, and null where there is no storage API', async () => {
    vi.stubGlobal('navigator', {});
    expect(await storageEstimate()).toBeNull();
    expect(await requestPersistence()).toBe(false);
    let persisted = false;
    vi.stubGlobal('navigator', {
      storage: {
        estimate: async () => ({ usage: 1234, quota: 10_000_000 }),
        persisted: async () => persisted,
        persist: async () => (persisted = true),
      },
    });
    expect(await storageEstimate()).toEqual({ usageBytes: 1234, quotaBytes: 10_000_000, persisted: false });
    expect(await requestPersistence()).toBe(true);
    expect((await storageEstimate())!.persisted).toBe(true);
  });
});

test('a raw idb connection sees the same layout (the schema is plain IndexedDB)', async () => {
  const name = `raw-${Math.random()}`;
  (await openLibrary({ name })).close();
  const raw = await openDB(name);
  // Later schema steps may add stores; these are the ones the library's API relies on.
  expect([...raw.objectStoreNames]).toEqual(expect.arrayContaining(['batches', 'calibrations', 'diffraction', 'images', 'measurements', 'recipes']));
  expect(raw.version).toBe(SCHEMA_VERSION);
  expect([...raw.transaction('images').store.indexNames].sort()).toEqual(['byAdded', 'bySha256']);
  raw.close();
});
