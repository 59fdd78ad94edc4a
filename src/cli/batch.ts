/**
 * `stratameter batch FOLDER`: runs a recipe on every image of a folder with Node worker threads,
 * with a resume state so a re-run skips finished files, and writes the exports.
 *
 * The per-file work is `processOne` from the core; this file holds what is Node-specific: file
 * listing and reading, SHA-256 hashing, worker threads, progress, atomic writes.
 */
import { expressPeriod } from '../measure/measurement';
import { createHash } from 'node:crypto';
import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { copyFile, mkdir, readdir, readFile, rename, stat, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { basename, dirname, extname, join, relative, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { isMainThread, parentPort, Worker, workerData } from 'node:worker_threads';
import { batchJson, pooledStats, resultsCsv, summaryCsv, zipExports } from '../batch/export';
import { annotatedFigurePng, histogramPng, histogramSvg, MIN_VALUES_FOR_STATISTICS } from '../figure/batch-figure';
import { canonicalRecipeJson, defaultRecipe, readRecipeFile, RecipeError, type Recipe } from '../batch/recipe';
import { missingTools, processOne, upgradeFileResult, type BatchDeps, type FileResult } from '../batch/run';
import { emptyState, isFinished, parseState, recordFileName, stateFromRecords, STATE_FILE_NAME, withEntry, type BatchState, type FoundRecord } from '../batch/state';
import { DEFAULT_MAX_DECOMPRESSED_BYTES, DEFAULT_MAX_PIXELS } from '../image/decode';
import { createWorkspace, type Workspace } from '../image/workspace';
import { figureNames } from '../batch/names';
import { LimitError, runPool, type PoolWorker } from '../batch/pool';
import { parseShardSpec, partialFileName, PARTIAL_FORMAT, PARTIAL_SCHEMA_VERSION, shardShare, ShardError, type PartialResult, type ShardSpec } from '../batch/shard';
import { PROGRAM_VERSION } from './version';
import { coverageFactorOption, parseArgs, UsageError, type CliCommand, type CliIo } from './command';

/** File name extensions the batch picks up (lower case, with the dot). */
export const IMAGE_EXTENSIONS = ['.tif', '.tiff', '.png', '.jpg', '.jpeg', '.mrc'];

/** Options of `runBatch`. */
export interface RunBatchOptions {
  /** Folder whose images are processed (not recursive). */
  folder: string;
  recipe: Recipe;
  /** Results CSV path; its folder is the output folder (state, records, summary). */
  outCsv: string;
  /** Write the two CSV tables; default: as the recipe's outputs say. */
  writeCsv?: boolean;
  /** JSON export path; default `<out>.json` when the recipe asks for JSON, else none. */
  jsonOut?: string;
  /** Figures folder; default `<output folder>/figures` when the recipe asks for figures, else none. */
  figuresDir?: string;
  /** Worker threads (≥ 1). */
  jobs: number;
  /** URL of a module exporting `createBatchDeps(): Promise<BatchDeps>`; default the project's tools. */
  depsModule?: string;
  /** Draw a progress bar (TTY) instead of progress lines. */
  progressBar?: boolean;
  /** Measure each worker's retained memory after a forced garbage collection after every file (benchmarks). */
  measureRetained?: boolean;
  /**
   * Per-file time limit in seconds (default 120): a worker still on one file after it is ended
   * and replaced, and the file is listed as failed with the reason.
   */
  fileTimeLimitS?: number;
  /**
   * Per-file memory limit in MiB (default 2048): each worker's JavaScript heap is capped there,
   * its decoder budgets are set from it, and a worker whose process memory runs past the limit
   * is ended and replaced; the file is listed as failed with the reason.
   */
  fileMemoryLimitMb?: number;
  /**
   * Process only this shard's share of the folder (`shardShare`: the sorted files dealt out in
   * turn) and write a partial result for `merge` instead of the exports; the resume state is the
   * shard's own, so shards may share an output folder.
   */
  shard?: ShardSpec;
}

/** Default per-file time limit of a batch, seconds. */
export const DEFAULT_FILE_TIME_LIMIT_S = 120;
/** Default per-file memory limit of a batch, MiB. */
export const DEFAULT_FILE_MEMORY_LIMIT_MB = 2048;

/** What a batch run did. */
export interface BatchOutcome {
  /** Image files found. */
  total: number;
  /** Processed in this run. */
  processed: number;
  /** Skipped as already finished (same bytes, same recipe). */
  skipped: number;
  /** Results of every file, in file-name order, from this run or earlier ones. */
  results: FileResult[];
  /** Peak isolate memory (V8 heap + external, bytes) reported by each worker. */
  workerPeakBytes: number[];
  /** The same peak after each worker's first three files (equal to the final peak: memory does not grow with the files). */
  workerEarlyPeakBytes: number[];
  /** Files each worker processed. */
  workerFiles: number[];
  /** With `measureRetained`: each worker's V8 heap used + external after a full collection, after its third file and after its last. */
  workerRetainedBytes: { afterThird: number; afterLast: number }[];
  /** Wall-clock seconds of the run. */
  seconds: number;
  /** Seconds from the start until the last worker had loaded its tools (thread start, its modules, the transform engine). */
  startupSeconds: number;
  /** Files written (exports, or the shard's partial result). */
  written: string[];
  /** What the run had to repair or note (a damaged state file recovered...). */
  notes: string[];
}

/**
 * One file to process. The worker reads and hashes it itself (into a reused buffer) unless the
 * main thread already had to, to compare it with a finished entry of the resume state.
 */
interface Job {
  file: string;
  /** Absolute path of the file. */
  path: string;
  /** SHA-256 and bytes, when the main thread read the file already. */
  sha256?: string;
  bytes?: Uint8Array;
}

interface WorkerReply {
  type: 'result';
  file: string;
  /** SHA-256 of the file's bytes ('' when the file could not be read). */
  sha256: string;
  result: FileResult;
  figurePng?: Uint8Array;
  peakBytes: number;
  retainedBytes: number;
}

/** The decoder budgets a worker gets from the per-file memory limit (the pixels as floats and the work on them fit in it). */
export function budgetsFor(memoryLimitMb: number): { maxPixels: number; maxDecompressedBytes: number } {
  const bytes = memoryLimitMb * 2 ** 20;
  return { maxPixels: Math.min(DEFAULT_MAX_PIXELS, Math.floor(bytes / 12)), maxDecompressedBytes: Math.min(DEFAULT_MAX_DECOMPRESSED_BYTES, Math.floor(bytes / 2)) };
}

function sha256Hex(bytes: Uint8Array | string): string {
  return createHash('sha256').update(bytes).digest('hex');
}

let tmpCounter = 0;
/** Writes a file atomically: a temporary file in the same folder, then a rename over the target. */
export async function writeAtomic(path: string, content: string | Uint8Array): Promise<void> {
  await mkdir(dirname(path), { recursive: true });
  const tmp = `${path}.tmp-${process.pid}-${++tmpCounter}`;
  await writeFile(tmp, content);
  await rename(tmp, path);
}

async function exists(path: string): Promise<boolean> {
  try {
    await stat(path);
    return true;
  } catch {
    return false;
  }
}

/** Image files of a folder (not recursive), sorted by name; hidden files are left out. */
export async function listImages(folder: string): Promise<string[]> {
  const entries = await readdir(folder, { withFileTypes: true });
  return entries
    .filter((e) => e.isFile() && !e.name.startsWith('.') && IMAGE_EXTENSIONS.includes(extname(e.name).toLowerCase()))
    .map((e) => e.name)
    .sort();
}

/**
 * The module a worker thread starts from. In the built command line, the bundle's batch-worker
 * entry beside this chunk; run from the TypeScript sources (tests, benchmarks), a small module
 * that registers tsx, then runs `workerMain` of this file.
 */
function workerBootUrl(): URL {
  if (!/\.ts$/.test(new URL(import.meta.url).pathname)) return new URL('./batch-worker.mjs', import.meta.url);
  const tsxDir = dirname(createRequire(import.meta.url).resolve('tsx/package.json'));
  const api = pathToFileURL(join(tsxDir, 'dist/esm/api/index.mjs')).href;
  const self = import.meta.url;
  const code = `import { register } from ${JSON.stringify(api)};\nregister();\nconst m = await import(${JSON.stringify(self)});\nawait m.workerMain();\n`;
  return new URL(`data:text/javascript,${encodeURIComponent(code)}`);
}

/** One worker thread and its queue of one job at a time: the Node adapter of the batch pool (src/batch/pool.ts). */
class BatchWorker implements PoolWorker<Job, WorkerReply> {
  private worker: Worker;
  private pending: { resolve: (r: WorkerReply) => void; reject: (e: Error) => void } | null = null;
  peakBytes = 0;
  /** Peak after the first three files. */
  earlyPeakBytes = 0;
  /** Files processed. */
  files = 0;
  /** Retained memory after the third and after the last file (0 when not measured). */
  retainedAfterThird = 0;
  retainedAfterLast = 0;
  /** Settles when the worker has loaded its tools; rejects with a message for the user when it cannot run the recipe. */
  readonly ready: Promise<void>;

  /** The file in work and when it started (for the memory watchdog), or null. */
  current: { file: string; startedMs: number } | null = null;
  /** True once the thread has exited (crashed or ended). */
  private exited = false;

  constructor(recipe: Recipe, depsModule: string | undefined, figures: boolean, private readonly measureRetainedOnStop: boolean, private readonly memoryLimitMb: number) {
    this.worker = new Worker(workerBootUrl(), {
      workerData: { stratameterBatch: true, recipe, depsModule, figures, measureRetained: measureRetainedOnStop, budgets: budgetsFor(memoryLimitMb) },
      // the JavaScript heap of this worker stops at the per-file limit (V8 ends the worker past it)
      resourceLimits: { maxOldGenerationSizeMb: memoryLimitMb },
    });
    let readyResolve: () => void = () => {};
    let readyReject: (e: Error) => void = () => {};
    this.ready = new Promise<void>((res, rej) => {
      readyResolve = res;
      readyReject = rej;
    });
    this.ready.catch(() => {});
    this.worker.on('message', (m: WorkerReply | { type: 'error' | 'fatal'; message: string } | { type: 'ready' } | { type: 'retained'; retainedBytes: number }) => {
      if (m.type === 'retained') {
        this.retainedAfterLast = m.retainedBytes;
        this.probe?.();
        this.probe = null;
        return;
      }
      if (m.type === 'ready') return readyResolve();
      if (m.type === 'fatal') return readyReject(new UsageError(m.message));
      const p = this.pending;
      this.pending = null;
      if (!p) return;
      if (m.type === 'result') {
        this.peakBytes = Math.max(this.peakBytes, m.peakBytes);
        if (++this.files <= 3) {
          this.earlyPeakBytes = this.peakBytes;
          if (this.files === 3) this.retainedAfterThird = m.retainedBytes;
        }
        p.resolve(m);
      } else p.reject(new Error(m.message));
    });
    const fail = (e: Error) => {
      if ((e as NodeJS.ErrnoException).code === 'ERR_WORKER_OUT_OF_MEMORY') {
        e = new LimitError(`it needed more memory than the per-file limit of ${this.memoryLimitMb} MiB; the worker was ended and replaced`);
      }
      this.exited = true;
      this.current = null;
      readyReject(e);
      this.probe?.();
      this.probe = null;
      const p = this.pending;
      this.pending = null;
      p?.reject(e);
    };
    this.worker.on('error', fail);
    this.worker.on('exit', (code) => fail(new Error(`worker stopped with exit code ${code}`)));
  }

  private probe: (() => void) | null = null;

  /** Measures the worker's retained memory now (after a forced collection): sets retainedAfterLast. */
  measureRetained(): Promise<void> {
    return new Promise((resolve) => {
      this.probe = resolve;
      this.worker.postMessage({ probe: 'retained' });
    });
  }

  /** Processes one file (the pool sets the time limit and calls `end` past it). */
  run(job: Job): Promise<WorkerReply> {
    return new Promise((resolve, reject) => {
      this.current = { file: job.file, startedMs: performance.now() };
      this.pending = { resolve: (r) => ((this.current = null), resolve(r)), reject: (e) => ((this.current = null), reject(e)) };
      const transfer = job.bytes ? [job.bytes.buffer as ArrayBuffer] : [];
      this.worker.postMessage({ file: job.file, path: job.path, sha256: job.sha256, bytes: job.bytes }, transfer);
    });
  }

  /** Ends the worker now; the file in work fails with `reason` (a per-file limit). */
  end(reason: string): void {
    const p = this.pending;
    this.pending = null;
    this.current = null;
    this.exited = true;
    void this.worker.terminate();
    p?.reject(new LimitError(reason));
  }

  /** Stops the thread; with `measureRetained`, first reads its retained memory after its last file. */
  async stop(): Promise<void> {
    if (this.measureRetainedOnStop && !this.exited && this.files > 0) await this.measureRetained();
    this.exited = true;
    await this.worker.terminate();
  }
}

/**
 * Gives a file's measurements ids made from the file's bytes, the recipe and their place
 * (a name-based UUID, RFC 9562 version 8), so that re-running a batch, or running it in shards,
 * gives every measurement the same id; only the times differ between runs.
 * @param result the file's result (changed in place)
 * @param sha256 the file's SHA-256
 * @param recipeHash the recipe's hash
 */
export function withStableIds(result: FileResult, sha256: string, recipeHash: string): void {
  result.measurements.forEach((m, i) => {
    const h = sha256Hex(`stratameter measurement\n${sha256}\n${recipeHash}\n${i}`);
    m.id = `${h.slice(0, 8)}-${h.slice(8, 12)}-8${h.slice(13, 16)}-${((parseInt(h[16], 16) & 3) | 8).toString(16)}${h.slice(17, 20)}-${h.slice(20, 32)}`;
  });
}

/** Reads a whole file into the workspace's file buffer (valid until the next read). */
function readInto(path: string, workspace: Workspace): Uint8Array {
  const fd = openSync(path, 'r');
  try {
    const size = fstatSync(fd).size;
    const bytes = workspace.bytes('file-bytes', size);
    let at = 0;
    while (at < size) {
      const n = readSync(fd, bytes, at, size - at, at);
      if (n === 0) throw new Error(`the file ended after ${at} of ${size} bytes while it was read`);
      at += n;
    }
    return bytes;
  } finally {
    closeSync(fd);
  }
}

/** Entry point inside a worker thread (called by the boot module). */
export async function workerMain(): Promise<void> {
  if (isMainThread || !parentPort || !workerData?.stratameterBatch) throw new Error('workerMain runs only inside a batch worker thread');
  const port = parentPort;
  const { recipe, depsModule, figures, measureRetained, budgets } = workerData as { recipe: Recipe; depsModule?: string; figures: boolean; measureRetained: boolean; budgets?: { maxPixels: number; maxDecompressedBytes: number } };
  let gc: (() => void) | null = null;
  if (measureRetained) {
    const v8 = await import('node:v8');
    const vm = await import('node:vm');
    v8.setFlagsFromString('--expose-gc');
    gc = vm.runInNewContext('gc') as () => void;
  }
  let deps: BatchDeps;
  try {
    const mod = (depsModule ? await import(depsModule) : await import('../batch/deps')) as { createBatchDeps(workspace?: Workspace, options?: { maxPixels: number; maxDecompressedBytes: number }): Promise<BatchDeps> };
    deps = await mod.createBatchDeps(undefined, budgets);
    await deps.prepare?.(recipe);
  } catch (e) {
    port.postMessage({ type: 'fatal', message: `cannot load the measurement tools: ${(e as Error).message}` });
    return;
  }
  const missing = missingTools(recipe, deps);
  if (missing.length) {
    port.postMessage({ type: 'fatal', message: `this build cannot run the recipe's step(s) ${missing.join(', ')} yet` });
    return;
  }
  port.postMessage({ type: 'ready' });
  let peakBytes = 0;
  const sample = () => {
    const m = process.memoryUsage();
    peakBytes = Math.max(peakBytes, m.heapTotal + m.external);
  };
  /** Heap used + external after a forced full collection (only when measuring retained memory). */
  const retainedNow = (): number => {
    if (!gc) return 0;
    gc();
    const m = process.memoryUsage();
    return m.heapUsed + m.external;
  };
  const recipeHash = sha256Hex(canonicalRecipeJson(recipe));
  let processed = 0;
  // the file's bytes are read into one reused buffer (as the tools reuse theirs: see createWorkspace)
  const workspace = createWorkspace();
  port.on('message', async (msg: { file: string; path: string; sha256?: string; bytes?: Uint8Array } | { probe: 'retained' }) => {
    if ('probe' in msg) {
      port.postMessage({ type: 'retained', retainedBytes: retainedNow() });
      return;
    }
    try {
      let bytes = msg.bytes;
      if (!bytes) {
        try {
          bytes = readInto(msg.path, workspace);
        } catch (e) {
          const reason = `cannot read the file: ${(e as Error).message}`;
          const result: FileResult = { file: msg.file, status: 'failed', reason, image: null, calibration: null, measurements: [], summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] }, notes: [] };
          // no hash: the failure is reported but not marked finished, so a re-run tries the file again
          port.postMessage({ type: 'result', file: msg.file, sha256: '', result, peakBytes, retainedBytes: 0 } satisfies WorkerReply);
          return;
        }
      }
      const sha256 = msg.sha256 ?? sha256Hex(bytes);
      const out = await processOne(bytes, msg.file, recipe, deps, { figure: figures, renderFigure: annotatedFigurePng });
      withStableIds(out.result, sha256, recipeHash);
      sample();
      // A forced collection after every file would itself cost time and skew the speed measured,
      // so retained memory is read after the third file and, through the probe, after the last.
      const retainedBytes = ++processed === 3 ? retainedNow() : 0;
      const reply: WorkerReply = { type: 'result', file: msg.file, sha256, result: out.result, figurePng: out.figurePng, peakBytes, retainedBytes };
      port.postMessage(reply, out.figurePng ? [out.figurePng.buffer as ArrayBuffer] : []);
    } catch (e) {
      port.postMessage({ type: 'error', message: (e as Error).stack ?? String(e) });
    }
  });
}

