/**
 * The fuzz runner: `npm run test:fuzz -- --seconds 60 --seed 7` (a time budget per reader),
 * `-- --inputs 20000` (a number of inputs shared by the readers) or `-- --long` (100,000 inputs).
 *
 * Each reader runs in a child process of its own, inside a worker thread that reports every
 * input before and after reading it. A worker that says nothing for longer than the hang limit is
 * stopped, the input it was reading is counted as a hang, and a new worker carries on after it; a
 * worker whose process grows past the memory limit, or whose heap overflows, is stopped likewise
 * and the input counted as a memory failure. Prints a table of outcomes per reader and exits with
 * status 1 when any input failed (see harness.ts for the outcomes).
 */
import { spawn } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { Worker, isMainThread, parentPort, workerData } from 'node:worker_threads';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { FAILURES, HANG_MS, MEMORY_LIMIT_BYTES, TARGETS, count, fuzzTarget, makeInput, newTally, runOne, table, type FuzzTarget, type Outcome, type TargetTally } from './harness';

const TSX_API = import.meta.resolve('tsx/esm/api');
/** Inputs of a long run. */
const LONG_RUN_INPUTS = 100_000;

/**
 * A reader that never returns on every 50th input: `--only hang-probe` checks that the watchdog
 * stops it, reports it as a hang and carries on with the next input.
 */
const HANG_PROBE: FuzzTarget = {
  id: 'hang-probe',
  seeds: () => [{ name: 'probe.bin', bytes: new Uint8Array(16) }],
  mutate: (b, r) => ({ bytes: b, mutation: `n ${Math.floor(r() * 50)}` }),
  read(input) {
    if (input.mutation === 'n 0') for (;;) { /* a hang */ }
    return { warnings: [] };
  },
  own: () => false,
  namesFile: () => true,
};

interface Job {
  target: string;
  seed: number;
  from: number;
  /** One past the last input to run (count mode), or Infinity. */
  to: number;
  /** Epoch ms after which no input is started; 0: the budget from when the worker is ready. */
  deadline: number;
  budgetMs: number;
}

type Msg =
  | { kind: 'start'; i: number; name: string; mutation: string; corrupt: boolean }
  | { kind: 'done'; i: number; outcome: Outcome; detail: string; ms: number; grownBytes: number }
  | { kind: 'seeds'; failures: TargetTally['failures']; deadline: number }
  | { kind: 'end' };

function arg(name: string, fallback: number): number {
  const i = process.argv.indexOf(`--${name}`);
  if (i < 0) return fallback;
  const v = Number(process.argv[i + 1]);
  if (!Number.isFinite(v) || v < 0) throw new Error(`--${name} must be a non-negative number, got ${process.argv[i + 1]}`);
  return v;
}

async function workerMain(job: Job): Promise<void> {
  // A collection before each input makes the memory growth per input meaningful.
  setFlagsFromString('--expose-gc');
  (globalThis as { gc?: unknown }).gc = runInNewContext('gc');
  const target = [...TARGETS, HANG_PROBE].find((t) => t.id === job.target)!;
  const seeds = target.seeds();
  const post = (m: Msg) => parentPort!.postMessage(m);
  // The time budget starts when the modules are loaded and the seeds made (slow on a busy machine).
  const deadline = job.deadline || Date.now() + job.budgetMs;
  const t = job.from === 0 ? await fuzzTarget(target, job.seed, 0) : { failures: [] };
  post({ kind: 'seeds', failures: t.failures, deadline });
  for (let i = job.from; i < job.to && Date.now() < deadline; i++) {
    const input = makeInput(target, seeds, job.seed, i);
    post({ kind: 'start', i, name: input.name, mutation: input.mutation, corrupt: !!input.expect });
    const r = await runOne(target, input);
    post({ kind: 'done', i, outcome: r.outcome, detail: r.detail, ms: r.ms, grownBytes: r.grownBytes });
  }
  post({ kind: 'end' });
}

