/**
 * Sheets where there are none: the automatic search on real images without stacks.
 *
 * Two openly licensed photographs of natural textures (CC0; tests/fixtures/textures/SOURCES.md)
 * stand for the rough, aperiodic contrast of amorphous films, with edges, blobs and shadows
 * that synthetic noise lacks; a real atomic-resolution STEM image of an Al matrix along [001]
 * (MIT; tests/fixtures/reference-data/SOURCES.md) is a crossed lattice; the demo's amorphous
 * polymer film is synthetic. Each is searched with dark and with bright layers. Target: no sheet
 * on any of them (issue: "none on amorphous or crossed-lattice images").
 *
 * Run: npm run bench:textures
 */
import { readFileSync } from 'node:fs';
import { decodeImage } from '../src/image/decode';
import { detectSheets } from '../src/sheets/detect';
import { printTable } from '../testing/bench-options';

const IMAGES: { file: string; what: string }[] = [
  { file: 'tests/fixtures/textures/grass.png', what: 'grass (real photograph, CC0)' },
  { file: 'tests/fixtures/textures/gravel.png', what: 'gravel (real photograph, CC0)' },
  { file: 'tests/fixtures/reference-data/stem-haadf_AlMgSi-alloy_Al-001-matrix_thumbnail256.png', what: 'Al [001] lattice (real HAADF-STEM, MIT)' },
  { file: 'demo-data/amorphous-polymer.tif', what: 'amorphous polymer film (synthetic demo)' },
];

const rows: (string | number)[][] = [];
let total = 0;
for (const { file, what } of IMAGES) {
  const img = decodeImage(new Uint8Array(readFileSync(file)), file);
  for (const polarity of ['dark', 'bright'] as const) {
    const t0 = performance.now();
    const res = detectSheets(img, { polarity });
    const ms = performance.now() - t0;
    total += res.sheets.length;
    const layers = res.sheets.map((s) => s.layers).sort((a, b) => a - b);
    rows.push([
      what,
      `${img.width} × ${img.height}`,
      polarity,
      res.periods.map((p) => p.periodPx.toFixed(2)).join(', ') || '—',
      res.sheets.length,
      layers.length ? layers.join(' ') : '—',
      res.rejected.length,
      ms.toFixed(0),
    ]);
  }
}
printTable(['image', 'size (px)', 'layers', 'periods found (px)', 'sheets (target 0)', 'their layer counts', 'bands refused', 'ms'], rows);
console.log(`\nsheets on images without stacks: ${total} in all (target 0)`);
