/**
 * The fuzz harness shared by the seeded run inside `npm test` (fuzz.test.ts) and the runner
 * (`npm run test:fuzz`, run.ts).
 *
 * Every reader of outside data (TIFF, PNG, JPEG and MRC images, diffraction patterns, structure
 * files, recipes, measurement reports, library exports, the batch state file) gets valid files
 * damaged by seeded mutations, and inputs of the corrupt classes of testing/corrupt.ts. Each
 * input ends as one outcome:
 * - `ok`: a result that passed the reader's consistency check;
 * - `clear`: the reader's own error, naming the file (and line, tag or chunk), in the user's terms;
 * - `silent`: a result for an input known to be corrupt, with no error, warning or skip saying so;
 * - `unnamed`: the reader's own error that does not name the file, or passes an engine's message on;
 * - `crash`: any other exception, or an inconsistent result;
 * - `hang`: longer than HANG_MS (the runner's watchdog stops an input that never returns);
 * - `memory`: heap and array buffers grew by more than MEMORY_LIMIT_BYTES while reading it.
 * Only `ok` and `clear` are acceptable.
 */
import 'fake-indexeddb/auto';
import { decodeImage, ImageReadError } from '../../src/image/decode';
import { readPatternFile, PatternReadError } from '../../src/diffraction/read-pattern';
import { CifError, MAX_SYMMETRY_OPERATIONS, parseCif, powderReflections } from '../../src/diffraction/cif';
import { readMeasurementReport, ReportError } from '../../src/diffraction/measurement-report';
import { reconcile } from '../../src/diffraction/reconcile';
import { readRecipeFile, RecipeError } from '../../src/batch/recipe';
import { parseState } from '../../src/batch/state';
import { importLibrary, ImportError, openLibrary, type LibraryDb } from '../../src/store';
import { validateMeasurementShape } from '../../src/store/validate';
import { rng } from '../../testing/random';
import { classesOf, type CorruptInput, type Expectation } from '../../testing/corrupt';
import { jpegSeeds, librarySeeds, measurementSeeds, mrcSeeds, patternSeeds, pngSeeds, recipeSeeds, stateSeeds, structureSeeds, tiffSeeds, type Seed } from '../../testing/fuzz-seeds';
import { mutateBytes, mutateText } from './mutate';
export { rng, mutateBytes, mutateText };

export type Outcome = 'ok' | 'clear' | 'silent' | 'unnamed' | 'crash' | 'hang' | 'memory';
export const OUTCOMES: readonly Outcome[] = ['ok', 'clear', 'silent', 'unnamed', 'crash', 'hang', 'memory'];
/** The outcomes that are failures. */
export const FAILURES: readonly Outcome[] = ['silent', 'unnamed', 'crash', 'hang', 'memory'];

/** One input. */
export interface FuzzInput {
  /** File name given to the reader (the seed's, or the corrupt class's). */
  name: string;
  /** The mutations applied, or the corrupt class, for the report of a failure. */
  mutation: string;
  bytes: Uint8Array;
  /** The seed it came from (random mutations), to tell a changed PNG from its original. */
  seed?: Uint8Array;
  /** For corrupt-class inputs: what the reader must do. */
  expect?: Expectation;
}

/** What a reader gave back, for the silent-acceptance checks. */
export interface ReadReport {
  /** Warnings or notes the reader gave with its result. */
  warnings: string[];
  /** Records a library import skipped, with the store and id. */
  skipped?: { kind: string; name: string | null; reason: string }[];
  /** Ids stored per store by a library import. */
  stored?: Record<string, string[]>;
  /** Problems found when the stored records were read back (library) or the result was checked. */
  unusable?: string[];
}

/** A reader under test. */
export interface FuzzTarget {
  id: string;
  /** Valid files this reader must read. */
  seeds(): Seed[];
  /** Mutates a seed into a damaged input. */
  mutate(seed: Uint8Array, r: () => number): { bytes: Uint8Array; mutation: string };
  /** Reads the input; throws on failure; throws a plain Error "inconsistent result: ..." for a bad result. */
  read(input: FuzzInput): Promise<ReadReport> | ReadReport;
  /** True when `e` is the reader's own error. */
  own(e: unknown): boolean;
  /** True when the reader's error names the input's file. */
  namesFile(e: Error, input: FuzzInput): boolean;
  /** For a random mutation that was read without error: why it must have been refused, or null. */
  silent?(input: FuzzInput, report: ReadReport): string | null;
}

