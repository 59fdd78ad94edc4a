/**
 * The batch's own tools with two poisons added, for `npm run bench:poison`: a file whose content
 * is the text POISON-HANG makes the decoder loop for ever, POISON-HEAP makes it fill the heap.
 * Every other file goes to the real decoder and tools.
 */
import { createBatchDeps as realDeps } from '../src/batch/deps';
import type { BatchDeps } from '../src/batch/run';
import type { Workspace } from '../src/image/workspace';

/** The deps-module contract of the batch command. */
export async function createBatchDeps(workspace?: Workspace, budgets?: { maxPixels?: number; maxDecompressedBytes?: number }): Promise<BatchDeps> {
  const deps = await realDeps(workspace, budgets);
  const decode = deps.decodeImage;
  return {
    ...deps,
    decodeImage(bytes, fileName) {
      const head = new TextDecoder().decode(bytes.subarray(0, 11));
      if (head === 'POISON-HANG') for (;;) { /* a decoder caught in a loop */ }
      if (head === 'POISON-HEAP') {
        const hog: number[][] = [];
        for (;;) hog.push(new Array(1 << 16).fill(hog.length));
      }
      return decode(bytes, fileName);
    },
  };
}
