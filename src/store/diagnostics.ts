/**
 * The local diagnostics log: errors the app met (uncaught exceptions, rejected promises, worker
 * failures, error messages shown to the user), each with its time and what was being done. The
 * log stays in the browser's library database; it leaves the machine only when the user exports
 * it as a file. It is not part of the library export.
 */
import type { LibraryDb } from './schema';
import type { DiagnosticEntry, DiagnosticKind } from './records';

export type { DiagnosticEntry, DiagnosticKind };

/** What logDiagnostic needs; the id and, by default, the time are made here. */
export interface NewDiagnostic {
  /** Where it came from. */
  kind: DiagnosticKind;
  /** The message (longer ones are cut). */
  message: string;
  /** What was being done (default ''). */
  context?: string;
  /** Stack trace (default null). */
  stack?: string | null;
  /** Time; default now. */
  time?: Date;
}

/** Options of logDiagnostic. */
export interface LogOptions {
  /** Most entries kept; the oldest are removed beyond it (default MAX_ENTRIES). */
  maxEntries?: number;
}

/** Most entries kept by default: the log never grows without bound. */
export const MAX_ENTRIES = 500;
/** Longest message kept. */
export const MAX_MESSAGE_CHARS = 2000;
/** Longest stack trace kept. */
export const MAX_STACK_CHARS = 8000;
/** The `format` field of an exported diagnostics file. */
export const DIAGNOSTICS_FORMAT = 'stratameter-diagnostics';

const KINDS: readonly DiagnosticKind[] = ['error', 'unhandledrejection', 'worker', 'status'];

function cut(s: string, n: number): string {
  return s.length > n ? `${s.slice(0, n - 1)}…` : s;
}

/**
 * Message and stack of anything thrown or rejected (an Error, a DOMException, a string, an ErrorEvent-like object).
 *
 * @param reason what was thrown
 * @returns the message (never empty) and the stack or null
 */
export function describeError(reason: unknown): { message: string; stack: string | null } {
  if (reason instanceof Error) return { message: `${reason.name}: ${reason.message || '(no message)'}`, stack: reason.stack ?? null };
  if (typeof reason === 'string') return { message: reason || '(empty message)', stack: null };
  if (reason && typeof reason === 'object' && 'message' in reason) {
    const m = (reason as { message: unknown }).message;
    return { message: typeof m === 'string' && m ? m : '(no message)', stack: null };
  }
  let text: string;
  try {
    text = JSON.stringify(reason) ?? String(reason);
  } catch {
    text = String(reason);
  }
  return { message: `non-error value thrown: ${cut(text, 200)}`, stack: null };
}

/**
 * Adds an entry to the log, removing the oldest beyond the limit, in one transaction.
 *
 * @param db the open library
 * @param entry kind, message, context, stack and time
 * @param options the most entries kept
 * @returns the stored entry
 * Notes: messages and stacks are cut to MAX_MESSAGE_CHARS and MAX_STACK_CHARS. Reference: a
 * bounded local log is common practice for offline applications.
 */
export async function logDiagnostic(db: LibraryDb, entry: NewDiagnostic, options: LogOptions = {}): Promise<DiagnosticEntry> {
  if (!entry || !KINDS.includes(entry.kind)) throw new TypeError(`diagnostic kind must be one of ${KINDS.join(', ')}, got ${JSON.stringify(entry?.kind)}`);
  if (typeof entry.message !== 'string') throw new TypeError(`diagnostic message must be a text, got ${typeof entry.message}`);
  const maxEntries = options.maxEntries ?? MAX_ENTRIES;
  if (!Number.isInteger(maxEntries) || maxEntries < 1) throw new RangeError(`maxEntries must be a positive integer, got ${maxEntries}`);
  const time = entry.time ?? new Date();
  if (!(time instanceof Date) || !Number.isFinite(time.getTime())) throw new RangeError(`diagnostic time must be a valid Date, got ${String(time)}`);
  const timeIso = time.toISOString();
  const record: DiagnosticEntry = {
    id: `${timeIso}-${Math.random().toString(36).slice(2, 12)}`,
    timeIso,
    kind: entry.kind,
    message: cut(entry.message || '(no message)', MAX_MESSAGE_CHARS),
    context: cut(entry.context ?? '', 500),
    stack: entry.stack ? cut(entry.stack, MAX_STACK_CHARS) : null,
  };
  const tx = db.transaction('diagnostics', 'readwrite');
  const store = tx.objectStore('diagnostics');
  await store.put(record);
  let excess = (await store.count()) - maxEntries;
  if (excess > 0) {
    let cursor = await store.index('byTime').openCursor();
    while (cursor && excess > 0) {
      await cursor.delete();
      excess--;
      cursor = await cursor.continue();
    }
  }
  await tx.done;
  return record;
}

/** Every entry, oldest first. */
export async function listDiagnostics(db: LibraryDb): Promise<DiagnosticEntry[]> {
  return db.getAllFromIndex('diagnostics', 'byTime');
}

/** Removes every entry. */
export async function clearDiagnostics(db: LibraryDb): Promise<void> {
  await db.clear('diagnostics');
}

/** What an exported diagnostics file says about the program, besides the entries. */
export interface DiagnosticsContext {
  /** Program version. */
  appVersion: string;
  /** Browser or runtime, as the user agent string gives it. */
  userAgent: string;
  /** Export time; default now. */
  time?: Date;
}

/**
 * The log as a JSON text for the user to save and send on.
 *
 * @param entries the entries (from listDiagnostics)
 * @param context program version and browser
 * @returns JSON with format, version, exportedIso, appVersion, userAgent and entries; nothing else
 *   (no images, file contents or measurements)
 */
export function diagnosticsJson(entries: readonly DiagnosticEntry[], context: DiagnosticsContext): string {
  if (!Array.isArray(entries)) throw new TypeError(`entries must be a list, got ${typeof entries}`);
  return JSON.stringify(
    {
      format: DIAGNOSTICS_FORMAT,
      formatVersion: 1,
      exportedIso: (context.time ?? new Date()).toISOString(),
      appVersion: context.appVersion,
      userAgent: context.userAgent,
      entries: entries.map((e) => ({ id: e.id, timeIso: e.timeIso, kind: e.kind, message: e.message, context: e.context, stack: e.stack })),
    },
    null,
    1,
  );
}
