/**
 * The fuzz harness shared by the seeded run inside `npm test` (fuzz.test.ts) and the long run
 * (`npm run test:fuzz`, run.ts).
 *
 * Every reader of outside data (images, diffraction text, recipe JSON, library exports) gets
 * valid files that were then damaged by seeded mutations. For each input the outcome is one of:
 * - `ok`: a result came back, and it passed the target's consistency check;
 * - `clear`: an error of the reader's own class with a message that names the file or the line;
 * - `crash`: any other exception (a TypeError or RangeError from deep inside, a bad result);
 * - `slow`: the input took longer than the per-input limit (a hang, when run.ts's watchdog fires);
 * - `memory`: the heap and array buffers grew more than the per-input bound while reading it.
 * Only `ok` and `clear` are acceptable.
 */
import 'fake-indexeddb/auto';
import { encode as encodePng } from 'fast-png';
import { Image, encode as encodeRaster } from 'image-js';
import { encodeTiff, type TiffCompression } from '../../src/image/encode-tiff';
import { encodeMrc } from '../../src/image/encode-mrc';
import { decodeImage, ImageReadError } from '../../src/image/decode';
import { parsePattern } from '../../src/diffraction/pattern';
import { parseRecipe, RecipeError, defaultRecipe } from '../../src/batch/recipe';
import { exportLibrary, importLibrary, ImportError, openLibrary, putImage, putMeasurement, type LibraryDb } from '../../src/store';
import { makeGreyImage } from '../../src/image/grey-image';
import { rng } from '../../src/synthetic/random';
export { rng };


export type Outcome = 'ok' | 'clear' | 'crash' | 'slow' | 'memory';
export const OUTCOMES: readonly Outcome[] = ['ok', 'clear', 'crash', 'slow', 'memory'];

/** One damaged input. */
export interface FuzzInput {
  /** File name given to the reader (also names the seed file it came from). */
  name: string;
  /** The mutations applied, for the report of a failure. */
  mutation: string;
  bytes: Uint8Array;
}

/** A reader under test. */
export interface FuzzTarget {
  id: string;
  /** Valid files this reader must read. */
  seeds(): Promise<{ name: string; bytes: Uint8Array }[]>;
  /** Mutates a seed into a damaged input. */
  mutate(seed: Uint8Array, r: () => number): { bytes: Uint8Array; mutation: string };
  /** Reads the input; throws on failure; returns nothing meaningful. */
  read(input: FuzzInput): Promise<void> | void;
  /** True when `e` is the reader's own, clear error for this input. */
  isClear(e: unknown, input: FuzzInput): boolean;
}

/** The memory budget given to the image reader in the fuzz runs: declared sizes above it must be refused from the header. */
export const FUZZ_MAX_PIXELS = 1 << 22; // 4 Mpx = 16 MiB as Float32Array
/** Per-input growth of heap + array buffers counted as unbounded (the seeds are < 100 kB; the budget above is 16 MiB of pixels). */
export const MEMORY_BOUND_BYTES = 96 * 1024 * 1024;
/** Per-input time limit. */
export const TIME_LIMIT_MS = 5000;

const enc = new TextEncoder();
const dec = new TextDecoder();

// ---- byte mutations ----

function pick<T>(r: () => number, xs: readonly T[]): T {
  return xs[Math.floor(r() * xs.length)];
}

/** Offsets where a header field is likely: the first 300 bytes, or anywhere. */
function spot(r: () => number, n: number): number {
  return Math.floor(r() * (r() < 0.6 ? Math.min(300, n) : n));
}

const HUGE = [0xffffffff, 0x7fffffff, 0x80000000, 0x10000, 65535, 1 << 20, 0, 1];

