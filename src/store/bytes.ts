/** Byte helpers the library needs in the page, in workers and in Node alike. */

const ALPHABET = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/';
const LOOKUP = (() => {
  const t = new Int16Array(128).fill(-1);
  for (let i = 0; i < ALPHABET.length; i++) t[ALPHABET.charCodeAt(i)] = i;
  return t;
})();

/**
 * Encodes bytes as standard base64 with padding.
 *
 * @param bytes the bytes to encode
 * @returns the base64 text
 * Reference: RFC 4648 §4, "Base 64 Encoding".
 */
export function toBase64(bytes: Uint8Array): string {
  const codes = new Uint8Array(Math.ceil(bytes.length / 3) * 4);
  const a = new Uint8Array(64);
  for (let i = 0; i < 64; i++) a[i] = ALPHABET.charCodeAt(i);
  const full = bytes.length - (bytes.length % 3);
  let o = 0;
  for (let i = 0; i < full; i += 3) {
    const n = (bytes[i] << 16) | (bytes[i + 1] << 8) | bytes[i + 2];
    codes[o++] = a[n >> 18];
    codes[o++] = a[(n >> 12) & 63];
    codes[o++] = a[(n >> 6) & 63];
    codes[o++] = a[n & 63];
  }
  const rest = bytes.length - full;
  if (rest) {
    const n = (bytes[full] << 16) | (rest === 2 ? bytes[full + 1] << 8 : 0);
    codes[o++] = a[n >> 18];
    codes[o++] = a[(n >> 12) & 63];
    codes[o++] = rest === 2 ? a[(n >> 6) & 63] : 61;
    codes[o++] = 61;
  }
  return new TextDecoder('latin1').decode(codes);
}

/**
 * Decodes standard base64 (padding optional, no white space).
 *
 * @param text base64 text
 * @returns the bytes
 * Reference: RFC 4648 §4, "Base 64 Encoding".
 */
export function fromBase64(text: string): Uint8Array {
  if (typeof text !== 'string') throw new TypeError(`base64 text must be a string, got ${typeof text}`);
  let len = text.length;
  while (len > 0 && text[len - 1] === '=') len--;
  if (len % 4 === 1) throw new RangeError(`base64 text has an impossible length ${text.length}`);
  const out = new Uint8Array(Math.floor((len * 3) / 4));
  let o = 0;
  let acc = 0;
  let bits = 0;
  for (let i = 0; i < len; i++) {
    const c = text.charCodeAt(i);
    const v = c < 128 ? LOOKUP[c] : -1;
    if (v < 0) throw new RangeError(`base64 text has a bad character ${JSON.stringify(text[i])} at ${i}`);
    acc = (acc << 6) | v;
    bits += 6;
    if (bits >= 8) {
      bits -= 8;
      out[o++] = (acc >> bits) & 255;
    }
  }
  return out;
}

/** SHA-256 of bytes as lower-case hex (Web Crypto; FIPS 180-4). */
export async function sha256Hex(bytes: Uint8Array): Promise<string> {
  const digest = await crypto.subtle.digest('SHA-256', bytes as Uint8Array<ArrayBuffer>);
  return Array.from(new Uint8Array(digest), (b) => b.toString(16).padStart(2, '0')).join('');
}
