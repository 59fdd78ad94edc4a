// Batch runs in the library: queued files with their bytes, one commit per file, resume without
// duplicates, state changes and deletion. Synthetic files with known content.
import { describe, expect, test } from 'vitest';
import { defaultRecipe } from '../../src/batch/recipe';
import type { FileResult } from '../../src/batch/run';
import { sha256Hex } from '../../src/store/bytes';
import {
  commitFileResult,
  createBatch,
  deleteBatch,
  getBatch,
  listBatchFiles,
  queuedBatchFiles,
  setBatchState,
  unfinishedBatches,
} from '../../src/store/batches';
import { fileBytes, freshLibrary } from './helpers';

function result(file: string, status: 'ok' | 'failed'): FileResult {
  return {
    file, status, reason: status === 'failed' ? 'cannot read the file: corrupt' : undefined, image: null, calibration: null,
    measurements: [], summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] }, notes: [],
  };
}

describe('batch runs in the library', () => {
  test('a batch stores every file once, with its bytes, size and SHA-256', async () => {
    const db = await freshLibrary();
    const a = fileBytes(500, 1);
    const b = fileBytes(700, 2);
    const { batch, duplicates } = await createBatch(db, { recipe: defaultRecipe(), files: [{ name: 'a.tif', bytes: a }, { name: 'b.tif', bytes: b }, { name: 'a.tif', bytes: a }] });
    expect(duplicates).toEqual(['a.tif']);
    expect(batch.total).toBe(2);
    expect(batch.state).toBe('running');
    const files = await listBatchFiles(db, batch.id);
    expect(files.map((f) => f.name)).toEqual(['a.tif', 'b.tif']);
    expect(files[1].byteSize).toBe(700);
    expect(files[1].sha256Hex).toBe(await sha256Hex(b));
    // the stored Blob gives back the original bytes
    const back = new Uint8Array(await files[0].file.arrayBuffer());
    expect(await sha256Hex(back)).toBe(await sha256Hex(a));
    // SHA-256 of "" is e3b0c442… (FIPS 180-4 test vector, as used by sha256Hex's own tests)
    expect(batch.recipeHash).toMatch(/^[0-9a-f]{64}$/);
  });

  test('the same name with other bytes is a different file', async () => {
    const db = await freshLibrary();
    const { batch, duplicates } = await createBatch(db, { recipe: defaultRecipe(), files: [{ name: 'a.tif', bytes: fileBytes(100, 1) }, { name: 'a.tif', bytes: fileBytes(100, 2) }] });
    expect(duplicates).toEqual([]);
    expect(batch.total).toBe(2);
  });

  test('each commit counts once; a second commit of the same file is ignored; the last one finishes the batch', async () => {
    const db = await freshLibrary();
    const { batch } = await createBatch(db, { recipe: defaultRecipe(), files: [1, 2, 3].map((i) => ({ name: `f${i}.tif`, bytes: fileBytes(50, i) })) });
    const files = await listBatchFiles(db, batch.id);
    const c1 = await commitFileResult(db, files[0].id, result('f1.tif', 'ok'));
    expect(c1.written).toBe(true);
    expect(c1.batch).toMatchObject({ ok: 1, failed: 0, state: 'running' });
    const again = await commitFileResult(db, files[0].id, result('f1.tif', 'failed'));
    expect(again.written).toBe(false);
    expect(again.batch).toMatchObject({ ok: 1, failed: 0 });
    // as after a reload: what is left is the queue minus the committed file
    expect((await queuedBatchFiles(db, batch.id)).map((f) => f.name)).toEqual(['f2.tif', 'f3.tif']);
    expect((await unfinishedBatches(db)).map((b) => b.id)).toEqual([batch.id]);
    await commitFileResult(db, files[1].id, result('f2.tif', 'failed'));
    const last = await commitFileResult(db, files[2].id, result('f3.tif', 'ok'), new Uint8Array([137, 80, 78, 71]));
    expect(last.batch).toMatchObject({ ok: 2, failed: 1, state: 'finished' });
    expect(await unfinishedBatches(db)).toEqual([]);
    const stored = await listBatchFiles(db, batch.id);
    expect(stored.map((f) => f.status)).toEqual(['ok', 'failed', 'ok']);
    expect(stored[1].result?.reason).toContain('corrupt');
    expect([...(stored[2].figurePng ?? [])]).toEqual([137, 80, 78, 71]);
  });

  test('pause and cancel are kept; finishing early is refused; deleting removes the files', async () => {
    const db = await freshLibrary();
    const { batch } = await createBatch(db, { recipe: defaultRecipe(), files: [{ name: 'x.png', bytes: fileBytes(10, 3) }] });
    expect((await setBatchState(db, batch.id, 'paused')).state).toBe('paused');
    await expect(setBatchState(db, batch.id, 'finished')).rejects.toThrow(/1 files left/);
    await expect(setBatchState(db, batch.id, 'done' as never)).rejects.toThrow(/"done"/);
    expect((await setBatchState(db, batch.id, 'cancelled')).state).toBe('cancelled');
    expect(await unfinishedBatches(db)).toEqual([]);
    expect(await deleteBatch(db, batch.id)).toBe(1);
    expect(await getBatch(db, batch.id)).toBeUndefined();
    expect(await listBatchFiles(db, batch.id)).toEqual([]);
  });

  test('bad arguments are refused by name', async () => {
    const db = await freshLibrary();
    await expect(createBatch(db, { recipe: defaultRecipe(), files: [] })).rejects.toThrow(/empty list/);
    await expect(createBatch(db, { recipe: defaultRecipe(), files: [{ name: '', bytes: new Uint8Array(1) }] })).rejects.toThrow(/""/);
    await expect(commitFileResult(db, 'nope/000000', result('n', 'ok'))).rejects.toThrow(/nope\/000000/);
  });
});

