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
import { fileBytes, freshLibrary, fringeFile, fringeImage } from './helpers';

afterEach(() => vi.restoreAllMocks());

async function filledLibrary() {
  const db = await freshLibrary();
  const img = await putImage(db, { bytes: fringeFile(3), fileName: 'tactoid-07.tif', image: fringeImage(), mimeType: 'image/tiff' });
  await putImage(db, { bytes: fringeFile(4), fileName: 'film-edge.tif', image: fringeImage(), mimeType: 'image/tiff' });
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
    id: 'd1', name: 'film XRD', createdIso: '2026-01-02T00:00:00Z', patternText: '5.0 100\n5.1 120\n5.2 110\n', peaks: null,
    wavelengthNm: 0.154059292, results: { dNm: [1.24] },
  });
  await putRecipe(db, { id: 'r1', name: 'basal fringes', version: 1, json: '{"schemaVersion":1,"name":"basal fringes"}' });
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
  expect(summary).toEqual({ images: 2, measurements: 1, calibrations: 1, diffraction: 1, recipes: 1, batches: 0, batchFiles: 0, skipped: [] });

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
  expect((await listImages(target)).map((r) => r.fileName).sort()).toEqual(['already-here.tif', 'film-edge.tif', 'tactoid-07.tif']);
  db.close();
  target.close();
});

test('a file that is not a library export (or of a format version this program did not write) is refused whole', async () => {
  const { db } = await filledLibrary();
  const good = JSON.parse(await exportLibrary(db));
  const target = await freshLibrary();
  await expect(importLibrary(target, 'not json')).rejects.toThrow(/not JSON/);
  await expect(importLibrary(target, 'not json', { fileName: 'lab.json' })).rejects.toThrow(/^The library file lab\.json is not JSON/);
  await expect(importLibrary(target, '{"format":"something-else"}')).rejects.toThrow(/not a Stratameter library export/);
  await expect(importLibrary(target, JSON.stringify({ ...good, formatVersion: 99 }))).rejects.toThrow(/formatVersion 99 is newer/);
  for (const v of [0, -1, 0.5]) {
    await expect(importLibrary(target, JSON.stringify({ ...good, formatVersion: v }))).rejects.toThrow(new RegExp(`formatVersion ${v} is not a version this program wrote`));
  }
  await expect(importLibrary(target, JSON.stringify({ ...good, images: {} }))).rejects.toThrow(ImportError);
  expect(await listImages(target)).toEqual([]);
  db.close();
  target.close();
});

