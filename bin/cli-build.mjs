// The command line as plain JavaScript: src/cli/ bundled by esbuild into a cache folder, built on
// the first run after an install or a change of the sources, and reused by every run after that.
//
// Why on first run (and not an npm `prepare` script): it needs no set-up command besides
// `npm install` (or `npm ci`), it cannot leave a stale bundle behind when a source file changes
// (the folder is named by a fingerprint of the sources), and an install never fails because of
// it. The build takes about half a second, once; checking the fingerprint takes about 2 ms.
import { existsSync, mkdirSync, readdirSync, renameSync, rmSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The project's root folder (the one holding package.json and src/). */
export const ROOT = dirname(dirname(fileURLToPath(import.meta.url)));

/** Entry points of the bundle: the command line, and the module a batch worker thread starts from. */
export const ENTRIES = { main: 'src/cli/main.ts', 'batch-worker': 'src/cli/batch-worker.ts' };

/** Where built command lines are kept: one folder per fingerprint. */
export function cacheRoot(root = ROOT) {
  return join(root, 'node_modules', '.cache', 'stratameter-cli');
}

/** 32-bit FNV-1a of a text, as 8 hex digits (Fowler–Noll–Vo hash; cheap, and enough to tell builds apart). */
function fnv1a(text, seed = 0x811c9dc5) {
  let h = seed;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h.toString(16).padStart(8, '0');
}

/**
 * A fingerprint of everything the bundle is made from: the path, size and modification time of
 * every file under src/, of package.json and of this builder.
 * @param root the project's root
 * @returns 16 hex digits (two FNV-1a hashes with different seeds)
 */
export function sourceFingerprint(root = ROOT) {
  const parts = [];
  for (const e of readdirSync(join(root, 'src'), { recursive: true, withFileTypes: true })) {
    if (!e.isFile()) continue;
    const p = join(e.parentPath ?? e.path, e.name);
    const s = statSync(p);
    parts.push(`${p.slice(root.length)}:${s.size}:${s.mtimeMs}`);
  }
  parts.sort();
  for (const f of ['package.json', 'bin/cli-build.mjs']) {
    const s = statSync(join(root, f));
    parts.push(`${f}:${s.size}:${s.mtimeMs}`);
  }
  const text = parts.join('\n');
  return fnv1a(text) + fnv1a(text, 0x050c5d1f);
}

/**
 * Bundles the command line into `outDir` with esbuild: ES modules for Node 20, one chunk per
 * command (each loaded only when its command runs), packages left to node_modules.
 * @param outDir the folder to write (created)
 * @param root the project's root
 */
export async function buildCli(outDir, root = ROOT) {
  const esbuild = await import('esbuild');
  await esbuild.build({
    absWorkingDir: root,
    entryPoints: ENTRIES,
    outdir: outDir,
    bundle: true,
    splitting: true,
    format: 'esm',
    platform: 'node',
    target: 'node20',
    packages: 'external',
    outExtension: { '.js': '.mjs' },
    chunkNames: 'chunk-[hash]',
    logLevel: 'silent',
    legalComments: 'none',
  });
}

/**
 * The built command line's main module for the current sources, building it first when there is
 * none. Concurrent first runs (three shards started at once) each build into a folder of their
 * own and rename it into place; the first rename wins and the others use its result.
 * @param root the project's root
 * @returns the path of main.mjs
 */
export async function ensureCli(root = ROOT) {
  const fingerprint = sourceFingerprint(root);
  const cache = cacheRoot(root);
  const dir = join(cache, fingerprint);
  const main = join(dir, 'main.mjs');
  if (existsSync(main)) return main;
  mkdirSync(cache, { recursive: true });
  const tmp = join(cache, `${fingerprint}.tmp-${process.pid}-${Date.now()}`);
  await buildCli(tmp, root);
  try {
    renameSync(tmp, dir);
  } catch (e) {
    // another process finished the same build first
    rmSync(tmp, { recursive: true, force: true });
    if (!existsSync(main)) throw e;
  }
  // Builds of earlier sources are removed (a folder in use by a running process keeps working:
  // its files stay open until that process ends).
  // Builds of earlier sources are removed, and unfinished builds older than ten minutes (a folder
  // in use by a running process keeps working: its files stay open until that process ends).
  for (const name of readdirSync(cache)) {
    if (name === fingerprint) continue;
    const path = join(cache, name);
    if (name.includes('.tmp-') && Date.now() - statSync(path).mtimeMs < 600_000) continue;
    rmSync(path, { recursive: true, force: true });
  }
  return main;
}

/** True when run as a script: `node bin/cli-build.mjs` builds now and prints where. */
if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const t0 = performance.now();
  const main = await ensureCli();
  console.log(`command line built: ${main} (${((performance.now() - t0) / 1000).toFixed(2)} s)`);
}
