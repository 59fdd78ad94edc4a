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
import { mkdir, readdir, readFile, rename, stat, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { basename, dirname, extname, join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { isMainThread, parentPort, Worker, workerData } from 'node:worker_threads';
import { batchJson, pooledStats, resultsCsv, summaryCsv, zipExports } from '../batch/export';
import { annotatedFigurePng, histogramPng, histogramSvg } from '../batch/figure';
import { canonicalRecipeJson, defaultRecipe, parseRecipe, RecipeError, type Recipe } from '../batch/recipe';
import { missingTools, processOne, upgradeFileResult, type BatchDeps, type FileResult } from '../batch/run';
import { emptyState, isFinished, parseState, recordFileName, STATE_FILE_NAME, withEntry, type BatchState } from '../batch/state';
import { createWorkspace, type Workspace } from '../image/workspace';
import { parseArgs, UsageError, type CliCommand, type CliIo } from './command';

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
}

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
  /** Seconds from the start until the last worker had loaded its tools (thread start, TypeScript loader, opencv.js). */
  startupSeconds: number;
  /** Files written (exports). */
  written: string[];
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

const DEFAULT_DEPS_MODULE = new URL('../batch/deps.ts', import.meta.url).href;

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

function figureName(file: string): string {
  return `${file.replace(/[^A-Za-z0-9._-]+/g, '_')}.png`;
}

/** The module a worker boots from: registers tsx, then runs `workerMain` of this file. */
function workerBootUrl(): URL {
  const tsxDir = dirname(createRequire(import.meta.url).resolve('tsx/package.json'));
  const api = pathToFileURL(join(tsxDir, 'dist/esm/api/index.mjs')).href;
  const self = import.meta.url;
  const code = `import { register } from ${JSON.stringify(api)};\nregister();\nconst m = await import(${JSON.stringify(self)});\nawait m.workerMain();\n`;
  return new URL(`data:text/javascript,${encodeURIComponent(code)}`);
}

/** One worker thread and its queue of one job at a time. */
class BatchWorker {
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

  constructor(recipe: Recipe, depsModule: string, figures: boolean, measureRetained: boolean) {
    this.worker = new Worker(workerBootUrl(), { workerData: { stratameterBatch: true, recipe, depsModule, figures, measureRetained } });
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

  run(job: Job): Promise<WorkerReply> {
    return new Promise((resolve, reject) => {
      this.pending = { resolve, reject };
      const transfer = job.bytes ? [job.bytes.buffer as ArrayBuffer] : [];
      this.worker.postMessage({ file: job.file, path: job.path, sha256: job.sha256, bytes: job.bytes }, transfer);
    });
  }

  stop(): Promise<number> {
    return this.worker.terminate();
  }
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
  const { recipe, depsModule, figures, measureRetained } = workerData as { recipe: Recipe; depsModule: string; figures: boolean; measureRetained: boolean };
  let gc: (() => void) | null = null;
  if (measureRetained) {
    const v8 = await import('node:v8');
    const vm = await import('node:vm');
    v8.setFlagsFromString('--expose-gc');
    gc = vm.runInNewContext('gc') as () => void;
  }
  let deps: BatchDeps;
  try {
    const mod = (await import(depsModule)) as { createBatchDeps(): Promise<BatchDeps> };
    deps = await mod.createBatchDeps();
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
 * record; every other file is still processed. A file whose worker thread stopped is reported
 * failed but not marked finished, so the next run tries it again. Interrupting the run loses at
 * most the files being processed at that moment.
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
  const statePath = join(outDir, STATE_FILE_NAME);
  const recipeHash = sha256Hex(canonicalRecipeJson(recipe));
  await mkdir(outDir, { recursive: true });

  let state: BatchState = emptyState();
  const stateText = await readFile(statePath, 'utf8').catch(() => null);
  if (stateText !== null) state = parseState(stateText);

  const files = await listImages(folder);
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
        await writeAtomic(join(outDir, recordFile), `${JSON.stringify(result)}\n`);
        if (figurePng && figuresDir) await writeAtomic(join(figuresDir, figureName(job.file)), figurePng);
        state = withEntry(state, job.file, { sha256, recipeHash, status: result.status, recordFile, finishedIso: new Date().toISOString() });
        await writeAtomic(statePath, `${JSON.stringify(state, null, 1)}\n`);
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
      const figureMissing = figuresDir && entry.status === 'ok' && !(await exists(join(figuresDir, figureName(file))));
      const buf = await readFile(path).catch(() => null);
      if (!buf) return { file, path }; // the worker reports why it cannot be read
      const bytes = new Uint8Array(buf.byteLength);
      bytes.set(buf);
      const sha256 = sha256Hex(bytes);
      if (isFinished(state, file, sha256, recipeHash) && !figureMissing && (await exists(recordPath))) {
        results.set(file, upgradeFileResult(JSON.parse(await readFile(recordPath, 'utf8')), recordPath));
        skipped++;
        done++;
        io.err(progressLine(done, total, file, 'skipped (finished earlier)', bar));
        continue;
      }
      return { file, path, sha256, bytes };
    }
    return null;
  };

  const depsModule = options.depsModule ?? DEFAULT_DEPS_MODULE;
  const workerCount = Math.min(options.jobs, Math.max(1, total));
  let startupMs = 0;
  const peaks: number[] = [];
  const earlyPeaks: number[] = [];
  const workerFiles: number[] = [];
  const retained: BatchOutcome['workerRetainedBytes'] = [];
  let fatal: Error | null = null;
  const loops: Promise<void>[] = [];
  for (let w = 0; w < workerCount; w++) {
    loops.push(
      (async () => {
        let worker: BatchWorker | null = null;
        let peak = 0;
        let early = 0;
        let count = 0;
        let third = 0;
        let last = 0;
        try {
          let job = await takeJob();
          for (; job; ) {
            if (fatal) break;
            if (!worker) {
              worker = new BatchWorker(recipe, depsModule, !!figuresDir, !!options.measureRetained);
              try {
                await worker.ready;
                startupMs = Math.max(startupMs, performance.now() - t0);
              } catch (e) {
                fatal ??= e as Error;
                break;
              }
            }
            // Take the next file (a finished one is read and hashed here to be skipped) while this one is measured.
            const prefetch = takeJob();
            let reply: WorkerReply;
            try {
              reply = await worker.run(job);
            } catch (e) {
              // a crashed worker fails its file only; a fresh worker takes the next one
              peak = Math.max(peak, worker.peakBytes);
              early = Math.max(early, worker.earlyPeakBytes);
              count += worker.files;
              third ||= worker.retainedAfterThird;
              last = worker.retainedAfterLast || last;
              await worker.stop().catch(() => 0);
              worker = null;
              const reason = `processing stopped: ${(e as Error).message.split('\n')[0]}`;
              await commit(job, job.sha256, { file: job.file, status: 'failed', reason, image: null, calibration: null, measurements: [], summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] }, notes: [] }, undefined, false);
              job = await prefetch;
              continue;
            }
            await commit(job, reply.sha256, reply.result, reply.figurePng);
            job = await prefetch;
          }
        } finally {
          if (worker && options.measureRetained && worker.files > 0) await worker.measureRetained().catch(() => undefined);
          if (worker) {
            peak = Math.max(peak, worker.peakBytes);
            early = Math.max(early, worker.earlyPeakBytes);
            count += worker.files;
            third ||= worker.retainedAfterThird;
            last = worker.retainedAfterLast || last;
            await worker.stop().catch(() => 0);
          }
          if (peak > 0) {
            peaks.push(peak);
            earlyPeaks.push(early);
            workerFiles.push(count);
            retained.push({ afterThird: third, afterLast: last });
          }
        }
      })(),
    );
  }
  await Promise.all(loops);
  await commitChain;
  if (fatal) throw fatal;

  const ordered = files.map((f) => results.get(f)).filter((r): r is FileResult => r !== undefined);
  const written: string[] = [];
  const exportsZip: Record<string, string | Uint8Array> = {};
  const put = async (path: string, content: string | Uint8Array, zipName: string) => {
    await writeAtomic(path, content);
    written.push(path);
    exportsZip[zipName] = content;
  };
  if (options.writeCsv ?? recipe.outputs.csv) {
    await put(outCsv, resultsCsv(ordered), basename(outCsv));
    await put(`${outBase}-summary.csv`, summaryCsv(ordered), `${basename(outBase)}-summary.csv`);
  }
  if (jsonOut) await put(jsonOut, batchJson(recipe, ordered), basename(jsonOut));
  if (figuresDir) {
    const pooled = pooledStats(ordered);
    const tops = ordered.flatMap((r) => (r.summary.topPeriods[0] && r.calibration ? [expressPeriod(r.summary.topPeriods[0], r.calibration).value] : []));
    const topsHist = { xLabel: 'strongest period per image (nm)', title: `${tops.length} images` };
    if (tops.length) await put(join(figuresDir, 'histogram-top-period-nm.svg'), histogramSvg(tops, topsHist), 'figures/histogram-top-period-nm.svg');
    if (tops.length) await put(join(figuresDir, 'histogram-top-period-nm.png'), histogramPng(tops, topsHist), 'figures/histogram-top-period-nm.png');
    const sheets = ordered.flatMap((r) => r.summary.sheetThicknessNm);
    const sheetsHist = { xLabel: 'sheet thickness (nm)', title: `${pooled.sheetCount} sheets` };
    if (sheets.length) await put(join(figuresDir, 'histogram-sheet-thickness-nm.svg'), histogramSvg(sheets, sheetsHist), 'figures/histogram-sheet-thickness-nm.svg');
    if (sheets.length) await put(join(figuresDir, 'histogram-sheet-thickness-nm.png'), histogramPng(sheets, sheetsHist), 'figures/histogram-sheet-thickness-nm.png');
    if (recipe.outputs.zip) {
      for (const r of ordered) {
        const p = join(figuresDir, figureName(r.file));
        if (r.status === 'ok' && (await exists(p))) exportsZip[`figures/${figureName(r.file)}`] = new Uint8Array(await readFile(p));
      }
    }
  }
  if (recipe.outputs.zip) {
    const zipPath = `${outBase}.zip`;
    await writeAtomic(zipPath, zipExports(exportsZip));
    written.push(zipPath);
  }
  return { total, processed, skipped, results: ordered, workerPeakBytes: peaks, workerEarlyPeakBytes: earlyPeaks, workerFiles, workerRetainedBytes: retained, seconds: (performance.now() - t0) / 1000, startupSeconds: startupMs / 1000, written };
}

