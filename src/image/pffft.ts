/**
 * Loading of PFFFT (a small FFT library in WebAssembly, @echogarden/pffft-wasm) once per realm:
 * the SIMD build where the engine validates WebAssembly SIMD, else the plain build. In Node the
 * module reads its .wasm beside itself; in the page and the workers the build copies both
 * .wasm files to vendor/pffft/ (rollup.config.mjs), where they are fetched from.
 */

/** The functions and memory of the PFFFT module that the transform uses. */
export interface PffftModule {
  HEAPF32: Float32Array;
  _pffft_new_setup(n: number, kind: 0 | 1): number;
  _pffft_transform_ordered(setup: number, input: number, output: number, work: number, direction: 0 | 1): void;
  _pffft_aligned_malloc(bytes: number): number;
  _pffft_aligned_free(pointer: number): void;
}

/** The smallest module using a SIMD instruction (v128 const and a lane operation): valid only where SIMD is supported. */
const SIMD_PROBE = new Uint8Array([0, 97, 115, 109, 1, 0, 0, 0, 1, 5, 1, 96, 0, 1, 123, 3, 2, 1, 0, 10, 10, 1, 8, 0, 65, 0, 253, 15, 253, 98, 11]);

/** True when this engine runs WebAssembly SIMD. */
export function wasmSimdSupported(): boolean {
  try {
    return WebAssembly.validate(SIMD_PROBE);
  } catch {
    return false;
  }
}

type Factory = (options?: { locateFile?(path: string, prefix: string): string }) => Promise<PffftModule>;

/** Loads the module (SIMD build where supported). */
export async function loadPffft(): Promise<PffftModule> {
  const simd = wasmSimdSupported();
  const isNode = typeof process !== 'undefined' && !!process.versions?.node;
  const mod = (simd ? await import('@echogarden/pffft-wasm/simd') : await import('@echogarden/pffft-wasm')) as unknown as { default: Factory };
  if (isNode) return mod.default();
  const base = (globalThis as { location?: { href: string } }).location?.href ?? '';
  return mod.default({ locateFile: (path) => new URL(`vendor/pffft/${simd ? 'simd' : 'non-simd'}/${path}`, base).href });
}