/** The state file's last good copy, kept beside it. */
export const STATE_BACKUP_SUFFIX = '.bak';

/** Writes the state atomically, then the same as its last good copy (both: a temporary file renamed over the target). */
async function saveState(statePath: string, state: BatchState): Promise<void> {
  const text = `${JSON.stringify(state, null, 1)}\n`;
  await writeAtomic(statePath, text);
  await writeAtomic(statePath + STATE_BACKUP_SUFFIX, text);
}

/** A result record from the records folder, or null when it is missing or damaged (the file is then processed again). */
async function readRecord(path: string): Promise<FileResult | null> {
  const text = await readFile(path, 'utf8').catch(() => null);
  if (text === null) return null;
  try {
    // records written by earlier versions are brought up to the current layout
    return upgradeFileResult(JSON.parse(text), path);
  } catch {
    return null;
  }
}

/**
 * The resume state of an output folder: the state file; if it is damaged (cut short by a crash,
 * edited), its last good copy; if that is damaged too, a state rebuilt from the result records.
 * A damaged state file is moved aside (never deleted) and the recovery is noted.
 */
async function loadState(outDir: string, recipeHash: string, notes: string[], stateName: string = STATE_FILE_NAME): Promise<BatchState> {
  const statePath = join(outDir, stateName);
  const text = await readFile(statePath, 'utf8').catch(() => null);
  const backupText = await readFile(statePath + STATE_BACKUP_SUFFIX, 'utf8').catch(() => null);
  if (text === null && backupText === null) return emptyState();
  let problem = 'is missing';
  if (text !== null) {
    try {
      return parseState(text);
    } catch (e) {
      problem = `is damaged (${(e as Error).message})`;
    }
    const aside = `${statePath}.damaged-${new Date().toISOString().replace(/[:.]/g, '-')}`;
    await rename(statePath, aside).catch(() => undefined);
    notes.push(`${stateName} ${problem}; it was moved to ${basename(aside)}`);
  }
  let state: BatchState | null = null;
  if (backupText !== null) {
    try {
      state = parseState(backupText);
      notes.push(`resumed from the last good copy ${stateName}${STATE_BACKUP_SUFFIX} (${Object.keys(state.entries).length} finished files)`);
    } catch {
      state = null;
    }
  }
  if (!state) {
    const found: FoundRecord[] = [];
    const dir = join(outDir, 'records');
    for (const name of await readdir(dir).catch(() => [] as string[])) {
      if (!name.endsWith('.json')) continue;
      const path = join(dir, name);
      const [content, info] = await Promise.all([readRecord(path), stat(path).catch(() => null)]);
      if (content && info) found.push({ recordFile: `records/${name}`, result: content, writtenIso: info.mtime.toISOString() });
    }
    state = stateFromRecords(found, recipeHash);
    notes.push(`no usable copy of ${stateName}: rebuilt it from the ${Object.keys(state.entries).length} result records in records/`);
  }
  await saveState(statePath, state);
  return state;
}

