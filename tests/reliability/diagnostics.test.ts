import 'fake-indexeddb/auto';
import { describe, expect, test } from 'vitest';
import {
  DIAGNOSTICS_FORMAT,
  MAX_MESSAGE_CHARS,
  clearDiagnostics,
  describeError,
  diagnosticsJson,
  listDiagnostics,
  logDiagnostic,
} from '../../src/store/diagnostics';
import { exportLibrary } from '../../src/store';
import { freshLibrary } from '../store/helpers';

describe('the local diagnostics log', () => {
  test('entries keep their time, kind, message, context and stack, oldest first', async () => {
    const db = await freshLibrary();
    const err = new RangeError('region 2 × 2 is too small for a spectrum');
    await logDiagnostic(db, { kind: 'status', message: 'Could not read film.tif', context: 'open file', time: new Date('2026-03-01T10:00:02Z') });
    await logDiagnostic(db, { kind: 'error', ...describeError(err), context: 'Periods panel', time: new Date('2026-03-01T10:00:01Z') });
    const list = await listDiagnostics(db);
    expect(list.map((e) => e.timeIso)).toEqual(['2026-03-01T10:00:01.000Z', '2026-03-01T10:00:02.000Z']);
    expect(list[0]).toMatchObject({ kind: 'error', message: 'RangeError: region 2 × 2 is too small for a spectrum', context: 'Periods panel' });
    expect(list[0].stack).toMatch(/diagnostics\.test\.ts/);
    expect(list[1].stack).toBeNull();
    db.close();
  });

  test('the log is bounded: the oldest entries go first; long messages are cut', async () => {
    const db = await freshLibrary();
    for (let i = 0; i < 12; i++) {
      await logDiagnostic(db, { kind: 'worker', message: `failure ${i}`, time: new Date(Date.UTC(2026, 0, 1, 0, 0, i)) }, { maxEntries: 5 });
    }
    expect((await listDiagnostics(db)).map((e) => e.message)).toEqual(['failure 7', 'failure 8', 'failure 9', 'failure 10', 'failure 11']);
    const long = await logDiagnostic(db, { kind: 'error', message: 'x'.repeat(10_000) });
    expect(long.message.length).toBe(MAX_MESSAGE_CHARS);
    await clearDiagnostics(db);
    expect(await listDiagnostics(db)).toEqual([]);
    db.close();
  });

  test('bad arguments are refused, naming the value', async () => {
    const db = await freshLibrary();
    await expect(logDiagnostic(db, { kind: 'fatal' as never, message: 'm' })).rejects.toThrow(/kind must be one of .* got "fatal"/);
    await expect(logDiagnostic(db, { kind: 'error', message: 'm' }, { maxEntries: 0 })).rejects.toThrow(/maxEntries must be a positive integer, got 0/);
    await expect(logDiagnostic(db, { kind: 'error', message: 'm', time: new Date(NaN) })).rejects.toThrow(/valid Date/);
    db.close();
  });

  test('anything thrown gets a message: errors, strings, objects with a message, plain values', () => {
    expect(describeError(new TypeError('x is undefined')).message).toBe('TypeError: x is undefined');
    expect(describeError('quota').message).toBe('quota');
    expect(describeError({ message: 'worker failed' }).message).toBe('worker failed');
    expect(describeError(42).message).toBe('non-error value thrown: 42');
    const cyclic: Record<string, unknown> = {};
    cyclic.self = cyclic;
    expect(describeError(cyclic).message).toMatch(/non-error value thrown/);
  });

  test('the export file holds the entries and the program and browser names, nothing else; the library export holds no diagnostics', async () => {
    const db = await freshLibrary();
    await logDiagnostic(db, { kind: 'status', message: 'Could not read film.tif', context: 'open file' });
    const text = diagnosticsJson(await listDiagnostics(db), { appVersion: '0.1.0', userAgent: 'test', time: new Date('2026-03-02T00:00:00Z') });
    const o = JSON.parse(text);
    expect(Object.keys(o).sort()).toEqual(['appVersion', 'entries', 'exportedIso', 'format', 'formatVersion', 'userAgent']);
    expect(o.format).toBe(DIAGNOSTICS_FORMAT);
    expect(o.entries).toHaveLength(1);
    expect(Object.keys(o.entries[0]).sort()).toEqual(['context', 'id', 'kind', 'message', 'stack', 'timeIso']);
    expect(await exportLibrary(db)).not.toMatch(/Could not read film/);
    db.close();
  });
});