describe('batch files given as Blobs', () => {
  test('a Blob is hashed and stored as it is', async () => {
    const db = await freshLibrary();
    const bytes = fileBytes(300, 9);
    const blob = new Blob([bytes as Uint8Array<ArrayBuffer>]);
    const { batch } = await createBatch(db, { recipe: defaultRecipe(), files: [{ name: 'c.tif', bytes: blob }, { name: 'c.tif', bytes }] });
    // the same name, size and content, once as a Blob and once as bytes: one file
    expect(batch.total).toBe(1);
    const [rec] = await listBatchFiles(db, batch.id);
    expect(rec.byteSize).toBe(300);
    expect(rec.sha256Hex).toBe(await sha256Hex(bytes));
    expect(await sha256Hex(new Uint8Array(await rec.file.arrayBuffer()))).toBe(rec.sha256Hex);
  });
});

describe('batch runs in the library export', () => {
  test('export then import carries a batch with its queued files byte for byte', async () => {
    const { exportLibrary, importLibrary } = await import('../../src/store/exchange');
    const db = await freshLibrary();
    const a = fileBytes(900, 7);
    const { batch } = await createBatch(db, { recipe: defaultRecipe(), files: [{ name: 'a.tif', bytes: a }, { name: 'b.tif', bytes: fileBytes(300, 8) }] });
    const [first] = await queuedBatchFiles(db, batch.id);
    await commitFileResult(db, first.id, result('a.tif', 'ok'), null);
    const json = await exportLibrary(db);
    const other = await freshLibrary();
    const summary = await importLibrary(other, json);
    expect(summary.batches).toBe(1);
    expect(summary.batchFiles).toBe(2);
    const back = await listBatchFiles(other, batch.id);
    expect(back.map((f) => [f.name, f.status])).toEqual((await listBatchFiles(db, batch.id)).map((f) => [f.name, f.status]));
    // SHA-256 (FIPS 180-4) of the restored bytes equals the original's
    expect(await sha256Hex(new Uint8Array(await back[0].file.arrayBuffer()))).toBe(await sha256Hex(a));
    // a damaged file in the export is skipped with its reason (SHA-256, FIPS 180-4), the rest imported
    const broken = JSON.parse(json);
    broken.batchFiles[0].fileBase64 = broken.batchFiles[1].fileBase64;
    const third = await freshLibrary();
    const s3 = await importLibrary(third, JSON.stringify(broken));
    expect(s3.skipped).toEqual([{ kind: 'batchFiles', index: 0, name: 'a.tif', reason: "the file's SHA-256 does not match the one recorded, so the file is damaged" }]);
    expect((await listBatchFiles(third, batch.id)).map((f) => f.name)).toEqual(['b.tif']);
  });
});