/** One progress report: a line per file, or (TTY) a bar redrawn in place. */
export function progressLine(done: number, total: number, file: string, status: string, bar: boolean): string {
  if (!bar) return `batch: ${done}/${total} ${file} ${status}\n`;
  const width = 30;
  const filled = total ? Math.round((done / total) * width) : width;
  return `\r[${'#'.repeat(filled)}${'.'.repeat(width - filled)}] ${done}/${total} ${file.slice(0, 40).padEnd(40)}${done === total ? '\n' : ''}`;
}

/**
 * Runs a recipe over a folder: skips files finished earlier (same SHA-256, same recipe hash),
 * processes the rest on `jobs` worker threads, commits each result atomically (record file, then
 * state file, each written to a temporary file and renamed), and writes the exports.
 *
 * @param options folder, recipe, output paths, worker count
 * @param io where progress goes (err)
 * @returns counts, every file's result, worker memory peaks
 * Notes: a file that fails (corrupt, unsupported, no calibration, a failing tool) gets a failed
 * record; every other file is still processed. A file still in work after the per-file time
 * limit, or past the per-file memory limit, has its worker ended and replaced; it is reported
 * failed with that reason but, like a file whose worker crashed, not marked finished, so the next
 * run tries it again. Interrupting the run loses at most the files being processed at that
 * moment. Figure names are unique within the batch (`figureNames`) and each result records its
 * own (`figureFile`).
 */