/** The image budget in the fuzz runs: declared sizes above it must be refused from the header. */
export const FUZZ_MAX_PIXELS = 1 << 22; // 4 Mpx = 16 MiB as Float32Array
/** An input that takes longer than this hangs. */
export const HANG_MS = 10_000;
/** An input that makes the heap and array buffers grow by more than this is a memory bomb. */
export const MEMORY_LIMIT_BYTES = 2 * 2 ** 30;
/** Share of inputs drawn from the corrupt classes (the rest are random mutations of the seeds). */
const CORRUPT_SHARE = 0.15;

const dec = new TextDecoder();

/** An engine's own words (V8, a JSON parser, a decoder library), which must never reach the user alone. */
const ENGINE_MESSAGES = [
  /Cannot read propert/, /is not a function/, /is not iterable/, /Maximum call stack size exceeded/, /memory access out of bounds/,
  /Invalid typed array length/, /Array buffer allocation failed/, /Offset is outside the bounds/, /Unexpected token/, /Unexpected end of JSON input/,
  /in JSON at position/, /is not defined$/, /Invalid array length/, /Invalid string length/, /^unexpected EOF$/, /^invalid (block type|length\/literal|distance)$/,
];

/** True when a message is (or ends in) an engine's own words. */
export function isEngineMessage(message: string): boolean {
  return ENGINE_MESSAGES.some((re) => re.test(message));
}

const startsWithName = (e: Error, input: FuzzInput) => e.message.startsWith(`${input.name}: `);

