/**
 * The project's own decoder and measurement tools, wired into the shape the batch runner calls
 * (`BatchDeps`). Pure core modules only, so the same wiring serves a Node worker thread and a
 * module Web Worker.
 */
import { decodeImage } from '../image/decode';
import { measureRegion } from '../measure/measure-region';
import type { BatchDeps } from './run';

/**
 * The batch runner's tools.
 * @returns decoder and the measurement steps available in this build
 * Notes: steps not yet available here (rings, sheets, domains, scale-bar reading, automatic
 * information-strip detection) are absent; `processOne` names the missing one if a recipe asks
 * for it.
 */
export async function createBatchDeps(): Promise<BatchDeps> {
  return {
    decodeImage: (bytes, fileName) => decodeImage(bytes, fileName),
    spectrum: (image, region, options) =>
      measureRegion(image, region.kind === 'rect' ? { x: region.x, y: region.y, width: region.width, height: region.height } : null, { maxSpots: options.topK }),
  };
}