export async function runBatch(options: RunBatchOptions, io: CliIo): Promise<BatchOutcome> {
  const t0 = performance.now();
  const { folder, recipe } = options;
  if (!(Number.isInteger(options.jobs) && options.jobs >= 1)) throw new UsageError(`--jobs must be a positive integer, got ${options.jobs}`);
  const folderStat = await stat(folder).catch(() => null);
  if (!folderStat?.isDirectory()) throw new UsageError(`${folder} is not a folder`);
  const outCsv = resolve(options.outCsv);
  const outDir = dirname(outCsv);
  const outBase = outCsv.replace(/\.csv$/i, '');
  const jsonOut = options.jsonOut ? resolve(options.jsonOut) : recipe.outputs.json ? `${outBase}.json` : undefined;
  const figuresDir = options.figuresDir ? resolve(options.figuresDir) : recipe.outputs.figures ? join(outDir, 'figures') : undefined;
  const shard = options.shard;
  // each shard keeps its own resume state, so the shards of a batch may share one output folder
  const stateName = shard ? STATE_FILE_NAME.replace(/\.json$/, `-shard-${shard.k}-of-${shard.n}.json`) : STATE_FILE_NAME;
  const statePath = join(outDir, stateName);
  const recipeHash = sha256Hex(canonicalRecipeJson(recipe));
  await mkdir(outDir, { recursive: true });

  const notes: string[] = [];
  let state = await loadState(outDir, recipeHash, notes, stateName);
  for (const n of notes) io.err(`batch: ${n}\n`);

  const folderFiles = await listImages(folder);
  const files = shard ? shardShare(folderFiles, shard) : folderFiles;
  // figure names from the whole folder, so a shard names each figure as a single run does
  const figureOf = figureNames(folderFiles);
  const memoryLimitMb = options.fileMemoryLimitMb ?? DEFAULT_FILE_MEMORY_LIMIT_MB;
  const timeLimitS = options.fileTimeLimitS ?? DEFAULT_FILE_TIME_LIMIT_S;
  if (!(Number.isFinite(timeLimitS) && timeLimitS > 0)) throw new UsageError(`--file-time-limit must be a positive number of seconds, got ${timeLimitS}`);
  if (!(Number.isInteger(memoryLimitMb) && memoryLimitMb >= 64)) throw new UsageError(`--file-memory-limit must be a whole number of MiB, at least 64, got ${memoryLimitMb}`);
  const total = files.length;
  let next = 0;
  let done = 0;
  let processed = 0;
  let skipped = 0;
  const bar = !!options.progressBar;
  const results = new Map<string, FileResult>();

  // Commits run one after the other, so the state file always holds every finished file.
  let commitChain: Promise<void> = Promise.resolve();
  // `persist: false` reports a result in this run's exports without marking the file finished
  // (a worker that stopped may have run out of memory on a busy machine: the next run retries).
  const commit = (job: Job, sha256: string | undefined, fileResult: FileResult, figurePng?: Uint8Array, persist = true) => {
    const result: FileResult = sha256 ? { ...fileResult, sha256 } : fileResult;
    commitChain = commitChain.then(async () => {
      if (persist && sha256) {
        const recordFile = recordFileName(job.file, sha256, recipeHash);
        const figureFile = figureOf.get(job.file)!;
        if (figurePng && figuresDir) result.figureFile = figureFile;
        await writeAtomic(join(outDir, recordFile), `${JSON.stringify(result)}\n`);
        if (figurePng && figuresDir) await writeAtomic(join(figuresDir, figureFile), figurePng);
        state = withEntry(state, job.file, { sha256, recipeHash, status: result.status, recordFile, finishedIso: new Date().toISOString() });
        await saveState(statePath, state);
      }
      results.set(job.file, result);
      processed++;
      done++;
      io.err(progressLine(done, total, job.file, result.status === 'ok' ? 'ok' : `failed: ${result.reason}`, bar));
    });
    return commitChain;
  };

  /**
   * The next file that needs processing, or null; finished ones are counted as skipped. Only a
   * file with a finished entry for this recipe is read here (to compare its bytes); the others
   * are read by the worker.
   */
  const takeJob = async (): Promise<Job | null> => {
    while (next < files.length) {
      const file = files[next++];
      const path = resolve(folder, file);
      const entry = state.entries[file];
      if (!entry || entry.recipeHash !== recipeHash) return { file, path };
      const recordPath = join(outDir, entry.recordFile);
      const figureMissing = figuresDir && entry.status === 'ok' && !(await exists(join(figuresDir, figureOf.get(file)!)));
      const buf = await readFile(path).catch(() => null);
      if (!buf) return { file, path }; // the worker reports why it cannot be read
      const bytes = new Uint8Array(buf.byteLength);
      bytes.set(buf);
      const sha256 = sha256Hex(bytes);
      const record = isFinished(state, file, sha256, recipeHash) && !figureMissing ? await readRecord(recordPath) : null;
      if (record) {
        results.set(file, record);
        skipped++;
        done++;
        io.err(progressLine(done, total, file, 'skipped (finished earlier)', bar));
        continue;
      }
      return { file, path, sha256, bytes };
    }
    return null;
  };

  const depsModule = options.depsModule;
  const workerCount = Math.min(options.jobs, Math.max(1, total));
  let startupMs = 0;
  // statistics per worker loop (a loop whose worker was replaced adds up its workers)
  const stats = Array.from({ length: workerCount }, () => ({ peak: 0, early: 0, files: 0, third: 0, last: 0 }));
  // Memory backstop: the heap of each worker is capped by V8 and its arrays by the decoder
  // budgets; should the process still grow past every worker's share, the worker longest on its
  // file is ended and the file fails with the reason.
  const active = new Set<BatchWorker>();
  const processLimitBytes = (workerCount * (memoryLimitMb + 256) + 256) * 2 ** 20;
  const watchdog = setInterval(() => {
    if (process.memoryUsage.rss() <= processLimitBytes) return;
    let oldest: BatchWorker | null = null;
    for (const w of active) if (w.current && (!oldest || w.current.startedMs < oldest.current!.startedMs)) oldest = w;
    oldest?.end(`the process ran past its memory limit (${memoryLimitMb} MiB per file) while this file was in work; the worker was ended and replaced`);
  }, 500);
  watchdog.unref();
  const failedResult = (file: string, reason: string): FileResult => ({ file, status: 'failed', reason, image: null, calibration: null, measurements: [], summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] }, notes: [] });
  let poolError: { error: unknown } | null = null;
  try {
    await runPool<Job, Job, WorkerReply>({
      workers: workerCount,
      // the next file is taken (a finished one read and hashed to be skipped) while this one is measured
      prefetch: true,
      next: takeJob,
      job: (j) => j,
      timeLimitMs: timeLimitS * 1000,
      spawn: () => {
        const w = new BatchWorker(recipe, depsModule, !!figuresDir, !!options.measureRetained, memoryLimitMb);
        active.add(w);
        w.ready.then(() => (startupMs = Math.max(startupMs, performance.now() - t0)), () => undefined);
        return w;
      },
      onReply: (job, reply) => commit(job, reply.sha256, reply.result, reply.figurePng),
      // a worker that crashed or passed a limit: reported, but not marked finished (the next run tries the file again)
      onFailure: (job, e) => commit(job, job.sha256, failedResult(job.file, e instanceof LimitError ? `stopped: ${e.message}` : `processing stopped: ${e.message.split('\n')[0]}`), undefined, false),
      onWorkerDone: (pw, index) => {
        const w = pw as BatchWorker;
        active.delete(w);
        const st = stats[index];
        st.peak = Math.max(st.peak, w.peakBytes);
        st.early = Math.max(st.early, w.earlyPeakBytes);
        st.files += w.files;
        st.third ||= w.retainedAfterThird;
        st.last = w.retainedAfterLast || st.last;
      },
    });
  } catch (error) {
    poolError = { error };
  } finally {
    clearInterval(watchdog);
  }
  await commitChain;
  if (poolError) throw poolError.error;
  const used = stats.filter((st) => st.peak > 0);
  const peaks = used.map((st) => st.peak);
  const earlyPeaks = used.map((st) => st.early);
  const workerFiles = used.map((st) => st.files);
  const retained: BatchOutcome['workerRetainedBytes'] = used.map((st) => ({ afterThird: st.third, afterLast: st.last }));
  await commitChain;

  const ordered = files.map((f) => results.get(f)).filter((r): r is FileResult => r !== undefined);
  let written: string[];
  if (shard) {
    const partialPath = join(outDir, partialFileName(basename(outBase), shard));
    const partial: PartialResult = {
      format: PARTIAL_FORMAT,
      schemaVersion: PARTIAL_SCHEMA_VERSION,
      programVersion: PROGRAM_VERSION,
      recipe,
      recipeHash,
      shard,
      folderFiles,
      figuresDir: figuresDir ? relative(outDir, figuresDir) || '.' : null,
      results: ordered,
      createdIso: new Date().toISOString(),
    };
    await writeAtomic(partialPath, `${JSON.stringify(partial)}\n`);
    written = [partialPath];
  } else {
    written = await writeBatchExports({ recipe, results: ordered, outCsv, writeCsv: options.writeCsv ?? recipe.outputs.csv, jsonOut, figuresDir });
  }
  return { total: files.length, processed, skipped, results: ordered, workerPeakBytes: peaks, workerEarlyPeakBytes: earlyPeaks, workerFiles, workerRetainedBytes: retained, seconds: (performance.now() - t0) / 1000, startupSeconds: startupMs / 1000, written, notes };
}


