// Generates dist/sw.js: a service worker that precaches every file of the build, opencv.js
// (about 11 MB) and the OCR data included, so the app works with no network at all.
import { existsSync, readFileSync } from 'node:fs';
import { generateSW, getManifest } from 'workbox-build';

const files = {
  globDirectory: 'dist',
  globPatterns: ['**/*.{html,js,mjs,css,json,webmanifest,svg,png,jpg,jpeg,wasm,gz,tif,tiff,mrc,xy,txt,csv,dat,cif}'],
  globIgnores: ['**/*.map', 'sw.js', 'workbox-*.js'],
  maximumFileSizeToCacheInBytes: 64 * 1024 * 1024,
};
const { count, size, warnings } = await generateSW({
  ...files,
  swDest: 'dist/sw.js',
  inlineWorkboxRuntime: true,
  cleanupOutdatedCaches: true,
  clientsClaim: false,
  skipWaiting: false,
  navigateFallback: 'index.html',
  sourcemap: false,
  mode: 'production',
});
for (const w of warnings) console.warn(`service worker: ${w}`);

// Everything the app needs offline must be in the precache: opencv.js, the worker, every demo file.
const { manifestEntries } = await getManifest(files);
const precached = new Set(manifestEntries.map((e) => e.url));
const required = ['index.html', 'app.js', 'compute-worker.js', 'manifest.webmanifest'];
if (![...precached].some((u) => /^chunks\/opencv-[\w-]+\.js$/.test(u))) required.push('chunks/opencv-*.js');
if (existsSync('dist/demo/index.json')) {
  required.push('demo/index.json');
  for (const e of JSON.parse(readFileSync('dist/demo/index.json', 'utf8'))) required.push(`demo/${e.file}`);
}
const missing = required.filter((u) => !precached.has(u));
if (missing.length) {
  console.error(`service worker: not precached, so not available offline: ${missing.join(', ')}`);
  process.exit(1);
}
console.log(`service worker: ${count} files precached, ${(size / 1048576).toFixed(1)} MiB`);