test('every record is checked: unusable ones are skipped with their reason and never stored, the rest imported', async () => {
  const { db } = await filledLibrary();
  const good = JSON.parse(await exportLibrary(db));
  const target = await freshLibrary();
  const bad = structuredClone(good);
  // film-edge.tif: one bit flipped, so its SHA-256 (FIPS 180-4) no longer matches
  const edge = bad.images.find((r: { fileName: string }) => r.fileName === 'film-edge.tif');
  const bytes = Buffer.from(edge.fileBase64, 'base64');
  bytes[10] ^= 1;
  edge.fileBase64 = bytes.toString('base64');
  // an empty "image", a text file as "image" (hashes made to match), an image whose size is wrong
  const text = new TextEncoder().encode('this is a note, not a micrograph');
  const sha = async (b: Uint8Array) => Buffer.from(await crypto.subtle.digest('SHA-256', b as Uint8Array<ArrayBuffer>)).toString('hex');
  const tactoid = good.images.find((r: { fileName: string }) => r.fileName === 'tactoid-07.tif');
  bad.images.push({ ...tactoid, id: 'empty', fileName: 'empty.tif', fileBase64: '', sha256Hex: await sha(new Uint8Array(0)) });
  bad.images.push({ ...tactoid, id: 'note', fileName: 'note.tif', fileBase64: Buffer.from(text).toString('base64'), sha256Hex: await sha(text) });
  bad.images.push({ ...tactoid, id: 'big', fileName: 'big.tif', width: 640 });
  bad.measurements.push({ ...good.measurements[0], id: 'm2', imageId: edge.id });
  bad.measurements.push({ ...good.measurements[0], id: 'm3', periodicities: 'none' });
  bad.calibrations.push({ ...good.calibrations[0], id: 'p2', relUncertainty: 5 });
  bad.calibrations.push({ ...good.calibrations[0], id: 'p3', relUncertainty: -1 });
  bad.calibrations.push({ ...good.calibrations[0], id: 'p4', nmPerPx: -0.02 });
  bad.recipes.push({ id: 'r2', name: 'broken', version: 1, json: '{"schemaVersion": 1, "area": {"kind": "everywhere"}}' });
  bad.recipes.push({ id: 'r3', name: 'not json', version: 1, json: '{"schemaVersion": 1,' });
  bad.diffraction.push({ ...good.diffraction[0], id: 'd2', wavelengthNm: 0 });

  const summary = await importLibrary(target, JSON.stringify(bad));
  const why = (kind: string, name: string) => summary.skipped.find((k) => k.kind === kind && k.name === name)?.reason;
  expect(why('images', 'film-edge.tif')).toMatch(/SHA-256 does not match/);
  expect(why('images', 'empty.tif')).toMatch(/the image file is empty/);
  expect(why('images', 'note.tif')).toMatch(/not a readable image \(unknown or unsupported format|not a readable image \(not a TIFF file/);
  expect(why('images', 'big.tif')).toMatch(/the record says 640 × 48 pixels but the file holds 64 × 48/);
  expect(why('measurements', 'm2')).toMatch(/its image .* was skipped/);
  expect(why('measurements', 'm3')).toMatch(/periodicities is "none"; it must be a list/);
  expect(why('calibrations', 'p2')).toMatch(/relUncertainty is 5; it must be a fraction from 0 to below 1/);
  expect(why('calibrations', 'p3')).toMatch(/relUncertainty is -1/);
  expect(why('calibrations', 'p4')).toMatch(/nmPerPx is -0\.02; it must be a positive number/);
  expect(why('recipes', 'r2')).toMatch(/json is not a usable recipe: recipe area\.kind/);
  expect(why('recipes', 'r3')).toMatch(/json is not a usable recipe: recipe \(top level\): is not valid JSON/);
  expect(why('diffraction', 'd2')).toMatch(/wavelengthNm is 0/);
  expect(summary.skipped).toHaveLength(12);
  expect(summary).toMatchObject({ images: 1, measurements: 1, calibrations: 1, diffraction: 1, recipes: 1 });
  expect((await listImages(target)).map((r) => r.fileName)).toEqual(['tactoid-07.tif']);
  expect((await listMeasurements(target)).map((m) => m.id)).toEqual(['m1']);
  expect((await listCalibrationProfiles(target)).map((p) => p.id)).toEqual(['p1']);
  db.close();
  target.close();
});

test('the thumbnail must be the size it says', async () => {
  const { db } = await filledLibrary();
  const bad = JSON.parse(await exportLibrary(db));
  bad.images[0].thumbnail.width = 3;
  const target = await freshLibrary();
  const summary = await importLibrary(target, JSON.stringify(bad));
  expect(summary.skipped[0].reason).toMatch(/thumbnail has \d+ values for 3 × \d+ pixels/);
  expect(summary.images).toBe(1);
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
  // a record newer than this program: refused, naming the field, and never stored (the usable records are)
  const third = await freshLibrary();
  const newer = { ...json, measurements: [{ ...json.measurements[0], recordVersion: 3 }] };
  const summary = await importLibrary(third, JSON.stringify(newer));
  expect(summary.skipped.map((k) => k.reason)).toEqual([expect.stringMatching(/measurements\[0\]\.recordVersion is 3, newer than this program reads \(2\)/)]);
  expect(await listMeasurements(third)).toEqual([]);
  db.close();
  other.close();
  third.close();
});
