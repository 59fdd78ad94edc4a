/**
 * Reusable typed-array buffers for a worker that handles one image after another.
 *
 * A 2048² image costs tens of MiB of fresh arrays per file (the file's bytes, the grey pixels,
 * the power spectrum). Allocating them anew for every file of a batch makes the JavaScript engine
 * collect garbage about twice per file, which keeps a second core busy and halves what a second
 * worker can add. A workspace hands out the same memory again instead.
 *
 * Contract: an array taken for a purpose is valid until the next request for the same purpose
 * from the same workspace; its contents on arrival are unspecified (callers overwrite every
 * element). One workspace serves one sequence of work, never two at once.
 */
import type { PixelArray, PixelStorage } from './grey-image';

/**
 * The purposes a workspace lends buffers for (one buffer each). Besides the file, pixel and
 * spectrum buffers, the analysis of a region borrows scratch arrays that live only inside one call:
 * the complex spectrum of the spots' budgets, the ring powers of the radial
 * background, the per-pixel support weights of a spot's refit.
 */
export type WorkspacePurpose =
  | 'file-bytes'
  | 'decode-raw'
  | 'decode-grey'
  | 'spectrum-power'
  | 'block-power'
  | 'spectrum-complex'
  | 'radial-powers'
  | 'spot-weights';

/** Buffers lent by purpose; see the module notes for the contract. */
export interface Workspace {
  /** A Float32Array of exactly `length` elements for `purpose`. */
  float32(purpose: WorkspacePurpose, length: number): Float32Array;
  /** A Float64Array of exactly `length` elements for `purpose`. */
  float64(purpose: WorkspacePurpose, length: number): Float64Array;
  /** An Int32Array of exactly `length` elements for `purpose`. */
  int32(purpose: WorkspacePurpose, length: number): Int32Array;
  /** A pixel array of the given storage and exactly `length` elements for `purpose`. */
  pixels(purpose: WorkspacePurpose, storage: PixelStorage, length: number): PixelArray;
  /** A Uint8Array of exactly `length` bytes for `purpose`; its byteOffset is 0. */
  bytes(purpose: WorkspacePurpose, length: number): Uint8Array;
  /** Bytes held now, over all purposes. */
  heldBytes(): number;
}

/**
 * A new, empty workspace.
 *
 * @returns a workspace whose buffers grow to the largest request per purpose and are kept
 * Notes: every request returns a new view object (so caches keyed by the array, such as a
 * WeakMap, never mistake one file's pixels for the next); views start at byte 0 of the buffer, so
 * they are aligned for any element type.
 */
export function createWorkspace(): Workspace {
  const buffers = new Map<WorkspacePurpose, ArrayBuffer>();
  const take = (purpose: WorkspacePurpose, byteLength: number): ArrayBuffer => {
    if (!(Number.isInteger(byteLength) && byteLength >= 0)) throw new RangeError(`length must be a non-negative integer, got ${byteLength} bytes for ${purpose}`);
    let b = buffers.get(purpose);
    if (!b || b.byteLength < byteLength) {
      // grow by a quarter more than asked, so slowly growing sizes do not reallocate each time
      b = new ArrayBuffer(b ? Math.max(byteLength, Math.ceil(b.byteLength * 1.25)) : byteLength);
      buffers.set(purpose, b);
    }
    return b;
  };
  return {
    float32: (purpose, length) => new Float32Array(take(purpose, length * 4), 0, length),
    float64: (purpose, length) => new Float64Array(take(purpose, length * 8), 0, length),
    int32: (purpose, length) => new Int32Array(take(purpose, length * 4), 0, length),
    bytes: (purpose, length) => new Uint8Array(take(purpose, length), 0, length),
    pixels: (purpose, storage, length) => {
      switch (storage) {
        case 'uint8': return new Uint8Array(take(purpose, length), 0, length);
        case 'uint16': return new Uint16Array(take(purpose, length * 2), 0, length);
        case 'int16': return new Int16Array(take(purpose, length * 2), 0, length);
        case 'float32': return new Float32Array(take(purpose, length * 4), 0, length);
        default: throw new RangeError(`pixel storage must be uint8, uint16, int16 or float32, got ${String(storage)}`);
      }
    },
    heldBytes: () => [...buffers.values()].reduce((s, b) => s + b.byteLength, 0),
  };
}
