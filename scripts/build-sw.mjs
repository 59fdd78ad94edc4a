// Generates dist/sw.js: a service worker that precaches every file of the build, opencv.js
// (about 11 MB) and the OCR data included, so the app works with no network at all.
import { generateSW } from 'workbox-build';

const { count, size, warnings } = await generateSW({
  globDirectory: 'dist',
  globPatterns: ['**/*.{html,js,mjs,css,json,webmanifest,svg,png,wasm,gz,tif,xy,txt}'],
  globIgnores: ['**/*.map', 'sw.js', 'workbox-*.js'],
  swDest: 'dist/sw.js',
  maximumFileSizeToCacheInBytes: 64 * 1024 * 1024,
  inlineWorkboxRuntime: true,
  cleanupOutdatedCaches: true,
  clientsClaim: false,
  skipWaiting: false,
  navigateFallback: 'index.html',
  sourcemap: false,
  mode: 'production',
});
for (const w of warnings) console.warn(`service worker: ${w}`);
console.log(`service worker: ${count} files precached, ${(size / 1048576).toFixed(1)} MiB`);
