/**
 * The long fuzz run: `npm run test:fuzz -- --seconds 60 --seed 7`.
 *
 * Each reader runs in a child process, inside a worker thread; the worker reports every input before and after
 * reading it. A worker that says nothing for the time limit is stopped, the input it was
 * reading is reported as a hang, and a new worker carries on after it. Prints a table of
 * outcomes per reader and exits with status 1 when any input crashed, hung or grew memory
 * beyond the bound.
 */
import { spawn } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { Worker, isMainThread, parentPort, workerData } from 'node:worker_threads';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { TARGETS, TIME_LIMIT_MS, fuzzTarget, makeInput, runOne, table, type FuzzTarget, type Outcome, type TargetTally } from './harness';

const TSX_API = import.meta.resolve('tsx/esm/api');

/**
 * A reader that never returns on every 50th input: `--only hang-probe` checks that the watchdog
 * stops it, reports it as a hang and carries on with the next input.
 */
const HANG_PROBE: FuzzTarget = {
  id: 'hang-probe',
  seeds: async () => [{ name: 'probe.bin', bytes: new Uint8Array(16) }],
  mutate: (b, r) => ({ bytes: b, mutation: `n ${Math.floor(r() * 50)}` }),
  read(input) {
    if (input.mutation === 'n 0') for (;;) { /* a hang */ }
  },
  isClear: () => false,
};

interface Job {
  target: string;
  seed: number;
  from: number;
  /** Epoch ms after which no input is started; 0: the budget from when the worker is ready. */
  deadline: number;
  budgetMs: number;
}

type Msg =
  | { kind: 'start'; i: number; name: string; mutation: string }
  | { kind: 'done'; i: number; outcome: Outcome; detail: string; ms: number }
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
  const seeds = await target.seeds();
  const post = (m: Msg) => parentPort!.postMessage(m);
  // The time budget starts when the modules are loaded and the seeds made (slow on a busy machine).
  const deadline = job.deadline || Date.now() + job.budgetMs;
  const t = job.from === 0 ? await fuzzTarget(target, job.seed, 0) : { failures: [] };
  post({ kind: 'seeds', failures: t.failures, deadline });
  for (let i = job.from; Date.now() < deadline; i++) {
    const input = makeInput(target, seeds, job.seed, i);
    post({ kind: 'start', i, name: input.name, mutation: input.mutation });
    const r = await runOne(target, input);
    post({ kind: 'done', i, outcome: r.outcome, detail: r.detail, ms: r.ms });
  }
  post({ kind: 'end' });
}

function runTarget(id: string, seed: number, budgetMs: number): Promise<TargetTally> {
  let deadline = 0;
  const tally: TargetTally = { id, counts: { ok: 0, clear: 0, crash: 0, slow: 0, memory: 0 }, failures: [], longestMs: 0 };
  return new Promise((resolve) => {
    const spawn = (from: number) => {
      // The worker loads this same file through tsx's loader (a bare `--import tsx` does not reach worker threads on Node 20).
      const boot = `import(${JSON.stringify(TSX_API)}).then((m) => { m.register(); return import(${JSON.stringify(import.meta.url)}); })`;
      const w = new Worker(boot, {
        eval: true,
        workerData: { target: id, seed, from, deadline, budgetMs } satisfies Job,
        
      });
      let current: Extract<Msg, { kind: 'start' }> | null = null;
      let timer: NodeJS.Timeout | null = null;
      let finished = false;
      const arm = (ms: number) => {
        if (timer) clearTimeout(timer);
        timer = setTimeout(() => {
          // No word for the limit: the input in progress hangs.
          finished = true;
          void w.terminate();
          const i = current ? current.i : from;
          tally.counts.slow++;
          tally.failures.push({ input: `${current?.name ?? '?'} #${i}`, mutation: current?.mutation ?? '?', outcome: 'slow', detail: `no answer after ${ms} ms (hang)` });
          if (Date.now() < deadline) spawn(i + 1);
          else resolve(tally);
        }, ms);
      };
      arm(60_000); // the first message comes after the seeds are made and the modules are loaded
      w.on('message', (m: Msg) => {
        if (m.kind === 'start') {
          current = m;
          arm(TIME_LIMIT_MS * 4);
        } else if (m.kind === 'done') {
          tally.counts[m.outcome]++;
          tally.longestMs = Math.max(tally.longestMs, m.ms);
          if (m.outcome !== 'ok' && m.outcome !== 'clear') tally.failures.push({ input: `${current?.name} #${m.i}`, mutation: current?.mutation ?? '', outcome: m.outcome, detail: m.detail });
          current = null;
          arm(60_000);
        } else if (m.kind === 'seeds') {
          tally.failures.push(...m.failures);
          deadline = m.deadline;
        } else {
          finished = true;
          if (timer) clearTimeout(timer);
          void w.terminate().then(() => resolve(tally));
        }
      });
      w.on('error', (e) => {
        if (finished) return;
        finished = true;
        if (timer) clearTimeout(timer);
        // The worker died (out of memory, a native fault): the input in progress is to blame.
        const i = current ? current.i : from;
        const outcome: Outcome = /memory|heap/i.test(e.message) ? 'memory' : 'crash';
        tally.counts[outcome]++;
        tally.failures.push({ input: `${current?.name ?? '?'} #${i}`, mutation: current?.mutation ?? '?', outcome, detail: `worker died: ${e.message}` });
        // A worker that dies before its first input cannot start at all: stop rather than respawn.
        if (current && Date.now() < deadline) spawn(i + 1);
        else resolve(tally);
      });
    };
    spawn(0);
  });
}

/** Runs one reader in a child process of its own (readers after a busy one ran slowly when they shared the process). */
function runChild(id: string, seed: number, seconds: number): Promise<TargetTally> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', fileURLToPath(import.meta.url), '--only', id, '--seed', String(seed), '--seconds', String(seconds), '--json'], {
      stdio: ['ignore', 'pipe', 'inherit'],
    });
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
  const seconds = arg('seconds', 60);
  const seed = arg('seed', 1);
  const only = process.argv.includes('--only') ? process.argv[process.argv.indexOf('--only') + 1] : null;
  if (only !== null) {
    if (![...TARGETS, HANG_PROBE].some((t) => t.id === only)) throw new Error(`--only ${only}: no such reader (${TARGETS.map((t) => t.id).join(', ')})`);
    const tally = await runTarget(only, seed, seconds * 1000);
    if (process.argv.includes('--json')) console.log(JSON.stringify(tally));
    else console.log(table([tally]));
    process.exitCode = tally.failures.length === 0 ? 0 : 1;
    return;
  }
  console.log(`fuzz run: seed ${seed}, ${seconds} s shared by ${TARGETS.length} readers, per-input limit ${TIME_LIMIT_MS} ms`);
  const tallies: TargetTally[] = [];
  for (const t of TARGETS) tallies.push(await runChild(t.id, seed, seconds / TARGETS.length));
  console.log(table(tallies));
  const failures = tallies.flatMap((t) => t.failures.map((f) => ({ reader: t.id, ...f })));
  for (const f of failures) console.log(`FAIL ${f.reader} ${f.input} [${f.mutation}] ${f.outcome}: ${f.detail}`);
  console.log(failures.length === 0 ? 'no failures' : `${failures.length} failures`);
  process.exitCode = failures.length === 0 ? 0 : 1;
}

if (isMainThread) void main();
else void workerMain(workerData as Job);
