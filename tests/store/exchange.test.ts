import 'fake-indexeddb/auto';
import { afterEach, expect, test, vi } from 'vitest';
import {
  EXPORT_FORMAT,
  ImportError,
  StorageFullError,
  exportLibrary,
  getImage,
  imageBytes,
  importLibrary,
  listCalibrationProfiles,
  listDiffractionSets,
  listImages,
  listMeasurements,
  listRecipes,
  putCalibrationProfile,
  putDiffractionSet,
  putImage,
  putMeasurement,
  putRecipe,
} from '../../src/store';
import { fileBytes, freshLibrary, fringeImage } from './helpers';

afterEach(() => vi.restoreAllMocks());

async function filledLibrary() {
  const db = await freshLibrary();
  const img = await putImage(db, { bytes: fileBytes(3000, 3), fileName: 'tactoid-07.tif', image: fringeImage(), mimeType: 'image/tiff' });
  await putImage(db, { bytes: fileBytes(1200, 4), fileName: 'film-edge.png', image: fringeImage(), mimeType: 'image/png' });
  await putMeasurement(db, {
    recordVersion: 2, id: 'm1', imageId: img.id, fileName: img.fileName, createdIso: '2026-01-05T10:00:00Z', tool: 'spectrum',
    region: { kind: 'rect', x: 0, y: 0, width: 32, height: 32 },
    calibration: img.calibration, settings: { window: 'hann', sizePx: 32 },
    periodicities: [{ periodPx: 8, angleDeg: 90, geometry: 'normal' as const, u: { statisticalPx: 0.1, localVariationPx: 0, methodPx: 0 }, uAngleDeg: 0, strength: 12, flags: [] }],
    detail: { note: 'basal fringes' }, notes: ['few periods in the window'],
  });
  await putCalibrationProfile(db, {
    id: 'p1', name: 'TEM 1, 80 kx', instrument: 'TEM 1', magnification: 80000, camera: 'CMOS 4k', binning: 1,
    nmPerPx: 0.0198, relUncertainty: 0.012, method: 'standard', createdIso: '2026-01-01T00:00:00Z', notes: 'graphite (002)',
  });
  await putDiffractionSet(db, {
    id: 'd1', name: 'film XRD', createdIso: '2026-01-02T00:00:00Z', patternText: '5.0 100\n5.1 120\n', peaks: null,
    wavelengthNm: 0.154059292, results: { dNm: [1.24] },
  });
  await putRecipe(db, { id: 'r1', name: 'basal fringes', version: 1, json: '{"tool":"spectrum"}' });
  return { db, img };
}

test('export then import into an empty library gives back every record, byte for byte', async () => {
  const { db, img } = await filledLibrary();
  const json = await exportLibrary(db);
  const parsed = JSON.parse(json);
  expect(parsed.format).toBe(EXPORT_FORMAT);
  expect(parsed.images).toHaveLength(2);

  const other = await freshLibrary();
  const summary = await importLibrary(other, json);
  expect(summary).toEqual({ images: 2, measurements: 1, calibrations: 1, diffraction: 1, recipes: 1, batches: 0, batchFiles: 0 });

  const a = (await getImage(db, img.id))!;
  const b = (await getImage(other, img.id))!;
  expect(Buffer.from(await imageBytes(b)).equals(Buffer.from(await imageBytes(a)))).toBe(true);
  expect(b.file.type).toBe('image/tiff');
  const strip = ({ file: _f, ...r }: typeof a) => r;
  expect(strip(b)).toEqual(strip(a));
  expect(await listMeasurements(other)).toEqual(await listMeasurements(db));
  expect(await listCalibrationProfiles(other)).toEqual(await listCalibrationProfiles(db));
  expect(await listDiffractionSets(other)).toEqual(await listDiffractionSets(db));
  expect(await listRecipes(other)).toEqual(await listRecipes(db));
  // Exporting the imported library again gives the same content (apart from the export time).
  const again = JSON.parse(await exportLibrary(other));
  expect({ ...again, exportedIso: 0, images: again.images.sort((x: { id: string }, y: { id: string }) => x.id.localeCompare(y.id)) })
    .toEqual({ ...parsed, exportedIso: 0, images: parsed.images.sort((x: { id: string }, y: { id: string }) => x.id.localeCompare(y.id)) });
  db.close();
  other.close();
});

test('importing merges: records with the same id are replaced, others kept', async () => {
  const { db } = await filledLibrary();
  const json = await exportLibrary(db);
  const target = await freshLibrary();
  await putImage(target, { bytes: fileBytes(10, 99), fileName: 'already-here.tif', image: fringeImage() });
  await importLibrary(target, json);
  await importLibrary(target, json);
  expect((await listImages(target)).map((r) => r.fileName).sort()).toEqual(['already-here.tif', 'film-edge.png', 'tactoid-07.tif']);
  db.close();
  target.close();
});

