/**
 * Sharding a batch over several machines: which files a shard takes, the partial result each
 * shard writes, and the checks that let partial results be merged into the exports a single run
 * would have written.
 *
 * Pure data and functions; reading and writing the files is the command line's.
 */
import { upgradeFileResult, type FileResult } from './run';
import type { Recipe } from './recipe';

/** One shard of a batch: shard k of n (1 ≤ k ≤ n). */
export interface ShardSpec {
  k: number;
  n: number;
}

/** The format name of a partial result file. */
export const PARTIAL_FORMAT = 'stratameter-batch-partial';
/** The partial result format this code reads and writes. */
export const PARTIAL_SCHEMA_VERSION = 1;

/** A shard's partial result: everything `merge` needs, in one file beside the shard's figures. */
export interface PartialResult {
  format: typeof PARTIAL_FORMAT;
  schemaVersion: typeof PARTIAL_SCHEMA_VERSION;
  /** The version of the program that ran the shard. */
  programVersion: string;
  /** The recipe and the SHA-256 of its canonical JSON (lower-case hex). */
  recipe: Recipe;
  recipeHash: string;
  shard: ShardSpec;
  /** Every image of the batch folder, sorted (what the shares are cut from). */
  folderFiles: string[];
  /** The figures folder of the shard, relative to the partial result's folder, or null when no figures were drawn. */
  figuresDir: string | null;
  /** Results of the shard's share, in folder order (from this run or, resumed, earlier ones). */
  results: FileResult[];
  /** ISO 8601 time the partial result was written. */
  createdIso: string;
}

/** A problem with a shard specification or with partial results; the message names it. */
export class ShardError extends Error {
  override name = 'ShardError';
}

/**
 * Reads a shard specification `K/N`.
 * @param text e.g. "2/3"
 * @returns { k: 2, n: 3 }
 * @throws ShardError naming the text: not K/N with whole numbers, K = 0, or K past N
 */
export function parseShardSpec(text: string): ShardSpec {
  const m = /^\s*(\d{1,6})\s*\/\s*(\d{1,6})\s*$/.exec(String(text));
  if (!m) throw new ShardError(`--shard must be K/N, shard K of N with whole numbers 1 ≤ K ≤ N (e.g. 2/3), got '${text}'`);
  const k = Number(m[1]);
  const n = Number(m[2]);
  if (n < 1) throw new ShardError(`--shard ${text}: the number of shards N must be at least 1`);
  if (k < 1) throw new ShardError(`--shard ${text}: shards are numbered from 1 to N, so K must be at least 1 (the first shard is 1/${n})`);
  if (k > n) throw new ShardError(`--shard ${text}: shard ${k} is past the last shard ${n} (K must be at most N)`);
  return { k, n };
}

/**
 * The files of shard k of n: the sorted list dealt out in turn, file i (from 0) to shard
 * (i mod n) + 1. Every machine that sees the same folder computes the same share, the shares
 * cover the folder exactly once, and files of one session (neighbours in sorted order) are spread
 * over the shards, which balances their work.
 * @param files the folder's images, sorted
 * @param shard which shard
 * @returns the share, in folder order
 */
export function shardShare(files: readonly string[], shard: ShardSpec): string[] {
  if (!(Number.isInteger(shard.n) && shard.n >= 1 && Number.isInteger(shard.k) && shard.k >= 1 && shard.k <= shard.n)) {
    throw new ShardError(`shard must be k of n with 1 ≤ k ≤ n, got ${shard.k} of ${shard.n}`);
  }
  return files.filter((_, i) => i % shard.n === shard.k - 1);
}

/** The partial result's file name for an output stem: `results` and shard 2 of 3 give `results.shard-2-of-3.json`. */
export function partialFileName(stem: string, shard: ShardSpec): string {
  return `${stem}.shard-${shard.k}-of-${shard.n}.json`;
}

/** True for a file name that `partialFileName` makes. */
export function isPartialFileName(name: string): boolean {
  return /\.shard-\d+-of-\d+\.json$/.test(name);
}

/** A partial result read from a file, with the name to use for it in messages. */
export interface NamedPartial {
  source: string;
  partial: PartialResult;
}

/**
 * Checks a partial result's shape (after JSON.parse).
 * @param value the parsed file
 * @param source its name for messages
 * @returns the partial result, its file results upgraded to the current record layout
 * @throws ShardError naming the file and the field at fault
 */