/** What `writeBatchExports` writes. */
export interface BatchExportOptions {
  recipe: Recipe;
  /** Every file's result, in folder order. */
  results: FileResult[];
  /** Results CSV path (absolute); the summary CSV and the zip go beside it. */
  outCsv: string;
  /** Write the two CSV tables. */
  writeCsv: boolean;
  /** JSON export path, or undefined for none. */
  jsonOut?: string;
  /** Figures folder holding each file's figure (figureFile), or undefined for none: the histograms go there too. */
  figuresDir?: string;
}

/**
 * Writes a batch's exports: results and summary CSV, JSON, histograms (SVG and PNG) and the zip,
 * as the recipe and options ask. A single run and `merge` both end here, so their exports agree.
 * @returns the files written
 */
export async function writeBatchExports(options: BatchExportOptions): Promise<string[]> {
  const { recipe, results: ordered, outCsv, jsonOut, figuresDir } = options;
  const outBase = outCsv.replace(/\.csv$/i, '');
  const written: string[] = [];
  const exportsZip: Record<string, string | Uint8Array> = {};
  const put = async (path: string, content: string | Uint8Array, zipName: string) => {
    await writeAtomic(path, content);
    written.push(path);
    exportsZip[zipName] = content;
  };
  if (options.writeCsv) {
    const k = recipe.outputs.coverageFactor;
    await put(outCsv, resultsCsv(ordered, k), basename(outCsv));
    await put(`${outBase}-summary.csv`, summaryCsv(ordered, k), `${basename(outBase)}-summary.csv`);
  }
  if (jsonOut) await put(jsonOut, batchJson(recipe, ordered), basename(jsonOut));
  if (figuresDir) {
    const pooled = pooledStats(ordered, recipe.outputs.coverageFactor);
    const tops = ordered.flatMap((r) => (r.summary.topPeriods[0] && r.calibration ? [expressPeriod(r.summary.topPeriods[0], r.calibration).value] : []));
    const topsHist = { xLabel: 'strongest period per image (nm)', title: `${tops.length} images` };
    // no histogram of fewer than 3 values (they are listed in the summary CSV)
    if (tops.length >= MIN_VALUES_FOR_STATISTICS) await put(join(figuresDir, 'histogram-top-period-nm.svg'), histogramSvg(tops, topsHist), 'figures/histogram-top-period-nm.svg');
    if (tops.length >= MIN_VALUES_FOR_STATISTICS) await put(join(figuresDir, 'histogram-top-period-nm.png'), histogramPng(tops, topsHist), 'figures/histogram-top-period-nm.png');
    const sheets = ordered.flatMap((r) => r.summary.sheetThicknessNm);
    const sheetsHist = { xLabel: 'sheet thickness (nm)', title: `${pooled.sheetCount} sheets` };
    if (sheets.length >= MIN_VALUES_FOR_STATISTICS) await put(join(figuresDir, 'histogram-sheet-thickness-nm.svg'), histogramSvg(sheets, sheetsHist), 'figures/histogram-sheet-thickness-nm.svg');
    if (sheets.length >= MIN_VALUES_FOR_STATISTICS) await put(join(figuresDir, 'histogram-sheet-thickness-nm.png'), histogramPng(sheets, sheetsHist), 'figures/histogram-sheet-thickness-nm.png');
    if (recipe.outputs.zip) {
      for (const r of ordered) {
        if (r.status !== 'ok' || !r.figureFile) continue;
        const p = join(figuresDir, r.figureFile);
        if (await exists(p)) exportsZip[`figures/${r.figureFile}`] = new Uint8Array(await readFile(p));
      }
    }
  }
  if (recipe.outputs.zip) {
    const zipPath = `${outBase}.zip`;
    await writeAtomic(zipPath, zipExports(exportsZip));
    written.push(zipPath);
  }
  return written;
}

