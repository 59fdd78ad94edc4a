// Draws the PNG app icons (192 and 512 px) to match public/icons/icon.svg. Run once; output committed.
import { writeFileSync } from 'node:fs';
import { encode } from 'fast-png';

function icon(size) {
  const data = new Uint8Array(size * size * 4);
  const s = size / 64;
  const put = (x, y, [r, g, b]) => { const i = (y * size + x) * 4; data[i] = r; data[i + 1] = g; data[i + 2] = b; data[i + 3] = 255; };
  const inRect = (x, y, x0, y0, w, h) => x >= x0 * s && x < (x0 + w) * s && y >= y0 * s && y < (y0 + h) * s;
  for (let y = 0; y < size; y++) for (let x = 0; x < size; x++) {
    let c = [0x1d, 0x3a, 0x4a];
    for (const y0 of [14, 22, 30, 38]) if (inRect(x, y, 12, y0, 40, 4)) c = [0xe8, 0xc8, 0x72];
    if (inRect(x, y, 10, 48.5, 44, 3) || inRect(x, y, 8.5, 46, 3, 8) || inRect(x, y, 52.5, 46, 3, 8)) c = [0x9f, 0xd3, 0xe6];
    put(x, y, c);
  }
  return encode({ width: size, height: size, data, channels: 4, depth: 8 });
}
for (const size of [192, 512]) writeFileSync(`public/icons/icon-${size}.png`, icon(size));
