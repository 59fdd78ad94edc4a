/**
 * Opening a micrograph file for a command: read by position from a file handle, so a TIFF is
 * decoded strip by strip (or tile by tile) and the file is never held whole besides its pixels.
 */
import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { type DecodeOptions, decodeImageSource, ImageReadError } from '../image/decode';
import type { GreyImage } from '../image/grey-image';

/** Why a file could not be opened or read, in words, from a Node error. */
function readFailure(e: unknown): string {
  const code = (e as NodeJS.ErrnoException).code;
  if (code === 'ENOENT') return 'no such file';
  if (code === 'EISDIR') return 'is a directory';
  if (code === 'EACCES') return 'permission denied';
  return (e as Error).message;
}

/** An image file that could not be opened or read (not one that could not be decoded). */
export class ImageFileError extends ImageReadError {
  override name = 'ImageFileError';
  /** Node's error code (ENOENT, EISDIR, EACCES, EIO …), or '' when there is none. */
  readonly code: string;
  constructor(fileName: string, e: unknown) {
    super(fileName, readFailure(e), { cause: e });
    this.code = (e as NodeJS.ErrnoException).code ?? '';
  }
}

/**
 * Opens and decodes an image file as the commands do.
 *
 * @param file - the path, also the name used in messages and warnings
 * @param options - as for decodeImage (pixel and decompression limits, non-finite pixels)
 * @returns the image, as decodeImage would give for the file's bytes (the same pixels, metadata,
 *   warnings and refusals)
 * @throws ImageFileError when the file cannot be opened or read (no such file, a directory,
 *   permission denied, a read error); ImageReadError as decodeImage when its content is refused
 * Notes: decodeImageSource reads a TIFF's directories a page at a time and each strip or tile when
 * it is decoded; other formats are read whole. A file that shrinks while it is read is refused
 * with the byte where it ended.
 * Reference: positional reads (POSIX pread), common practice.
 */
export function openImageFile(file: string, options: DecodeOptions = {}): GreyImage {
  if (typeof file !== 'string' || file === '') throw new TypeError(`file must be a non-empty path, got ${JSON.stringify(file)}`);
  let fd: number;
  let length: number;
  try {
    fd = openSync(file, 'r');
  } catch (e) {
    throw new ImageFileError(file, e);
  }
  try {
    try {
      const stat = fstatSync(fd);
      if (stat.isDirectory()) throw Object.assign(new Error('is a directory'), { code: 'EISDIR' });
      length = stat.size;
    } catch (e) {
      throw new ImageFileError(file, e);
    }
    const read = (offset: number, n: number): Uint8Array => {
      const b = new Uint8Array(n);
      for (let at = 0; at < n;) {
        let k: number;
        try {
          k = readSync(fd, b, at, n - at, offset + at);
        } catch (e) {
          throw new ImageFileError(file, e);
        }
        if (k === 0) throw new ImageReadError(file, `the file ended at byte ${offset + at} of ${length} while it was read (did it change?)`);
        at += k;
      }
      return b;
    };
    return decodeImageSource({ length, read }, file, options);
  } finally {
    closeSync(fd);
  }
}