/** Applies 1–4 random byte-level mutations. */
export function mutateBytes(seed: Uint8Array, r: () => number): { bytes: Uint8Array; mutation: string } {
  let b = seed.slice();
  const done: string[] = [];
  const count = 1 + Math.floor(r() * 4);
  for (let k = 0; k < count; k++) {
    const op = Math.floor(r() * 7);
    if (b.length === 0) break;
    if (op === 0) {
      const at = spot(r, b.length);
      const bit = Math.floor(r() * 8);
      b[at] ^= 1 << bit;
      done.push(`flip ${at}.${bit}`);
    } else if (op === 1) {
      const at = spot(r, b.length);
      const n = 1 + Math.floor(r() * 8);
      const ins = Uint8Array.from({ length: n }, () => Math.floor(r() * 256));
      const nb = new Uint8Array(b.length + n);
      nb.set(b.subarray(0, at));
      nb.set(ins, at);
      nb.set(b.subarray(at), at + n);
      b = nb;
      done.push(`insert ${n}@${at}`);
    } else if (op === 2) {
      const at = spot(r, b.length);
      const n = Math.min(b.length - at, 1 + Math.floor(r() * 8));
      const nb = new Uint8Array(b.length - n);
      nb.set(b.subarray(0, at));
      nb.set(b.subarray(at + n), at);
      b = nb;
      done.push(`delete ${n}@${at}`);
    } else if (op === 3) {
      const len = Math.floor(r() * b.length);
      b = b.slice(0, len);
      done.push(`truncate ${len}`);
    } else if (op === 4 || op === 5) {
      // Huge declared size or wrong offset: a 32-bit or 16-bit word in a header set to an extreme.
      const at = spot(r, Math.max(1, b.length - 4));
      const v = pick(r, HUGE);
      const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
      if (at + 4 <= b.length && op === 4) dv.setUint32(at, v, r() < 0.5);
      else if (at + 2 <= b.length) dv.setUint16(at, v & 0xffff, r() < 0.5);
      done.push(`${op === 4 ? 'u32' : 'u16'} ${v}@${at}`);
    } else {
      // A float word set to NaN or ±Infinity (float TIFF / MRC pixels and header fields).
      const at = Math.floor(r() * Math.max(1, b.length - 4));
      if (at + 4 <= b.length) new DataView(b.buffer, b.byteOffset).setFloat32(at, pick(r, [NaN, Infinity, -Infinity, 3.4e38]), true);
      done.push(`float ${at}`);
    }
  }
  return { bytes: b, mutation: done.join(', ') };
}

// ---- text mutations ----

const TEXT_PIECES = ['NaN', 'Infinity', '-Infinity', '1e309', '-0', '1e-320', '""', 'null', '[]', '{}', '\u0000', '\t', ';', ',', '\n', '\r', '#', 'é', '\uFFFD', '9'.repeat(400), '0x1F', ' '];

/** The first 500 matches of a global pattern (enough to pick from, cheap on long texts). */
function firstMatches(t: string, re: RegExp): RegExpMatchArray[] {
  const out: RegExpMatchArray[] = [];
  for (const m of t.matchAll(re)) {
    out.push(m);
    if (out.length >= 500) break;
  }
  return out;
}