const usage = `Usage: stratameter batch FOLDER [--recipe FILE.json] [--out results.csv] [--json-out results.json] [--figures DIR] [--jobs N]

Runs a recipe on every image in FOLDER (${IMAGE_EXTENSIONS.join(' ')}; not recursive).

  --recipe FILE.json  the batch recipe (default: pixel size from the file metadata, whole image
                      without the information strip, the three strongest spectrum periods)
  --out FILE.csv      results table, one row per period (default results.csv, written unless the
                      recipe turns csv off); its folder also gets FILE-summary.csv (one row per
                      image), ${STATE_FILE_NAME} and records/ (the resume state)
  --json-out FILE     full results and pooled statistics as JSON
  --figures DIR       an annotated PNG per image (scale bar, periods) and SVG and PNG histograms
  --jobs N            worker threads (default: the number of cores)

A re-run with the same output folder skips every file already finished with the same bytes and
the same recipe. The exit code is 1 when any file failed (all other files are still processed).`;

export const command: CliCommand = {
  name: 'batch',
  summary: 'run a recipe on every image of a folder (resumable, parallel); CSV, JSON, figures',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options } = parseArgs(args, { values: ['recipe', 'out', 'json-out', 'figures', 'jobs'] });
    if (positional.length !== 1) throw new UsageError(`batch needs exactly one FOLDER, got ${positional.length}`);
    let recipe = defaultRecipe();
    const recipePath = options.get('recipe');
    if (recipePath) {
      const text = await readFile(recipePath, 'utf8').catch((e: Error) => {
        throw new UsageError(`cannot read the recipe ${recipePath}: ${e.message}`);
      });
      try {
        recipe = parseRecipe(text);
      } catch (e) {
        if (e instanceof RecipeError) throw new UsageError(`${recipePath}: ${e.message}`);
        throw e;
      }
    }
    const jobsText = options.get('jobs');
    const { availableParallelism } = await import('node:os');
    const jobs = jobsText === undefined ? availableParallelism() : Number(jobsText);
    if (!(Number.isInteger(jobs) && jobs >= 1 && jobs <= 64)) throw new UsageError(`--jobs must be an integer from 1 to 64, got ${jobsText}`);
    const outcome = await runBatch(
      {
        folder: positional[0],
        recipe,
        outCsv: options.get('out') ?? 'results.csv',
        writeCsv: recipe.outputs.csv || options.has('out'),
        jsonOut: options.get('json-out'),
        figuresDir: options.get('figures'),
        jobs,
        progressBar: !!process.stderr.isTTY,
      },
      io,
    );
    const failed = outcome.results.filter((r) => r.status === 'failed');
    io.out(
      `${outcome.total} images: ${outcome.processed} processed, ${outcome.skipped} skipped (finished earlier); ${outcome.results.length - failed.length} ok, ${failed.length} failed\n`,
    );
    for (const r of failed) io.err(`failed: ${r.file}: ${r.reason}\n`);
    for (const p of outcome.written) io.out(`wrote ${p}\n`);
    return failed.length > 0 ? 1 : 0;
  },
};
