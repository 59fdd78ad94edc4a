// Builds the browser app into dist/: the page's modules, the workers, opencv.js in a chunk of
// its own, public/ copied as it is, and the vendor files the app loads at run time (OCR).
import { cpSync, mkdirSync, existsSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve as resolvePath } from 'node:path';
import resolve from '@rollup/plugin-node-resolve';
import commonjs from '@rollup/plugin-commonjs';
import typescript from '@rollup/plugin-typescript';

/** Files copied into dist/ untouched: [from (relative to the project), to (relative to dist/)]. */
export const vendorAssets = [
  // OCR runtime for reading scale-bar labels offline (calibration): the worker script, the LSTM-only
  // wasm cores (plain, SIMD, relaxed SIMD: the worker picks the one the browser supports) and the
  // English model. src/calibration/ocr.ts points tesseract.js at vendor/ocr/ (OCR_VENDOR_DIR).
  ['node_modules/tesseract.js/dist/worker.min.js', 'vendor/ocr/worker.min.js'],
  ['node_modules/tesseract.js-core/tesseract-core-lstm.wasm.js', 'vendor/ocr/core/tesseract-core-lstm.wasm.js'],
  ['node_modules/tesseract.js-core/tesseract-core-simd-lstm.wasm.js', 'vendor/ocr/core/tesseract-core-simd-lstm.wasm.js'],
  ['node_modules/tesseract.js-core/tesseract-core-relaxedsimd-lstm.wasm.js', 'vendor/ocr/core/tesseract-core-relaxedsimd-lstm.wasm.js'],
  ['node_modules/@tesseract.js-data/eng/4.0.0_best_int/eng.traineddata.gz', 'vendor/ocr/lang/eng.traineddata.gz'],
  // The spectrum's transform (PFFFT in WebAssembly, ~40 KB): src/image/pffft.ts fetches the SIMD
  // build where the browser validates SIMD, else the plain one.
  ['node_modules/@echogarden/pffft-wasm/dist/simd/pffft.wasm', 'vendor/pffft/simd/pffft.wasm'],
  ['node_modules/@echogarden/pffft-wasm/dist/non-simd/pffft.wasm', 'vendor/pffft/non-simd/pffft.wasm'],
];

/** Empties dist/ before a build, so no stale chunk from an earlier build is served or precached. */
function cleanDist() {
  return {
    name: 'clean-dist',
    buildStart() {
      rmSync('dist', { recursive: true, force: true });
    },
  };
}

function copyStatic() {
  return {
    name: 'copy-static',
    writeBundle() {
      cpSync('public', 'dist', { recursive: true });
      for (const [from, to] of vendorAssets) {
        if (!existsSync(from)) throw new Error(`vendor asset missing: ${from}`);
        const target = join('dist', to);
        mkdirSync(dirname(target), { recursive: true });
        cpSync(from, target, { recursive: true });
      }
    },
  };
}

/**
 * Copies the demo files listed in demo-data/index.json into dist/demo/ with the list itself.
 * Missing list: no demos (the start screen then shows none); a listed file that is missing
 * fails the build, so a broken demo is never shipped.
 */
function copyDemo() {
  return {
    name: 'copy-demo',
    buildStart() {
      if (existsSync('demo-data/index.json')) this.addWatchFile('demo-data/index.json');
    },
    writeBundle() {
      const list = 'demo-data/index.json';
      // Start from an empty dist/demo, so a demo removed from the list is not shipped (or precached).
      rmSync('dist/demo', { recursive: true, force: true });
      if (!existsSync(list)) return;
      const entries = JSON.parse(readFileSync(list, 'utf8'));
      if (!Array.isArray(entries)) throw new Error(`${list} must hold a list`);
      mkdirSync('dist/demo', { recursive: true });
      for (const e of entries) {
        if (!e || typeof e.file !== 'string' || e.file.includes('..') || e.file.startsWith('/')) {
          throw new Error(`${list}: bad entry ${JSON.stringify(e)}`);
        }
        const from = join('demo-data', e.file);
        if (!existsSync(from)) throw new Error(`${list} lists ${e.file}, which is not in demo-data/`);
        const to = join('dist/demo', e.file);
        mkdirSync(dirname(to), { recursive: true });
        cpSync(from, to);
      }
      writeFileSync('dist/demo/index.json', JSON.stringify(entries, null, 2));
    },
  };
}