export function readPartial(value: unknown, source: string): PartialResult {
  const v = value as Partial<PartialResult> | null;
  if (!v || typeof v !== 'object' || v.format !== PARTIAL_FORMAT) throw new ShardError(`${source} is not a partial batch result (no "format": "${PARTIAL_FORMAT}")`);
  if (v.schemaVersion !== PARTIAL_SCHEMA_VERSION) throw new ShardError(`${source} has partial-result schemaVersion ${JSON.stringify(v.schemaVersion)}, this program reads ${PARTIAL_SCHEMA_VERSION}`);
  if (typeof v.programVersion !== 'string') throw new ShardError(`${source}: programVersion is missing`);
  if (typeof v.recipeHash !== 'string' || !/^[0-9a-f]{64}$/.test(v.recipeHash) || !v.recipe || typeof v.recipe !== 'object') throw new ShardError(`${source}: the recipe or its hash is missing`);
  const s = v.shard;
  if (!s || !Number.isInteger(s.k) || !Number.isInteger(s.n) || s.k < 1 || s.k > s.n) throw new ShardError(`${source}: shard must be k of n with 1 ≤ k ≤ n`);
  if (!Array.isArray(v.folderFiles) || v.folderFiles.some((f) => typeof f !== 'string')) throw new ShardError(`${source}: folderFiles must be a list of file names`);
  if (v.figuresDir !== null && typeof v.figuresDir !== 'string') throw new ShardError(`${source}: figuresDir must be a folder name or null`);
  if (!Array.isArray(v.results)) throw new ShardError(`${source}: results must be a list`);
  let results: FileResult[];
  try {
    results = v.results.map((r, i) => upgradeFileResult(r, `${source}: results[${i}]`));
  } catch (e) {
    throw new ShardError((e as Error).message);
  }
  return { ...(v as PartialResult), results };
}

function recipeName(p: PartialResult): string {
  return `'${p.recipe.name}' version ${p.recipe.version} (recipe hash ${p.recipeHash.slice(0, 12)})`;
}

/**
 * Combines the partial results of every shard of one batch into the results of a single run.
 *
 * @param partials the partial results with their names
 * @returns the recipe, the folder's files, the figures folder of each file's shard (by file), and
 *   every result in folder order
 * @throws ShardError naming the mismatch: partial results of different program versions, recipes,
 *   shard counts or folder contents; a shard given twice; a missing shard; a share whose results
 *   do not match the files the shard should have taken
 */
export function combinePartials(partials: NamedPartial[]): { recipe: Recipe; recipeHash: string; folderFiles: string[]; results: FileResult[]; shardOf: Map<string, NamedPartial> } {
  if (partials.length === 0) throw new ShardError('no partial results to merge');
  const first = partials[0];
  for (const p of partials.slice(1)) {
    if (p.partial.programVersion !== first.partial.programVersion) {
      throw new ShardError(`${p.source} was made by program version ${p.partial.programVersion}, ${first.source} by ${first.partial.programVersion}: merge only partial results of one program version (re-run the shards of the other version)`);
    }
    if (p.partial.recipeHash !== first.partial.recipeHash) {
      throw new ShardError(`${p.source} was made with recipe ${recipeName(p.partial)}, ${first.source} with recipe ${recipeName(first.partial)}: merge only partial results of one recipe`);
    }
    if (p.partial.shard.n !== first.partial.shard.n) {
      throw new ShardError(`${p.source} is shard ${p.partial.shard.k} of ${p.partial.shard.n}, ${first.source} shard ${first.partial.shard.k} of ${first.partial.shard.n}: every shard of one batch has the same N`);
    }
    const a = p.partial.folderFiles;
    const b = first.partial.folderFiles;
    if (a.length !== b.length || a.some((f, i) => f !== b[i])) {
      const only = a.find((f) => !b.includes(f)) ?? b.find((f) => !a.includes(f));
      throw new ShardError(`${p.source} saw ${a.length} images in the batch folder, ${first.source} saw ${b.length}${only ? ` (${JSON.stringify(only)} is in one list only)` : ''}: the shards were run on different folder contents; run every shard on the same folder`);
    }
  }
  const n = first.partial.shard.n;
  const byK = new Map<number, NamedPartial>();
  for (const p of partials) {
    const twin = byK.get(p.partial.shard.k);
    if (twin) throw new ShardError(`shard ${p.partial.shard.k} of ${n} is given twice: ${twin.source} and ${p.source}`);
    byK.set(p.partial.shard.k, p);
  }
  const missing: number[] = [];
  for (let k = 1; k <= n; k++) if (!byK.has(k)) missing.push(k);
  if (missing.length) {
    throw new ShardError(`${missing.length === 1 ? `shard ${missing[0]} of ${n} is` : `shards ${missing.join(', ')} of ${n} are`} missing (given: ${[...byK.keys()].sort((x, y) => x - y).join(', ')}); run ${missing.length === 1 ? 'it' : 'them'} with --shard ${missing[0]}/${n}${missing.length > 1 ? ' …' : ''} before merging`);
  }
  const folderFiles = first.partial.folderFiles;
  const results = new Map<string, FileResult>();
  const shardOf = new Map<string, NamedPartial>();
  for (let k = 1; k <= n; k++) {
    const p = byK.get(k)!;
    const share = shardShare(folderFiles, { k, n });
    const got = p.partial.results.map((r) => r.file);
    const lacking = share.filter((f) => !got.includes(f));
    const extra = got.filter((f) => !share.includes(f));
    if (lacking.length || extra.length) {
      throw new ShardError(`${p.source} (shard ${k} of ${n}) ${lacking.length ? `has no result for ${lacking.length} of its files (first: ${JSON.stringify(lacking[0])})` : `has results for ${extra.length} files outside its share (first: ${JSON.stringify(extra[0])})`}: re-run the shard to finish it`);
    }
    for (const r of p.partial.results) {
      results.set(r.file, r);
      shardOf.set(r.file, p);
    }
  }
  return { recipe: first.partial.recipe, recipeHash: first.partial.recipeHash, folderFiles, results: folderFiles.map((f) => results.get(f)!), shardOf };
}