const usage = `Usage: stratameter batch FOLDER [--recipe FILE.json] [--out results.csv] [--json-out results.json] [--figures DIR] [--jobs N] [--coverage-factor K] [--shard K/N]

Runs a recipe on every image in FOLDER (${IMAGE_EXTENSIONS.join(' ')}; not recursive).

  --recipe FILE.json  the batch recipe (default: pixel size from the file metadata, whole image
                      without the information strip, the three strongest spectrum periods)
  --out FILE.csv      results table, one row per period (default results.csv, written unless the
                      recipe turns csv off); its folder also gets FILE-summary.csv (one row per
                      image), ${STATE_FILE_NAME} and records/ (the resume state)
  --json-out FILE     full results and pooled statistics as JSON
  --figures DIR       an annotated PNG per image (scale bar, periods) and SVG and PNG histograms
  --jobs N            worker threads (default: the number of cores)
  --coverage-factor K k of every expanded uncertainty U = k·u in the exports (default: the
                      recipe's outputs.coverageFactor, 2, about 95 %); becomes part of the recipe
  --file-time-limit S     seconds one file may take (default ${DEFAULT_FILE_TIME_LIMIT_S}); past it the file's
                          worker is ended and replaced and the file is listed as failed
  --file-memory-limit MB  memory one file may use, MiB (default ${DEFAULT_FILE_MEMORY_LIMIT_MB}); past it likewise
  --shard K/N         process only shard K of N (1 ≤ K ≤ N): the folder's files sorted by name
                      and dealt out in turn, so every machine computes the same share. Writes
                      the partial result OUT.shard-K-of-N.json (and the share's figures) instead of
                      the exports; its own resume state, so shards may share an output folder.
                      Combine the partial results with 'stratameter merge'.

A re-run with the same output folder skips every file already finished with the same bytes and
the same recipe; a damaged state file is recovered from its last good copy (or from records/).
The exit code is 1 when any file failed (all other files are still processed).`;