/** Runs one reader's inputs [0, inputs) or for budgetMs, in worker threads, restarting after a hang or a memory failure. */
function runTarget(id: string, seed: number, budgetMs: number, inputs: number): Promise<TargetTally> {
  let deadline = 0;
  const tally = newTally(id);
  const baseline = process.memoryUsage.rss();
  return new Promise((resolve) => {
    const spawnWorker = (from: number) => {
      // The worker loads this same file through tsx's loader (a bare `--import tsx` does not reach worker threads on Node 20).
      const boot = `import(${JSON.stringify(TSX_API)}).then((m) => { m.register(); return import(${JSON.stringify(import.meta.url)}); })`;
      const w = new Worker(boot, {
        eval: true,
        workerData: { target: id, seed, from, to: inputs, deadline, budgetMs } satisfies Job,
        // a heap that runs past the memory limit ends the worker (an error event), never the machine
        resourceLimits: { maxOldGenerationSizeMb: Math.round(MEMORY_LIMIT_BYTES / 2 ** 20) + 512 },
      });
      let current: Extract<Msg, { kind: 'start' }> | null = null;
      let timer: NodeJS.Timeout | null = null;
      let finished = false;
      const stopAs = (outcome: Outcome, detail: string) => {
        if (finished) return;
        finished = true;
        if (timer) clearTimeout(timer);
        clearInterval(memoryWatch);
        void w.terminate();
        const i = current ? current.i : from;
        const input = { name: current?.name ?? '?', mutation: current?.mutation ?? '?', bytes: new Uint8Array(0), expect: current?.corrupt ? ({ kind: 'refuse' } as const) : undefined };
        count(tally, input, i, { outcome, detail, ms: outcome === 'hang' ? HANG_MS : 0 });
        const more = inputs === Infinity ? Date.now() < deadline : i + 1 < inputs;
        if (current && more) spawnWorker(i + 1);
        else resolve(tally);
      };
      const arm = (ms: number) => {
        if (timer) clearTimeout(timer);
        timer = setTimeout(() => stopAs('hang', `no answer after ${ms} ms`), ms);
      };
      // The process memory, sampled: a worker that grows past the limit is stopped (array buffers are outside the heap limit).
      const memoryWatch = setInterval(() => {
        const grown = process.memoryUsage.rss() - baseline;
        if (grown > MEMORY_LIMIT_BYTES) stopAs('memory', `process memory grew by ${(grown / 2 ** 20).toFixed(0)} MiB`);
      }, 100);
      arm(120_000); // the first message comes after the seeds are made and the modules are loaded
      w.on('message', (m: Msg) => {
        if (m.kind === 'start') {
          current = m;
          arm(HANG_MS + 2000);
        } else if (m.kind === 'done') {
          const input = { name: current?.name ?? '?', mutation: current?.mutation ?? '', bytes: new Uint8Array(0), expect: current?.corrupt ? ({ kind: 'refuse' } as const) : undefined };
          count(tally, input, m.i, m);
          current = null;
          arm(120_000);
        } else if (m.kind === 'seeds') {
          tally.failures.push(...m.failures);
          deadline = m.deadline;
        } else {
          finished = true;
          if (timer) clearTimeout(timer);
          clearInterval(memoryWatch);
          void w.terminate().then(() => resolve(tally));
        }
      });
      w.on('error', (e) => {
        if (finished) return;
        // The worker died (heap out of memory, a native fault): the input in progress is to blame.
        const outcome: Outcome = /memory|heap/i.test(e.message) || (e as NodeJS.ErrnoException).code === 'ERR_WORKER_OUT_OF_MEMORY' ? 'memory' : 'crash';
        if (!current) {
          // A worker that dies before its first input cannot start at all: stop rather than respawn.
          finished = true;
          clearInterval(memoryWatch);
          if (timer) clearTimeout(timer);
          tally.failures.push({ input: '?', mutation: '?', outcome, detail: `worker died before its first input: ${e.message}` });
          resolve(tally);
          return;
        }
        stopAs(outcome, `worker died: ${e.message}`);
      });
    };
    spawnWorker(0);
  });
}

