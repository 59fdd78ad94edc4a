/// <reference lib="webworker" />
/**
 * A batch pool worker: runs the batch recipe on one file at a time (`processOne` with the
 * project's own tools). Each worker loads its own opencv.js (through the tools' `loadCv()`) and
 * its own OCR engine on first use; the file's bytes arrive transferred, the result goes back with
 * the figure's bytes transferred.
 */
import type { BatchDeps } from '../src/batch/run';
import type { BatchJob, BatchJobReply } from './batch-protocol';

let deps: Promise<BatchDeps> | null = null;

async function run(job: BatchJob): Promise<BatchJobReply> {
  const [{ processOne }, { parseRecipe }, { createBatchDeps }, { annotatedFigurePng }] = await Promise.all([
    import('../src/batch/run'),
    import('../src/batch/recipe'),
    import('../src/batch/deps'),
    import('../src/figure/batch-figure'),
  ]);
  deps ??= createBatchDeps();
  const recipe = parseRecipe(job.recipeJson);
  await (await deps).prepare?.(recipe);
  const out = await processOne(job.bytes, job.fileName, recipe, await deps, {
    figure: job.figure,
    renderFigure: (image, result, regions) => annotatedFigurePng(image, result, regions),
  });
  return { id: job.id, ok: true, result: out.result, figurePng: out.figurePng ?? null };
}

const scope = self as unknown as DedicatedWorkerGlobalScope;
scope.onmessage = async (event: MessageEvent<BatchJob>) => {
  const job = event.data;
  let reply: BatchJobReply;
  try {
    reply = await run(job);
  } catch (e) {
    const err = e instanceof Error ? e : new Error(String(e));
    reply = { id: job.id, ok: false, error: `${err.name}: ${err.message}` };
  }
  scope.postMessage(reply, reply.ok && reply.figurePng ? [reply.figurePng.buffer] : []);
};
