// Browser and worker entry for opencv.js, bundled into a chunk of its own. The module object
// carries its own `then`, so it is handed on inside a plain object, never as a promise's value
// (src/image/cv.ts wraps it).
import cvModule from '@techstark/opencv-js';

export const opencvHolder = { module: cvModule };