/** Runs one reader in a child process of its own (readers after a busy one ran slowly when they shared the process). */
function runChild(id: string, seed: number, seconds: number, inputs: number): Promise<TargetTally> {
  return new Promise((resolve, reject) => {
    const args = ['--import', 'tsx', fileURLToPath(import.meta.url), '--only', id, '--seed', String(seed), '--seconds', String(seconds), '--json'];
    if (Number.isFinite(inputs)) args.push('--inputs', String(inputs));
    const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'inherit'] });
    let out = '';
    child.stdout.on('data', (d: Buffer) => (out += d.toString()));
    child.on('close', () => {
      const line = out.split('\n').find((l) => l.startsWith('{'));
      if (line) resolve(JSON.parse(line) as TargetTally);
      else reject(new Error(`the ${id} run printed no result:\n${out}`));
    });
  });
}

async function main(): Promise<void> {
  const long = process.argv.includes('--long');
  const seed = arg('seed', 1);
  const only = process.argv.includes('--only') ? process.argv[process.argv.indexOf('--only') + 1] : null;
  const totalInputs = long ? Math.max(LONG_RUN_INPUTS, arg('inputs', LONG_RUN_INPUTS)) : arg('inputs', Infinity);
  // in count mode the time limit is only a safety net
  const seconds = arg('seconds', Number.isFinite(totalInputs) ? 24 * 3600 : 60);
  const parallel = Math.max(1, Math.floor(arg('parallel', 1)));
  if (only !== null) {
    if (![...TARGETS, HANG_PROBE].some((t) => t.id === only)) throw new Error(`--only ${only}: no such reader (${TARGETS.map((t) => t.id).join(', ')})`);
    const tally = await runTarget(only, seed, seconds * 1000, totalInputs);
    if (process.argv.includes('--json')) console.log(JSON.stringify(tally));
    else console.log(table([tally]));
    process.exitCode = tally.failures.length === 0 ? 0 : 1;
    return;
  }
  const perTarget = Number.isFinite(totalInputs) ? Math.ceil(totalInputs / TARGETS.length) : Infinity;
  console.log(
    `fuzz run: seed ${seed}, ${Number.isFinite(totalInputs) ? `${perTarget} inputs per reader (${perTarget * TARGETS.length} in all)` : `${seconds} s shared by ${TARGETS.length} readers`}, ` +
      `hang > ${HANG_MS / 1000} s, memory > ${MEMORY_LIMIT_BYTES / 2 ** 30} GiB, ${parallel} reader(s) at a time`,
  );
  const t0 = performance.now();
  const tallies: TargetTally[] = new Array(TARGETS.length);
  let next = 0;
  await Promise.all(
    Array.from({ length: parallel }, async () => {
      while (next < TARGETS.length) {
        const k = next++;
        tallies[k] = await runChild(TARGETS[k].id, seed, Number.isFinite(totalInputs) ? seconds : seconds / TARGETS.length, perTarget);
        console.error(`fuzz: ${TARGETS[k].id} done`);
      }
    }),
  );
  console.log(table(tallies));
  const failures = tallies.flatMap((t) => t.failures.map((f) => ({ reader: t.id, ...f })));
  for (const f of failures.slice(0, 200)) console.log(`FAIL ${f.reader} ${f.input} [${f.mutation.slice(0, 120)}] ${f.outcome}: ${f.detail}`);
  const byOutcome = FAILURES.map((o) => `${o} ${failures.filter((f) => f.outcome === o).length}`).join(', ');
  console.log(`${failures.length === 0 ? 'no failures' : `${failures.length} failures (${byOutcome})`} in ${((performance.now() - t0) / 1000).toFixed(0)} s`);
  process.exitCode = failures.length === 0 ? 0 : 1;
}

if (isMainThread) void main();
else void workerMain(workerData as Job);
