// Builds the browser app into dist/: the page's modules, the workers, opencv.js in a chunk of
// its own, public/ copied as it is, and the vendor files the app loads at run time (OCR).
import { cpSync, mkdirSync, existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import resolve from '@rollup/plugin-node-resolve';
import commonjs from '@rollup/plugin-commonjs';
import typescript from '@rollup/plugin-typescript';

/** Files copied into dist/ untouched: [from (relative to the project), to (relative to dist/)]. */
export const vendorAssets = [
  // OCR runtime for reading scale-bar labels offline (calibration).
];

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

export default {
  input: {
    app: 'components/app.ts',
  },
  output: {
    dir: 'dist',
    format: 'es',
    entryFileNames: '[name].js',
    chunkFileNames: 'chunks/[name]-[hash].js',
    sourcemap: true,
    manualChunks(id) {
      if (id.includes('@techstark/opencv-js')) return 'opencv';
      return undefined;
    },
  },
  external: ['node:module'],
  plugins: [
    resolve({ browser: true, extensions: ['.ts', '.mjs', '.js', '.json'], preferBuiltins: false }),
    // opencv.js mentions Node's modules in code paths the browser never takes.
    commonjs({ ignore: ['fs', 'path', 'crypto'] }),
    typescript({ tsconfig: './tsconfig.json', noEmit: false, outDir: 'dist', sourceMap: true, include: ['src/**/*.ts', 'components/**/*.ts'] }),
    copyStatic(),
  ],
  onwarn(warning, warn) {
    if (warning.code === 'CIRCULAR_DEPENDENCY' && warning.ids?.some((i) => i.includes('node_modules'))) return;
    if (warning.code === 'EVAL' && warning.id?.includes('opencv')) return;
    warn(warning);
  },
};
