/**
 * The real texture photographs kept for tests of the sheet search on images without stacks
 * (CC0; tests/fixtures/textures/SOURCES.md), decoded as the app decodes any file.
 */
import { readFileSync } from 'node:fs';
import { decodeImage } from '../src/image/decode';
import type { GreyImage } from '../src/image/grey-image';

/** One of the texture photographs, decoded. */
export function textureImage(name: 'grass' | 'gravel'): GreyImage {
  const file = new URL(`../tests/fixtures/textures/${name}.png`, import.meta.url);
  return decodeImage(new Uint8Array(readFileSync(file)), `${name}.png`);
}
