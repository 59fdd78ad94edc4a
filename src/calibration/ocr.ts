/**
 * The OCR adapter: the only environment-specific file of the calibration core. It runs
 * tesseract.js fully offline, in Node from node_modules and in the browser from the files the
 * build copies into dist/vendor/ocr/ (see `vendorAssets` in rollup.config.mjs). Nothing is ever
 * downloaded at run time.
 */
import { encode } from 'fast-png';

/** An 8-bit grey raster ready for OCR (dark text on a light ground works best). */
export interface OcrRaster {
  width: number;
  height: number;
  /** Grey values 0–255, row-major. */
  data: Uint8Array;
}

/** What the OCR engine read. */
export interface OcrResult {
  /** The text, trimmed. */
  text: string;
  /** The engine's own mean confidence, scaled to [0, 1]. */
  confidence: number;
  /** Each character read, with its box in the raster (inclusive pixel bounds). */
  symbols: OcrSymbol[];
}

/** One character the engine read and where. */
export interface OcrSymbol {
  text: string;
  x0: number;
  y0: number;
  x1: number;
  y1: number;
}

/** A running OCR engine; close it when done to free its worker. */
export interface TextReader {
  /** Reads one line of text from a raster. */
  read(raster: OcrRaster): Promise<OcrResult>;
  /** Stops the worker. */
  close(): Promise<void>;
}

export interface TextReaderOptions {
  /** Characters the engine may return; all when absent. */
  whitelist?: string;
  /** Base URL of the OCR files in the browser; 'vendor/ocr/' beside the page when absent. */
  browserBaseUrl?: string;
}

/** Where the build puts the OCR files, relative to dist/ (kept in step with rollup.config.mjs). */
export const OCR_VENDOR_DIR = 'vendor/ocr';

/** Page segmentation mode 7: treat the image as a single text line (tesseract's numbering). */
const PSM_SINGLE_LINE = '7';

/**
 * Starts tesseract.js with the English LSTM model (4.0.0_best_int), offline.
 * @param options character whitelist and, in the browser, where the OCR files are served
 * @returns a reader; call `close()` when done
 * Notes: in Node the worker script, the wasm core and the traineddata are read from
 * node_modules; the traineddata cache is switched off so nothing is written to disk.
 * Tesseract LSTM engine: Smith, "An Overview of the Tesseract OCR Engine", ICDAR 2007.
 */
export async function createTextReader(options: TextReaderOptions = {}): Promise<TextReader> {
  if (options.whitelist !== undefined && typeof options.whitelist !== 'string') {
    throw new TypeError(`whitelist must be a string, got ${typeof options.whitelist}`);
  }
  const isNode = typeof process !== 'undefined' && !!process.versions?.node;
  // eslint-disable-next-line @typescript-eslint/no-explicit-any
  let tesseract: any;
  // eslint-disable-next-line @typescript-eslint/no-explicit-any
  let workerOptions: Record<string, any>;
  if (isNode) {
    // only node:module, which the browser build leaves external (rollup.config.mjs)
    const { createRequire } = await import('node:module');
    const require = createRequire(import.meta.url);
    tesseract = require('tesseract.js');
    const langDir = `${require.resolve('@tesseract.js-data/eng/package.json').replace(/package\.json$/, '')}4.0.0_best_int`;
    workerOptions = { langPath: langDir, gzip: true, cacheMethod: 'none' };
  } else {
    tesseract = await import('tesseract.js');
    tesseract = tesseract.default ?? tesseract;
    const base = new URL(options.browserBaseUrl ?? `${OCR_VENDOR_DIR}/`, globalThis.location?.href).href.replace(/\/?$/, '/');
    workerOptions = {
      workerPath: `${base}worker.min.js`,
      corePath: `${base}core`,
      langPath: `${base}lang`,
      gzip: true,
      cacheMethod: 'none',
      workerBlobURL: false,
    };
  }
  const OEM_LSTM_ONLY = 1;
  const worker = await tesseract.createWorker('eng', OEM_LSTM_ONLY, workerOptions);
  const params: Record<string, string> = { tessedit_pageseg_mode: PSM_SINGLE_LINE };
  if (options.whitelist) params.tessedit_char_whitelist = options.whitelist;
  await worker.setParameters(params);
  return {
    async read(raster: OcrRaster): Promise<OcrResult> {
      if (!raster || !(raster.data instanceof Uint8Array) || raster.data.length !== raster.width * raster.height) {
        throw new TypeError('raster must have width, height and a Uint8Array of width × height grey values');
      }
      const png = encode({ width: raster.width, height: raster.height, data: raster.data, channels: 1, depth: 8 });
      const input = isNode ? Buffer.from(png.buffer, png.byteOffset, png.byteLength) : new Blob([new Uint8Array(png)], { type: 'image/png' });
      const { data } = await worker.recognize(input, {}, { text: true, blocks: true });
      const symbols: OcrSymbol[] = [];
      for (const b of data.blocks ?? []) {
        for (const p of b.paragraphs ?? []) {
          for (const l of p.lines ?? []) {
            for (const w of l.words ?? []) {
              for (const c of w.symbols ?? []) symbols.push({ text: String(c.text), x0: c.bbox.x0, y0: c.bbox.y0, x1: c.bbox.x1, y1: c.bbox.y1 });
            }
          }
        }
      }
      return { text: String(data.text ?? '').trim(), confidence: Math.max(0, Math.min(1, (data.confidence ?? 0) / 100)), symbols };
    },
    async close(): Promise<void> {
      await worker.terminate();
    },
  };
}
