// Browser and worker entry for opencv.js: exports only a promise of the wrapper, so the
// thenable module object is never awaited itself. Bundled into its own chunk.
import cvModule from '@techstark/opencv-js';
import { wrapCv } from './cv';

export const cvReady = wrapCv(cvModule);