export const command: CliCommand = {
  name: 'batch',
  summary: 'run a recipe on every image of a folder (resumable, parallel, sharded); CSV, JSON, figures',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options } = parseArgs(args, { values: ['recipe', 'out', 'json-out', 'figures', 'jobs', 'file-time-limit', 'file-memory-limit', 'shard', 'coverage-factor'] });
    let shard: ShardSpec | undefined;
    if (options.has('shard')) {
      try {
        shard = parseShardSpec(options.get('shard')!);
      } catch (e) {
        if (e instanceof ShardError) throw new UsageError(e.message);
        throw e;
      }
    }
    if (positional.length !== 1) throw new UsageError(`batch needs exactly one FOLDER, got ${positional.length}`);
    let recipe = defaultRecipe();
    const recipePath = options.get('recipe');
    if (recipePath) {
      const text = await readFile(recipePath, 'utf8').catch((e: Error) => {
        throw new UsageError(`cannot read the recipe ${recipePath}: ${e.message}`);
      });
      try {
        recipe = readRecipeFile(text, recipePath);
      } catch (e) {
        if (e instanceof RecipeError) throw new UsageError(e.message);
        throw e;
      }
    }
    // k is part of the recipe (so shards of one batch agree and merge checks it): the option sets it
    if (options.has('coverage-factor')) recipe = { ...recipe, outputs: { ...recipe.outputs, coverageFactor: coverageFactorOption(options.get('coverage-factor')) } };
    const jobsText = options.get('jobs');
    const { availableParallelism } = await import('node:os');
    const jobs = jobsText === undefined ? availableParallelism() : Number(jobsText);
    if (!(Number.isInteger(jobs) && jobs >= 1 && jobs <= 64)) throw new UsageError(`--jobs must be an integer from 1 to 64, got ${jobsText}`);
    const limit = (name: string, fallback: number) => {
      const text = options.get(name);
      const v = text === undefined ? fallback : Number(text);
      if (!(Number.isFinite(v) && v > 0)) throw new UsageError(`--${name} must be a positive number, got '${text}'`);
      return v;
    };
    const fileTimeLimitS = limit('file-time-limit', DEFAULT_FILE_TIME_LIMIT_S);
    const fileMemoryLimitMb = Math.round(limit('file-memory-limit', DEFAULT_FILE_MEMORY_LIMIT_MB));
    const outcome = await runBatch(
      {
        fileTimeLimitS,
        fileMemoryLimitMb,
        folder: positional[0],
        recipe,
        outCsv: options.get('out') ?? 'results.csv',
        writeCsv: recipe.outputs.csv || options.has('out'),
        jsonOut: options.get('json-out'),
        figuresDir: options.get('figures'),
        jobs,
        progressBar: !!process.stderr.isTTY,
        shard,
      },
      io,
    );
    const failed = outcome.results.filter((r) => r.status === 'failed');
    io.out(
      `${shard ? `shard ${shard.k} of ${shard.n}: ` : ''}${outcome.total} images: ${outcome.processed} processed, ${outcome.skipped} skipped (finished earlier); ${outcome.results.length - failed.length} ok, ${failed.length} failed\n`,
    );
    for (const r of failed) io.err(`failed: ${r.file}: ${r.reason}\n`);
    for (const p of outcome.written) io.out(`wrote ${p}\n`);
    if (shard) io.out(`when every shard of ${shard.n} has finished: stratameter merge ${dirname(resolve(options.get('out') ?? 'results.csv'))} (or the partial result files)\n`);
    return failed.length > 0 ? 1 : 0;
  },
};
