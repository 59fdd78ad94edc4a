/**
 * `stratameter merge PARTIAL...`: combines the partial results of a sharded batch
 * (`stratameter batch --shard K/N`) into the exports a single run writes: the same results and
 * summary CSV, JSON, figures, histograms and zip; only the times differ.
 */
import { copyFile, mkdir, readdir, readFile, stat } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import { combinePartials, isPartialFileName, readPartial, ShardError, type NamedPartial } from '../batch/shard';
import { parseArgs, UsageError, type CliCommand, type CliIo } from './command';
import { writeBatchExports } from './batch';

/**
 * The partial result files named on the command line: files as given, folders by every
 * `*.shard-K-of-N.json` in them.
 * @throws UsageError naming a path that is neither, or a folder without partial results
 */
async function partialFiles(paths: string[]): Promise<string[]> {
  const out: string[] = [];
  for (const p of paths) {
    const info = await stat(p).catch(() => null);
    if (!info) throw new UsageError(`${p} does not exist`);
    if (info.isDirectory()) {
      const found = (await readdir(p)).filter(isPartialFileName).sort();
      if (!found.length) throw new UsageError(`${p} holds no partial result (*.shard-K-of-N.json, written by stratameter batch --shard K/N)`);
      out.push(...found.map((f) => join(p, f)));
    } else out.push(p);
  }
  return [...new Set(out.map((p) => resolve(p)))];
}

const usage = `Usage: stratameter merge PARTIAL... [--out results.csv] [--json-out results.json] [--figures DIR]

Combines the partial results of a sharded batch (stratameter batch FOLDER --shard K/N) into the
exports a single run of the batch writes: results CSV, summary CSV, JSON, figures, histograms
and zip, as the recipe asks. PARTIAL is a partial result file (OUT.shard-K-of-N.json) or a folder
holding them.

  --out FILE.csv      results table (default results.csv); FILE-summary.csv beside it
  --json-out FILE     full results and pooled statistics as JSON (default as the recipe asks)
  --figures DIR       the figures folder (default <output folder>/figures when the recipe asks
                      for figures): each image's figure is copied there from its shard

Every shard 1 … N must be given once; partial results of different recipes, program versions,
shard counts or folder contents are refused, naming the mismatch. The exit code is 1 when any
file failed.`;

export const command: CliCommand = {
  name: 'merge',
  summary: 'combine the partial results of a sharded batch into the exports of a single run',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options } = parseArgs(args, { values: ['out', 'json-out', 'figures'] });
    if (positional.length === 0) throw new UsageError('merge needs the partial results (files or folders) of every shard');
    const files = await partialFiles(positional);
    const partials: NamedPartial[] = [];
    for (const file of files) {
      const text = await readFile(file, 'utf8').catch((e: Error) => {
        throw new UsageError(`cannot read ${file}: ${e.message}`);
      });
      let value: unknown;
      try {
        value = JSON.parse(text);
      } catch {
        throw new UsageError(`${file} is not valid JSON (cut short or damaged): re-run its shard`);
      }
      try {
        partials.push({ source: file, partial: readPartial(value, file) });
      } catch (e) {
        if (e instanceof ShardError) throw new UsageError(e.message);
        throw e;
      }
    }
    let combined: ReturnType<typeof combinePartials>;
    try {
      combined = combinePartials(partials);
    } catch (e) {
      if (e instanceof ShardError) throw new UsageError(e.message);
      throw e;
    }
    const { recipe, results, shardOf } = combined;
    const outCsv = resolve(options.get('out') ?? 'results.csv');
    const outDir = dirname(outCsv);
    const outBase = outCsv.replace(/\.csv$/i, '');
    const jsonOut = options.get('json-out') ? resolve(options.get('json-out')!) : recipe.outputs.json ? `${outBase}.json` : undefined;
    const figuresDir = options.get('figures') ? resolve(options.get('figures')!) : recipe.outputs.figures ? join(outDir, 'figures') : undefined;
    await mkdir(outDir, { recursive: true });
    if (figuresDir) {
      // each image's figure, from its shard's figures folder
      await mkdir(figuresDir, { recursive: true });
      for (const r of results) {
        if (!r.figureFile) continue;
        const p = shardOf.get(r.file)!;
        if (p.partial.figuresDir === null) continue;
        const from = resolve(dirname(p.source), p.partial.figuresDir, r.figureFile);
        const to = join(figuresDir, r.figureFile);
        if (from === to) continue;
        await copyFile(from, to).catch((e: Error) => {
          throw new UsageError(`the figure of ${r.file} is missing from its shard's figures folder (${from}): ${e.message.split('\n')[0]}; re-run that shard or copy its figures folder beside its partial result`);
        });
      }
    }
    const written = await writeBatchExports({ recipe, results, outCsv, writeCsv: recipe.outputs.csv || options.has('out'), jsonOut, figuresDir });
    const failed = results.filter((r) => r.status === 'failed');
    io.out(`merged ${partials.length} partial results of ${partials[0].partial.shard.n} shards: ${results.length} images; ${results.length - failed.length} ok, ${failed.length} failed\n`);
    for (const r of failed) io.err(`failed: ${r.file}: ${r.reason}\n`);
    for (const p of written) io.out(`wrote ${p}\n`);
    return failed.length > 0 ? 1 : 0;
  },
};