function imageTarget(id: string, seeds: () => Seed[]): FuzzTarget {
  return {
    id,
    seeds,
    mutate: mutateBytes,
    read(input) {
      // Corrupt-class inputs are read with the default budgets (the bombs must be refused there); random mutations with the fuzz budget.
      const img = decodeImage(input.bytes, input.name, input.expect ? { nonFinite: 'reject' } : { maxPixels: FUZZ_MAX_PIXELS, nonFinite: 'reject' });
      if (img.data.length !== img.width * img.height) throw new Error(`inconsistent result: ${img.data.length} pixels for ${img.width} × ${img.height}`);
      if (!Number.isFinite(img.min) || !Number.isFinite(img.max)) throw new Error(`inconsistent result: range ${img.min}–${img.max}`);
      for (let i = 0; i < img.data.length; i++) if (!Number.isFinite(img.data[i])) throw new Error(`inconsistent result: pixel ${i} is ${img.data[i]}`);
      return { warnings: img.warnings };
    },
    own: (e) => e instanceof ImageReadError,
    namesFile: (e, input) => startsWithName(e, input) && (e as ImageReadError).reason.length > 0,
    silent:
      id === 'png'
        ? (input, report) => {
            // Every byte of a PNG up to IEND is covered by a chunk CRC (PNG spec §5.3): a changed byte there is damage.
            const seed = input.seed;
            if (!seed || (input.bytes.length === seed.length && input.bytes.every((b, i) => b === seed[i]))) return null;
            const appended = input.bytes.length > seed.length && seed.every((b, i) => b === input.bytes[i]);
            if (appended && report.warnings.some((w) => /after the PNG's IEND/.test(w))) return null;
            return 'a changed PNG was read without an error or a warning';
          }
        : undefined,
  };
}

let dbCounter = 0;
async function freshDb(): Promise<LibraryDb> {
  dbCounter++;
  return openLibrary({ name: `fuzz-${process.pid}-${dbCounter}` });
}

/** Reads every stored record back and names those that cannot be used. */
async function readBack(db: LibraryDb): Promise<{ stored: Record<string, string[]>; unusable: string[] }> {
  const stored: Record<string, string[]> = {};
  const unusable: string[] = [];
  for (const store of ['images', 'measurements', 'calibrations', 'diffraction', 'recipes', 'batches', 'batchFiles'] as const) {
    const all = (await db.getAll(store)) as Record<string, unknown>[];
    stored[store] = all.map((r) => String(r.id));
    for (const r of all) {
      if (store === 'images') {
        const bytes = new Uint8Array(await (r.file as Blob).arrayBuffer());
        try {
          const img = decodeImage(bytes, String(r.fileName), { nonFinite: 'replace' });
          if (img.width !== r.width || img.height !== r.height) unusable.push(`images ${r.id}: ${r.width} × ${r.height} stored for a ${img.width} × ${img.height} file`);
        } catch (e) {
          unusable.push(`images ${r.id}: the stored file does not decode (${(e as Error).message})`);
        }
      }
      if (store === 'measurements') {
        const why = validateMeasurementShape(r);
        if (why) unusable.push(`measurements ${r.id}: ${why}`);
      }
      if (store === 'calibrations' && !(typeof r.relUncertainty === 'number' && r.relUncertainty >= 0 && r.relUncertainty < 1 && (r.nmPerPx as number) > 0)) unusable.push(`calibrations ${r.id}: pixel size ${r.nmPerPx}, relative uncertainty ${r.relUncertainty}`);
      if (store === 'recipes') {
        try {
          readRecipeFile(String(r.json), 'stored recipe');
        } catch {
          unusable.push(`recipes ${r.id}: its recipe text does not read`);
        }
      }
    }
  }
  return { stored, unusable };
}

export const TARGETS: FuzzTarget[] = [
  imageTarget('tiff', tiffSeeds),
  imageTarget('png', pngSeeds),
  imageTarget('jpeg', jpegSeeds),
  imageTarget('mrc', mrcSeeds),
  {
    id: 'pattern',
    seeds: patternSeeds,
    mutate: (s, r) => mutateText(s, r, false),
    read(input) {
      const p = readPatternFile(dec.decode(input.bytes), input.name);
      if (p.x.length !== p.y.length || p.x.length < 3) throw new Error('inconsistent result: column lengths');
      for (let i = 0; i < p.x.length; i++) {
        if (!Number.isFinite(p.x[i]) || !Number.isFinite(p.y[i])) throw new Error(`inconsistent result: row ${i} not finite`);
        if (i > 0 && !(p.x[i] > p.x[i - 1])) throw new Error(`inconsistent result: x not increasing at row ${i}`);
      }
      return { warnings: p.notes };
    },
    own: (e) => e instanceof PatternReadError,
    namesFile: startsWithName,
  },
  {
    id: 'structure',
    seeds: structureSeeds,
    mutate: (s, r) => mutateText(s, r, false),
    read(input) {
      const s = parseCif(dec.decode(input.bytes), { fileName: input.name });
      const c = s.cell;
      for (const v of [c.aNm.value, c.bNm.value, c.cNm.value]) if (!(v >= 0.05 && v <= 1000)) throw new Error(`inconsistent result: cell length ${v} nm`);
      if (s.symops.length > MAX_SYMMETRY_OPERATIONS) throw new Error(`inconsistent result: ${s.symops.length} symmetry operations`);
      for (const a of s.atoms) if (!a.xyz.every(Number.isFinite)) throw new Error(`inconsistent result: atom ${a.label} at ${a.xyz}`);
      try {
        // as `match --cif` does: the reflections of the phase, a too-large job refused by name
        const r = powderReflections(s, { dMinNm: 0.15, wavelengthNm: 0.154 });
        for (const x of r) if (!Number.isFinite(x.dNm) || !Number.isFinite(x.intensity)) throw new Error(`inconsistent result: reflection ${x.hkl} d ${x.dNm} I ${x.intensity}`);
      } catch (e) {
        if (e instanceof RangeError) throw new CifError(input.name, null, e.message);
        throw e;
      }
      return { warnings: s.notes };
    },
    own: (e) => e instanceof CifError,
    namesFile: startsWithName,
  },
  {
    id: 'recipe',
    seeds: recipeSeeds,
    mutate: (s, r) => mutateText(s, r, true),
    read(input) {
      readRecipeFile(dec.decode(input.bytes), input.name);
      return { warnings: [] };
    },
    own: (e) => e instanceof RecipeError,
    namesFile: startsWithName,
  },
  {
    id: 'measurement',
    seeds: measurementSeeds,
    mutate: (s, r) => mutateText(s, r, true),
    read(input) {
      const rep = readMeasurementReport(dec.decode(input.bytes), input.name);
      // as `match` does: the periods against a few lines
      const rec = reconcile({ periods: rep.periods, sheets: rep.sheets ?? undefined, calibrationRelUncertainty: rep.relUncertainty ?? undefined }, { lines: [{ dNm: 0.74, dUncNm: 0.001, label: '001' }, { dNm: 0.443, dUncNm: 0.001, label: '110' }] });
      if (rec.best.length !== rep.periods.length) throw new Error('inconsistent result: best pairs');
      return { warnings: rep.notes };
    },
    own: (e) => e instanceof ReportError,
    namesFile: startsWithName,
  },
  {
    id: 'library',
    seeds: librarySeeds,
    mutate: (s, r) => (r() < 0.5 ? mutateText(s, r, true) : mutateBytes(s, r)),
    async read(input) {
      const db = await freshDb();
      try {
        const summary = await importLibrary(db, dec.decode(input.bytes), { fileName: input.name });
        const back = await readBack(db);
        return { warnings: summary.skipped.map((k) => k.reason), skipped: summary.skipped, ...back };
      } finally {
        db.close();
        indexedDB.deleteDatabase(db.name);
      }
    },
    own: (e) => e instanceof ImportError,
    namesFile: (e, input) => e.message.includes(`The library file ${input.name} `),
    silent: (_input, report) => (report.unusable && report.unusable.length ? `stored unusable records: ${report.unusable.join('; ')}` : null),
  },
  {
    id: 'state',
    seeds: stateSeeds,
    mutate: (s, r) => mutateText(s, r, true),
    read(input) {
      parseState(dec.decode(input.bytes));
      return { warnings: [] };
    },
    // the state file has one fixed name, batch-state.json: its errors call it "batch state"
    own: (e) => e instanceof Error && /^batch state /.test(e.message),
    namesFile: (e) => /^batch state /.test(e.message),
  },
];

/** The corrupt-class inputs are drawn by reader id. */
export function corruptInput(target: FuzzTarget, r: () => number, i: number): FuzzInput | null {
  const classes = classesOf(target.id);
  if (classes.length === 0) return null;
  const c = classes[i % classes.length];
  const made: CorruptInput = c.make(r);
  return { name: made.name, mutation: `class ${c.id}: ${made.cls}`, bytes: made.bytes, expect: made.expect };
}

function memoryNow(): number {
  const m = process.memoryUsage();
  return m.heapUsed + m.arrayBuffers;
}

const gc = (globalThis as { gc?: () => void }).gc;

/** Checks a report against what a corrupt-class input expects: the reason it is silent, or null. */
function expectationMissed(input: FuzzInput, report: ReadReport): string | null {
  const x = input.expect!;
  if (x.kind === 'accept' || x.kind === 'any') return null;
  if (x.kind === 'refuse') return 'read without an error';
  if (x.kind === 'warn') return report.warnings.some((w) => x.warning.test(w)) ? null : `read without the warning ${x.warning}`;
  if (report.stored?.[x.store]?.includes(x.id)) return `${x.store} ${x.id} was stored`;
  if (!report.skipped?.some((k) => k.kind === x.store)) return `${x.store} ${x.id} was not reported as skipped`;
  return null;
}

/** Runs one input and classifies it. */
export async function runOne(target: FuzzTarget, input: FuzzInput): Promise<{ outcome: Outcome; detail: string; ms: number; grownBytes: number }> {
  gc?.();
  const before = memoryNow();
  let peak = before;
  const t0 = performance.now();
  let outcome: Outcome = 'ok';
  let detail = '';
  try {
    const report = await target.read(input);
    peak = Math.max(peak, memoryNow());
    const why = input.expect ? expectationMissed(input, report) : target.silent?.(input, report) ?? null;
    if (why) {
      outcome = 'silent';
      detail = why;
    } else if (target.id === 'library' && report.unusable?.length) {
      outcome = 'silent';
      detail = `stored unusable records: ${report.unusable.join('; ')}`;
    }
  } catch (e) {
    peak = Math.max(peak, memoryNow());
    if (target.own(e)) {
      const err = e as Error;
      if (!target.namesFile(err, input) || isEngineMessage(err.message)) {
        outcome = 'unnamed';
        detail = err.message.slice(0, 240);
      } else if (input.expect?.kind === 'refuse' && input.expect.message && !input.expect.message.test(err.message)) {
        // refused, but for another reason than the class: still a clear error, noted in the detail
        outcome = 'clear';
        detail = err.message.slice(0, 240);
      } else outcome = 'clear';
      if (outcome === 'clear' && input.expect && input.expect.kind !== 'refuse' && input.expect.kind !== 'any') {
        outcome = 'silent';
        detail = `refused where the class expects ${input.expect.kind}: ${err.message.slice(0, 200)}`;
      }
    } else {
      outcome = 'crash';
      detail = e instanceof Error ? `${e.name}: ${e.message.slice(0, 200)}\n${(e.stack ?? '').split('\n').slice(1, 4).join('\n')}` : String(e);
    }
  }
  const ms = performance.now() - t0;
  const grownBytes = peak - before;
  if (outcome !== 'crash' && ms > HANG_MS) {
    outcome = 'hang';
    detail = `${ms.toFixed(0)} ms`;
  }
  if (outcome !== 'crash' && grownBytes > MEMORY_LIMIT_BYTES) {
    outcome = 'memory';
    detail = `${(grownBytes / 2 ** 20).toFixed(0)} MiB`;
  }
  return { outcome, detail, ms, grownBytes };
}

/** Tallies of one target's run. */
export interface TargetTally {
  id: string;
  counts: Record<Outcome, number>;
  failures: { input: string; mutation: string; outcome: Outcome; detail: string }[];
  longestMs: number;
  /** Largest growth of heap + array buffers for one input, bytes. */
  peakGrownBytes: number;
  /** Inputs drawn from the corrupt classes. */
  corruptInputs: number;
}

/** An empty tally. */
export function newTally(id: string): TargetTally {
  return { id, counts: { ok: 0, clear: 0, silent: 0, unnamed: 0, crash: 0, hang: 0, memory: 0 }, failures: [], longestMs: 0, peakGrownBytes: 0, corruptInputs: 0 };
}

/** Makes input number `i` of a target from its seeds (deterministic in seed and i). */
export function makeInput(target: FuzzTarget, seeds: Seed[], seed: number, i: number): FuzzInput {
  const r = rng((seed * 1_000_003 + i * 7919 + target.id.length * 104729) >>> 0);
  if (r() < CORRUPT_SHARE) {
    const c = corruptInput(target, r, i);
    if (c) return c;
  }
  const s = seeds[Math.floor(r() * seeds.length)];
  const m = target.mutate(s.bytes, r);
  return { name: s.name, mutation: m.mutation, bytes: m.bytes, seed: s.bytes };
}

/** Adds one outcome to a tally. */
export function count(tally: TargetTally, input: FuzzInput, i: number, res: { outcome: Outcome; detail: string; ms: number; grownBytes?: number }): void {
  tally.counts[res.outcome]++;
  tally.longestMs = Math.max(tally.longestMs, res.ms);
  tally.peakGrownBytes = Math.max(tally.peakGrownBytes, res.grownBytes ?? 0);
  if (input.expect) tally.corruptInputs++;
  if (FAILURES.includes(res.outcome)) tally.failures.push({ input: `${input.name} #${i}`, mutation: input.mutation, outcome: res.outcome, detail: res.detail });
}

/**
 * Runs `count` inputs (or until `deadline` of wall time) of one target.
 *
 * @param target the reader
 * @param seed the run's seed
 * @param n most inputs to try
 * @param deadline performance.now() value after which no new input is started
 * @returns the tallies; the valid seeds are read first and must all give ok
 */
export async function fuzzTarget(target: FuzzTarget, seed: number, n: number, deadline = Infinity): Promise<TargetTally> {
  const seeds = target.seeds();
  const tally = newTally(target.id);
  for (const s of seeds) {
    const res = await runOne(target, { name: s.name, mutation: 'none', bytes: s.bytes, seed: s.bytes });
    if (res.outcome !== 'ok') tally.failures.push({ input: s.name, mutation: 'none (valid seed)', outcome: res.outcome, detail: res.detail });
  }
  for (let i = 0; i < n && performance.now() < deadline; i++) {
    const input = makeInput(target, seeds, seed, i);
    count(tally, input, i, await runOne(target, input));
  }
  return tally;
}

/** The tallies as a Markdown table. */
export function table(tallies: TargetTally[]): string {
  const head = `| reader | inputs | of them corrupt-class | ${OUTCOMES.map((o) => (o === 'hang' ? 'hang (> 10 s)' : o === 'memory' ? 'memory (> 2 GB)' : o)).join(' | ')} | longest ms | largest growth MiB |`;
  const sep = `|---|---:|---:|${OUTCOMES.map(() => '---:').join('|')}|---:|---:|`;
  const rows = tallies.map((t) => {
    const n = OUTCOMES.reduce((s, o) => s + t.counts[o], 0);
    return `| ${t.id} | ${n} | ${t.corruptInputs} | ${OUTCOMES.map((o) => t.counts[o]).join(' | ')} | ${t.longestMs.toFixed(0)} | ${(t.peakGrownBytes / 2 ** 20).toFixed(0)} |`;
  });
  const total = tallies.reduce((s, t) => s + OUTCOMES.reduce((a, o) => a + t.counts[o], 0), 0);
  const sum = (o: Outcome) => tallies.reduce((s, t) => s + t.counts[o], 0);
  const totals = `| **all** | ${total} | ${tallies.reduce((s, t) => s + t.corruptInputs, 0)} | ${OUTCOMES.map((o) => sum(o)).join(' | ')} | ${Math.max(0, ...tallies.map((t) => t.longestMs)).toFixed(0)} | ${(Math.max(0, ...tallies.map((t) => t.peakGrownBytes)) / 2 ** 20).toFixed(0)} |`;
  return [head, sep, ...rows, totals].join('\n');
}
