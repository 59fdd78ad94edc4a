/**
 * Lazy, single loading of opencv.js in Node, in the page and in Web Workers.
 *
 * The opencv.js module object carries its own `then`, so awaiting it directly (or returning it
 * from an async function) never settles. It is therefore always handed over inside a wrapper
 * object `{ cv }`.
 */

// The module has no useful types for our purposes; the core uses a narrow surface of it.
// eslint-disable-next-line @typescript-eslint/no-explicit-any
export type Cv = any;

export interface CvHandle {
  cv: Cv;
}

/** Resolves a wrapper around a loaded opencv.js module object (4.x object or 5.x promise). */
export function wrapCv(mod: Cv): Promise<CvHandle> {
  return new Promise((resolve) => {
    if (mod instanceof Promise) {
      mod.then((cv: Cv) => resolve({ cv }));
      return;
    }
    if (mod.Mat) {
      resolve({ cv: mod });
      return;
    }
    mod.onRuntimeInitialized = () => resolve({ cv: mod });
  });
}

let pending: Promise<CvHandle> | null = null;

/** Loads opencv.js once per realm (process, page or worker) and returns `{ cv }`. */
export function loadCv(): Promise<CvHandle> {
  if (pending) return pending;
  const isNode = typeof process !== 'undefined' && !!process.versions?.node;
  pending = isNode
    ? import('node:module').then((m) => wrapCv(m.createRequire(import.meta.url)('@techstark/opencv-js')))
    : import('./cv-browser').then((m) => wrapCv(m.opencvHolder.module));
  return pending;
}