test('a damaged export is refused whole, naming the bad record, and nothing is written', async () => {
  const { db } = await filledLibrary();
  const good = JSON.parse(await exportLibrary(db));
  const target = await freshLibrary();

  await expect(importLibrary(target, 'not json')).rejects.toThrow(/not JSON/);
  await expect(importLibrary(target, '{"format":"something-else"}')).rejects.toThrow(/not a Stratameter library export/);
  await expect(importLibrary(target, JSON.stringify({ ...good, formatVersion: 99 }))).rejects.toThrow(/formatVersion 99 is newer/);

  const flipped = structuredClone(good);
  const bytes = Buffer.from(flipped.images[1].fileBase64, 'base64');
  bytes[10] ^= 1;
  flipped.images[1].fileBase64 = bytes.toString('base64');
  const err = await importLibrary(target, JSON.stringify(flipped)).catch((e) => e);
  expect(err).toBeInstanceOf(ImportError);
  expect(err.message).toMatch(/images\[1\] \(.*\): the file's SHA-256 does not match/);

  const badMeasurement = structuredClone(good);
  badMeasurement.measurements[0].periodicities = 'none';
  await expect(importLibrary(target, JSON.stringify(badMeasurement))).rejects.toThrow(/measurements\[0\]\.periodicities must be a list/);

  const badProfile = structuredClone(good);
  badProfile.calibrations[0].nmPerPx = -0.02;
  await expect(importLibrary(target, JSON.stringify(badProfile))).rejects.toThrow(/calibrations\[0\]\.nmPerPx must be a positive number/);

  const badThumb = structuredClone(good);
  badThumb.images[0].thumbnail.width = 3;
  await expect(importLibrary(target, JSON.stringify(badThumb))).rejects.toThrow(/images\[0\]\.thumbnail has \d+ values for 3 × \d+ pixels/);

  expect(await listImages(target)).toEqual([]);
  expect(await listMeasurements(target)).toEqual([]);
  db.close();
  target.close();
});

test('a full disk halfway through an import leaves the library as it was', async () => {
  const { db } = await filledLibrary();
  const json = await exportLibrary(db);
  const target = await freshLibrary();
  const realPut = IDBObjectStore.prototype.put;
  let n = 0;
  vi.spyOn(IDBObjectStore.prototype, 'put').mockImplementation(function (this: IDBObjectStore, ...args: [unknown, IDBValidKey?]) {
    if (++n === 4) throw new DOMException('The quota has been exceeded.', 'QuotaExceededError');
    return realPut.apply(this, args);
  });
  const err = await importLibrary(target, json).catch((e) => e);
  expect(err).toBeInstanceOf(StorageFullError);
  expect(err.message).toMatch(/the imported library \(2 images/);
  vi.restoreAllMocks();
  expect(n).toBe(4);
  expect(await listImages(target)).toEqual([]);
  expect(await listMeasurements(target)).toEqual([]);
  expect(await listCalibrationProfiles(target)).toEqual([]);
  db.close();
  target.close();
});

test('a library too large for one text gives a readable message instead of a bare RangeError', async () => {
  const { db } = await filledLibrary();
  // Browsers throw RangeError ("Invalid string length") past their longest string (common practice: about 2^29 characters in Chromium).
  vi.spyOn(JSON, 'stringify').mockImplementation(() => {
    throw new RangeError('Invalid string length');
  });
  await expect(exportLibrary(db)).rejects.toThrow(/too large to export as one file \(0 MB of original images/);
  vi.restoreAllMocks();
  db.close();
});

test('exports carry their format version; a version-1 export is read and its records upgraded; a newer record version is refused', async () => {
  const { db } = await filledLibrary();
  const json = JSON.parse(await exportLibrary(db));
  expect(json.formatVersion).toBe(2);
  expect(json.measurements[0].recordVersion).toBe(2);
  // the same library as version 1 wrote it: nm bound to the calibration, one uncertainty
  const v1 = {
    ...json,
    formatVersion: 1,
    measurements: [{ ...json.measurements[0], recordVersion: undefined, periodicities: [{ periodPx: 8, periodNm: 0.4, angleDeg: 90, uncertaintyPx: 0.1, uncertaintyNm: 0.01, strength: 12 }] }],
  };
  const other = await freshLibrary();
  await importLibrary(other, JSON.stringify(v1));
  const [m] = await listMeasurements(other);
  expect(m.recordVersion).toBe(2);
  expect(m.periodicities[0].u).toEqual({ statisticalPx: 0.1, localVariationPx: 0, methodPx: 0 });
  // a record newer than this program: refused, naming the field, nothing written
  const third = await freshLibrary();
  const newer = { ...json, measurements: [{ ...json.measurements[0], recordVersion: 3 }] };
  const err = await importLibrary(third, JSON.stringify(newer)).catch((e) => e);
  expect(err).toBeInstanceOf(ImportError);
  expect(err.message).toMatch(/measurements\[0\]\.recordVersion is 3, newer than this program reads \(2\)/);
  expect(await listImages(third)).toEqual([]);
  db.close();
  other.close();
  third.close();
});