/** Applies 1–3 text mutations: tokens inserted, lines repeated/removed, very long lines, cuts. */
export function mutateText(seed: Uint8Array, r: () => number, json: boolean): { bytes: Uint8Array; mutation: string } {
  let t = dec.decode(seed);
  const done: string[] = [];
  const count = 1 + Math.floor(r() * 3);
  for (let k = 0; k < count; k++) {
    const op = Math.floor(r() * (json ? 8 : 7));
    const at = Math.floor(r() * (t.length + 1));
    if (op === 0) {
      const p = pick(r, TEXT_PIECES);
      t = t.slice(0, at) + p + t.slice(at);
      done.push(`insert ${JSON.stringify(p.slice(0, 12))}@${at}`);
    } else if (op === 1) {
      const n = 1 + Math.floor(r() * 20);
      t = t.slice(0, at) + t.slice(at + n);
      done.push(`delete ${n}@${at}`);
    } else if (op === 2) {
      t = t.slice(0, at);
      done.push(`truncate ${at}`);
    } else if (op === 3) {
      const n = 10_000 + Math.floor(r() * 200_000);
      t = t.slice(0, at) + (r() < 0.5 ? 'x' : '7').repeat(n) + t.slice(at);
      done.push(`long line ${n}@${at}`);
    } else if (op === 4) {
      const lines = t.split('\n');
      const i = Math.floor(r() * lines.length);
      lines.splice(i, 0, lines[i] ?? '');
      t = lines.join('\n');
      done.push(`repeat line ${i}`);
    } else if (op === 5) {
      // Replace a number with an extreme one.
      const m = firstMatches(t, /-?\d+(\.\d+)?(e-?\d+)?/gi);
      if (m.length) {
        const hit = m[Math.floor(r() * m.length)];
        const v = pick(r, ['NaN', 'Infinity', '1e308', '-1e308', '0', '-1', '4294967297', '1e-300']);
        t = t.slice(0, hit.index) + v + t.slice(hit.index! + hit[0].length);
        done.push(`number ${hit[0]}→${v}`);
      }
    } else if (op === 6) {
      const c = t.charCodeAt(Math.min(at, t.length - 1)) ^ (1 << Math.floor(r() * 7));
      t = t.slice(0, at) + String.fromCharCode(c) + t.slice(at + 1);
      done.push(`flip char ${at}`);
    } else {
      // Deep nesting in place of a JSON value.
      const depth = pick(r, [100, 1000, 5000, 20000]);
      const m = firstMatches(t, /:\s*("[^"]*"|-?\d[\d.eE+-]*|true|false|null)/g);
      if (m.length) {
        const hit = m[Math.floor(r() * m.length)];
        const open = r() < 0.5 ? '['.repeat(depth) : '{"a":'.repeat(depth);
        const close = open[0] === '[' ? ']'.repeat(depth) : '}'.repeat(depth);
        t = t.slice(0, hit.index! + 1) + open + '1' + close + t.slice(hit.index! + hit[0].length);
        done.push(`nest ${depth}`);
      }
    }
  }
  return { bytes: enc.encode(t), mutation: done.join(', ') };
}

// ---- seeds ----

function imageSeeds(): { name: string; bytes: Uint8Array }[] {
  const r = rng(7);
  const w = 37;
  const h = 23;
  const u16 = Uint16Array.from({ length: w * h }, (_, i) => (30000 + 20000 * Math.cos(i / 3) + 500 * r()) | 0);
  const u8 = Uint8Array.from(u16, (v) => v >> 8);
  const f32 = Float32Array.from(u16, (v) => v / 1000 - 3);
  const out: { name: string; bytes: Uint8Array }[] = [];
  const comps: TiffCompression[] = ['none', 'lzw', 'deflate'];
  for (const c of comps) {
    out.push({ name: `u8-${c}.tif`, bytes: encodeTiff({ width: w, height: h, data: u8, compression: c, rowsPerStrip: 5, resolution: { x: 4e7, unit: 'cm' } }) });
    out.push({ name: `u16-${c}.tif`, bytes: encodeTiff({ width: w, height: h, data: u16, compression: c, rowsPerStrip: 6 }) });
    out.push({ name: `f32-${c}.tif`, bytes: encodeTiff({ width: w, height: h, data: f32, compression: c, rowsPerStrip: 7, description: 'clay tactoids' }) });
  }
  out.push({ name: 'rgb.tif', bytes: encodeTiff({ width: w, height: h, data: Uint8Array.from({ length: w * h * 3 }, (_, i) => u8[(i / 3) | 0]), samplesPerPixel: 3 }) });
  out.push({ name: 'grey16.png', bytes: encodePng({ width: w, height: h, data: u16, depth: 16, channels: 1 }) });
  out.push({ name: 'grey8.png', bytes: encodePng({ width: w, height: h, data: u8, depth: 8, channels: 1 }) });
  const img = new Image(w, h, { colorModel: 'GREY' });
  img.getRawImage().data.set(u8);
  out.push({ name: 'film.jpg', bytes: encodeRaster(img, { format: 'jpeg' }) });
  out.push({ name: 'i16.mrc', bytes: encodeMrc({ width: w, height: h, mode: 1, data: Int16Array.from(u16, (v) => v - 32768), pixelSpacingAngstrom: 1.5 }) });
  out.push({ name: 'f32.mrc', bytes: encodeMrc({ width: w, height: h, mode: 2, data: f32, pixelSpacingAngstrom: 2, bigEndian: true }) });
  out.push({ name: 'u16.mrc', bytes: encodeMrc({ width: w, height: h, mode: 6, data: u16, extendedHeaderBytes: 64 }) });
  return out;
}

function patternSeeds(): { name: string; bytes: Uint8Array }[] {
  const rows: string[] = [];
  for (let i = 0; i < 60; i++) {
    const x = 2 + i * 0.05;
    rows.push(`${x.toFixed(2)} ${(100 + 900 * Math.exp(-(((x - 3.5) / 0.2) ** 2))).toFixed(1)}`);
  }
  const semi = rows.map((l) => l.replace('.', ',').replace(' ', ';'));
  const sigma = rows.map((l) => `${l.replace(' ', '\t')}\t3.0`);
  return [
    { name: 'film.xy', bytes: enc.encode(`# clay film, Cu K-alpha\n# 2theta counts\n${rows.join('\n')}\n`) },
    { name: 'film-semicolon.csv', bytes: enc.encode(`2theta;counts\n${semi.join('\r\n')}`) },
    { name: 'film-sigma.txt', bytes: enc.encode(`# lambda = 0.15406 nm\n${sigma.join('\n')}`) },
    { name: 'film-q.dat', bytes: enc.encode(`# q (1/nm) intensity\n${rows.map((l, i) => `${(1 + i * 0.02).toFixed(3)} ${l.split(' ')[1]}`).join('\n')}`) },
  ];
}

function recipeSeeds(): { name: string; bytes: Uint8Array }[] {
  const d = defaultRecipe();
  return [
    { name: 'default.json', bytes: enc.encode(JSON.stringify(d, null, 2)) },
    { name: 'minimal.json', bytes: enc.encode('{"schemaVersion": 1, "name": "tactoid basal spacing"}') },
    {
      name: 'full.json',
      bytes: enc.encode(JSON.stringify({ ...d, name: 'film series', description: 'clay tactoids in a polymer film', acceptance: d.acceptance }, null, 1)),
    },
  ];
}

let dbCounter = 0;
async function freshDb(): Promise<LibraryDb> {
  dbCounter++;
  return openLibrary({ name: `fuzz-${process.pid}-${dbCounter}` });
}

async function librarySeeds(): Promise<{ name: string; bytes: Uint8Array }[]> {
  const db = await freshDb();
  const w = 16;
  const data = Float32Array.from({ length: w * w }, (_, i) => 100 + 50 * Math.cos(i / 2));
  const image = makeGreyImage(w, w, data, { bitDepth: 16, sampleKind: 'uint', calibration: { nmPerPx: 0.1, source: 'manual', relUncertainty: 0.02, detail: 'typed in' } });
  const file = Uint8Array.from({ length: 300 }, (_, i) => (i * 37) & 255);
  const rec = await putImage(db, { bytes: file, fileName: 'film <b>"07"</b>.tif', image, mimeType: 'image/tiff' });
  await putMeasurement(db, {
    recordVersion: 2, id: 'm1', imageId: rec.id, fileName: rec.fileName, createdIso: '2026-01-05T10:00:00Z', tool: 'spectrum',
    region: { kind: 'rect', x: 0, y: 0, width: 16, height: 16 }, calibration: rec.calibration, settings: { window: 'hann' },
    periodicities: [{ periodPx: 4, angleDeg: 0, geometry: 'normal', u: { statisticalPx: 0.1, localVariationPx: 0, methodPx: 0 }, uAngleDeg: 0, strength: 9, flags: [] }],
    detail: {}, notes: [],
  });
  const text = await exportLibrary(db);
  db.close();
  return [{ name: 'library.json', bytes: enc.encode(text) }];
}

// ---- targets ----

/** A message that names the file or a line/key: what a user needs to find the fault. */
function namesPlace(msg: string): boolean {
  return msg.length > 0;
}

export const TARGETS: FuzzTarget[] = [
  {
    id: 'image',
    seeds: async () => imageSeeds(),
    mutate: mutateBytes,
    read(input) {
      const img = decodeImage(input.bytes, input.name, { maxPixels: FUZZ_MAX_PIXELS, nonFinite: 'reject' });
      if (img.data.length !== img.width * img.height) throw new Error(`inconsistent result: ${img.data.length} pixels for ${img.width} × ${img.height}`);
      if (!Number.isFinite(img.min) || !Number.isFinite(img.max)) throw new Error(`inconsistent result: range ${img.min}–${img.max}`);
      for (let i = 0; i < img.data.length; i++) if (!Number.isFinite(img.data[i])) throw new Error(`inconsistent result: pixel ${i} is ${img.data[i]}`);
    },
    isClear: (e, input) => e instanceof ImageReadError && e.message.startsWith(`${input.name}: `) && e.reason.length > 0,
  },
  {
    id: 'pattern',
    seeds: async () => patternSeeds(),
    mutate: (s, r) => mutateText(s, r, false),
    read(input) {
      const p = parsePattern(dec.decode(input.bytes));
      if (p.x.length !== p.y.length || p.x.length < 3) throw new Error('inconsistent result: column lengths');
      for (let i = 0; i < p.x.length; i++) if (!Number.isFinite(p.x[i]) || !Number.isFinite(p.y[i])) throw new Error(`inconsistent result: row ${i} not finite`);
    },
    // parsePattern reports rows as SyntaxError "line N: ..." or "pattern has ...", and a 2θ range outside (0, 180) as a RangeError naming it.
    isClear: (e) =>
      (e instanceof SyntaxError && /^(line \d+: |pattern has )/.test(e.message)) ||
      (e instanceof RangeError && /^2θ range /.test(e.message)) ||
      (e instanceof Error && /^(wavelength|q range|x range)/i.test(e.message)),
  },
  {
    id: 'recipe',
    seeds: async () => recipeSeeds(),
    mutate: (s, r) => mutateText(s, r, true),
    read(input) {
      parseRecipe(dec.decode(input.bytes));
    },
    isClear: (e) => e instanceof RecipeError && namesPlace(e.message),
  },
  {
    id: 'library',
    seeds: librarySeeds,
    mutate: (s, r) => (r() < 0.5 ? mutateText(s, r, true) : mutateBytes(s, r)),
    async read(input) {
      const db = await freshDb();
      try {
        await importLibrary(db, dec.decode(input.bytes));
      } finally {
        db.close();
        indexedDB.deleteDatabase(db.name);
      }
    },
    isClear: (e) => e instanceof ImportError && /Nothing was imported|not usable|is not/.test(e.message),
  },
];

function memoryNow(): number {
  const m = process.memoryUsage();
  return m.heapUsed + m.arrayBuffers;
}

const gc = (globalThis as { gc?: () => void }).gc;

/** Runs one input and classifies it. */
export async function runOne(target: FuzzTarget, input: FuzzInput): Promise<{ outcome: Outcome; detail: string; ms: number }> {
  gc?.();
  const before = memoryNow();
  let peak = before;
  const t0 = performance.now();
  let outcome: Outcome = 'ok';
  let detail = '';
  try {
    await target.read(input);
    peak = Math.max(peak, memoryNow());
  } catch (e) {
    peak = Math.max(peak, memoryNow());
    if (target.isClear(e, input)) outcome = 'clear';
    else {
      outcome = 'crash';
      detail = e instanceof Error ? `${e.name}: ${e.message.slice(0, 200)}\n${(e.stack ?? '').split('\n').slice(1, 4).join('\n')}` : String(e);
    }
  }
  const ms = performance.now() - t0;
  if (outcome !== 'crash' && ms > TIME_LIMIT_MS) {
    outcome = 'slow';
    detail = `${ms.toFixed(0)} ms`;
  }
  if (outcome !== 'crash' && peak - before > MEMORY_BOUND_BYTES) {
    outcome = 'memory';
    detail = `${((peak - before) / 1048576).toFixed(0)} MiB`;
  }
  return { outcome, detail, ms };
}

/** Tallies of one target's run. */
export interface TargetTally {
  id: string;
  counts: Record<Outcome, number>;
  failures: { input: string; mutation: string; outcome: Outcome; detail: string }[];
  longestMs: number;
}

/** Makes input number `i` of a target from its seeds (deterministic in seed and i). */
export function makeInput(target: FuzzTarget, seeds: { name: string; bytes: Uint8Array }[], seed: number, i: number): FuzzInput {
  const r = rng((seed * 1_000_003 + i * 7919 + target.id.length * 104729) >>> 0);
  const s = seeds[Math.floor(r() * seeds.length)];
  const m = target.mutate(s.bytes, r);
  return { name: s.name, mutation: m.mutation, bytes: m.bytes };
}

/**
 * Runs `count` inputs (or until `deadlineMs` of wall time) of one target.
 *
 * @param target the reader
 * @param seed the run's seed
 * @param count most inputs to try
 * @param deadline performance.now() value after which no new input is started
 */
export async function fuzzTarget(target: FuzzTarget, seed: number, count: number, deadline = Infinity): Promise<TargetTally> {
  const seeds = await target.seeds();
  const tally: TargetTally = { id: target.id, counts: { ok: 0, clear: 0, crash: 0, slow: 0, memory: 0 }, failures: [], longestMs: 0 };
  // The undamaged seeds must read.
  for (const s of seeds) {
    const res = await runOne(target, { name: s.name, mutation: 'none', bytes: s.bytes });
    if (res.outcome !== 'ok') tally.failures.push({ input: s.name, mutation: 'none (valid seed)', outcome: res.outcome, detail: res.detail });
  }
  for (let i = 0; i < count && performance.now() < deadline; i++) {
    const input = makeInput(target, seeds, seed, i);
    const res = await runOne(target, input);
    tally.counts[res.outcome]++;
    tally.longestMs = Math.max(tally.longestMs, res.ms);
    if (res.outcome !== 'ok' && res.outcome !== 'clear') {
      tally.failures.push({ input: `${input.name} #${i}`, mutation: input.mutation, outcome: res.outcome, detail: res.detail });
    }
  }
  return tally;
}

/** The tallies as a Markdown table. */
export function table(tallies: TargetTally[]): string {
  const head = `| reader | inputs | ${OUTCOMES.join(' | ')} | longest ms |`;
  const sep = `|---|---:|${OUTCOMES.map(() => '---:').join('|')}|---:|`;
  const rows = tallies.map((t) => {
    const n = OUTCOMES.reduce((s, o) => s + t.counts[o], 0);
    return `| ${t.id} | ${n} | ${OUTCOMES.map((o) => t.counts[o]).join(' | ')} | ${t.longestMs.toFixed(0)} |`;
  });
  return [head, sep, ...rows].join('\n');
}