/**
 * The module `virtual:strata-panels`: one lazily loaded entry per components/*-panel.ts, in a
 * fixed order (measuring first, the rest by name), so a panel appears once its file exists. Each
 * entry also carries what the tab row needs before the module is loaded, read from the source:
 * the element's tag (`customElements.define('…'`), the tab label (`export const panelLabel = '…'`)
 * and whether the panel is wide (`export const panelWide = true`). The shell can thus show every
 * tab at start and load each panel's module (a chunk of its own) only when it is needed or idle.
 */
function sidePanels() {
  const ID = 'virtual:strata-panels';
  const ORDER = ['measure', 'calibration', 'sheets', 'diffraction'];
  return {
    name: 'side-panels',
    resolveId(id) {
      return id === ID ? `\0${ID}` : null;
    },
    load(id) {
      if (id !== `\0${ID}`) return null;
      this.addWatchFile(resolvePath('components'));
      const ids = readdirSync('components')
        .filter((f) => f.endsWith('-panel.ts'))
        .map((f) => f.slice(0, -'-panel.ts'.length))
        .sort((a, b) => {
          const ia = ORDER.indexOf(a) < 0 ? ORDER.length : ORDER.indexOf(a);
          const ib = ORDER.indexOf(b) < 0 ? ORDER.length : ORDER.indexOf(b);
          return ia - ib || a.localeCompare(b);
        });
      const label = (s) => s.split('-').map((w, i) => (i ? w : w[0].toUpperCase() + w.slice(1))).join(' ');
      const lines = ids.map((p) => {
        const file = resolvePath('components', `${p}-panel.ts`);
        const source = readFileSync(file, 'utf8');
        const tag = /customElements\.define\(\s*['"]([a-z][\w-]*-[\w-]*)['"]/.exec(source)?.[1];
        if (!tag) throw new Error(`components/${p}-panel.ts defines no custom element (customElements.define('…', …)), so it cannot be a panel`);
        const named = /^export const panelLabel\s*=\s*['"]([^'"]+)['"]/m.exec(source)?.[1];
        const wide = /^export const panelWide\s*=\s*true\b/m.test(source);
        return `  { id: ${JSON.stringify(p)}, label: ${JSON.stringify(named ?? label(p))}, tag: ${JSON.stringify(tag)}, wide: ${wide}, load: () => import(${JSON.stringify(file)}) },`;
      });
      return `export const panels = [\n${lines.join('\n')}\n];\n`;
    },
  };
}

/** JSON files as ES modules (a dependency reads its own package.json). */
function jsonModules() {
  return {
    name: 'json-modules',
    transform(code, id) {
      if (!id.endsWith('.json')) return null;
      JSON.parse(code);
      return { code: `export default ${code};`, map: { mappings: '' } };
    },
  };
}

export default {
  input: {
    app: 'components/app.ts',
    'compute-worker': 'components/compute-worker.ts',
    'batch-worker': 'components/batch-worker.ts',
  },
  output: {
    dir: 'dist',
    format: 'es',
    entryFileNames: '[name].js',
    chunkFileNames: 'chunks/[name]-[hash].js',
    sourcemap: true,
    manualChunks(id) {
      if (id.includes('@techstark/opencv-js')) return 'opencv';
      // The commonjs plugin's helpers are shared by every CommonJS package (opencv.js, tesseract.js,
      // image decoders). Left alone, rollup puts them into the opencv chunk, and then merely
      // decoding an image or starting OCR loads and runs the 11 MB opencv.js (which, in the page,
      // the Content-Security-Policy stops). Give them a chunk of their own.
      if (id.startsWith('\0commonjsHelpers')) return 'commonjs-helpers';
      return undefined;
    },
  },
  // the PFFFT module imports Node's 'module' only on its Node path
  external: ['node:module', 'module'],
  plugins: [
    cleanDist(),
    jsonModules(),
    resolve({ browser: true, extensions: ['.ts', '.mjs', '.js', '.json'], preferBuiltins: false }),
    // opencv.js mentions Node's modules in code paths the browser never takes.
    commonjs({ ignore: ['fs', 'path', 'crypto'] }),
    typescript({ tsconfig: './tsconfig.json', noEmit: false, outDir: 'dist', sourceMap: true, include: ['src/**/*.ts', 'components/**/*.ts'] }),
    sidePanels(),
    copyStatic(),
    copyDemo(),
  ],
  onwarn(warning, warn) {
    if (warning.code === 'CIRCULAR_DEPENDENCY' && warning.ids?.some((i) => i.includes('node_modules'))) return;
    if (warning.code === 'EVAL' && warning.id?.includes('opencv')) return;
    warn(warning);
  },
};
