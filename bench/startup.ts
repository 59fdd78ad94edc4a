/**
 * Start-up of the command line, as a user meets it: wall time of whole `stratameter` processes.
 *
 *   npm run bench:startup                 11 rounds
 *   npm run bench:startup -- --rounds 21
 *
 * Each round runs, one after the other: --help, info and measure on a 1024² 16-bit TIFF (seeded
 * lattice fringes), first through the built command line (bin/stratameter.mjs, the normal path),
 * then from the TypeScript sources through tsx (STRATAMETER_FROM_SOURCE=1, how it ran before),
 * so both meet the same machine load. Medians of the rounds; CPU time of the child processes from
 * /proc (Linux; 10 ms ticks). Targets: --help ≤ 0.3 s, info ≤ 0.5 s, measure ≤ 1.5 s.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { encodeTiff } from '../testing/encode-tiff';
import { rng } from '../testing/random';

const i = process.argv.indexOf('--rounds');
const rounds = i < 0 ? 11 : Number(process.argv[i + 1]);
if (!(Number.isInteger(rounds) && rounds > 0)) throw new Error(`--rounds needs a positive integer, got ${process.argv[i + 1]}`);

/** CPU seconds used so far by this process's finished children (Linux), or NaN. */
function childCpuS(): number {
  if (!existsSync('/proc/self/stat')) return NaN;
  const fields = readFileSync('/proc/self/stat', 'utf8').split(') ')[1].split(' ');
  // fields after the command: state is [0]; cutime and cstime are fields 16 and 17 of stat(5), here [13] and [14]
  return (Number(fields[13]) + Number(fields[14])) / 100;
}

const median = (v: number[]) => [...v].sort((a, b) => a - b)[v.length >> 1];

function image(n: number): Uint8Array {
  const r = rng(7);
  const data = new Uint16Array(n * n);
  for (let y = 0; y < n; y++) for (let x = 0; x < n; x++) data[y * n + x] = Math.round(30000 + 5000 * Math.cos((2 * Math.PI * (0.8 * x - 0.6 * y)) / 12.3) + 3000 * (r() - 0.5));
  return encodeTiff({ width: n, height: n, data, resolution: { x: 1e7 / 0.05, unit: 'cm' } });
}

const dir = mkdtempSync(join(tmpdir(), 'stratameter-bench-startup-'));
try {
  const tif = join(dir, 'fringes-1024.tif');
  writeFileSync(tif, image(1024));
  const bin = join(process.cwd(), 'bin', 'stratameter.mjs');
  const cases = [
    { name: 'node -e 0 (Node alone, for scale)', args: ['-e', '0'], target: NaN, plain: true },
    { name: 'stratameter --help', args: ['--help'], target: 0.3 },
    { name: 'stratameter info (1024² TIFF)', args: ['info', tif], target: 0.5 },
    { name: 'stratameter measure (1024² TIFF)', args: ['measure', tif], target: 1.5 },
  ];
  // the first run builds the command line if the sources changed since the last build: not timed
  const first = spawnSync(process.execPath, [bin, '--version'], { encoding: 'utf8' });
  if (first.status !== 0) throw new Error(`the command line did not start: ${first.stderr}`);
  const times = new Map<string, { wall: number[]; cpu: number[] }>();
  for (let round = 0; round <= rounds; round++) {
    for (const c of cases) {
      for (const mode of ['built', 'source'] as const) {
        const env = { ...process.env, STRATAMETER_FROM_SOURCE: mode === 'source' ? '1' : '0' };
        const cpu0 = childCpuS();
        const t0 = performance.now();
        const r = spawnSync(process.execPath, 'plain' in c ? c.args : [bin, ...c.args], { encoding: 'utf8', env });
        const wall = (performance.now() - t0) / 1000;
        const cpu = childCpuS() - cpu0;
        if (r.status !== 0) throw new Error(`${c.name} (${mode}) failed: ${r.stderr}`);
        if (round === 0) continue; // warm-up: file system caches
        const key = `${c.name}|${mode}`;
        const t = times.get(key) ?? { wall: [], cpu: [] };
        t.wall.push(wall);
        t.cpu.push(cpu);
        times.set(key, t);
      }
    }
  }
  console.log(`start-up benchmark: ${rounds} rounds, medians; load average ${loadavg().map((l) => l.toFixed(1)).join(' ')} at the end\n`);
  console.log('| command | built: wall s | built: CPU s | from sources (tsx): wall s | from sources: CPU s | built / sources (wall) | target wall s | met |');
  console.log('|---|---:|---:|---:|---:|---:|---:|---|');
  for (const c of cases) {
    const b = times.get(`${c.name}|built`)!;
    const s = times.get(`${c.name}|source`)!;
    const f = (v: number) => (Number.isFinite(v) ? v.toFixed(2) : 'n/a');
    if ('plain' in c) {
      console.log(`| ${c.name} | ${f(median(b.wall))} | ${f(median(b.cpu))} | ${f(median(s.wall))} | ${f(median(s.cpu))} | | | |`);
      continue;
    }
    console.log(`| ${c.name} | ${f(median(b.wall))} | ${f(median(b.cpu))} | ${f(median(s.wall))} | ${f(median(s.cpu))} | ${(median(b.wall) / median(s.wall)).toFixed(2)} | ${c.target} | ${median(b.wall) <= c.target ? 'yes' : 'no'} |`);
  }
  console.log('\nBuilt: the plain-JavaScript command line (bin/cli-build.mjs, built once per change of the sources); from sources: the same command line transpiled by tsx at every start. Wall time includes Node\'s own start (the first row, measured in the same rounds). A busy machine lengthens wall times: compare the columns of one run.');
} finally {
  rmSync(dir, { recursive: true, force: true });
}
