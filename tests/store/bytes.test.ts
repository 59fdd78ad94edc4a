import { describe, expect, test } from 'vitest';
import { fromBase64, sha256Hex, toBase64 } from '../../src/store/bytes';

const text = (s: string) => new TextEncoder().encode(s);

describe('base64', () => {
  test('matches the RFC 4648 test vectors', () => {
    // RFC 4648 §10, "Test Vectors".
    const vectors: [string, string][] = [
      ['', ''], ['f', 'Zg=='], ['fo', 'Zm8='], ['foo', 'Zm9v'], ['foob', 'Zm9vYg=='], ['fooba', 'Zm9vYmE='], ['foobar', 'Zm9vYmFy'],
    ];
    for (const [plain, encoded] of vectors) {
      expect(toBase64(text(plain))).toBe(encoded);
      expect(Array.from(fromBase64(encoded))).toEqual(Array.from(text(plain)));
    }
  });

  test('agrees with Node\'s own encoder on every byte value and across chunk boundaries', () => {
    const bytes = new Uint8Array(3 * 4096 * 2 + 7);
    for (let i = 0; i < bytes.length; i++) bytes[i] = (i * 7 + (i >> 8)) & 255;
    const ours = toBase64(bytes);
    expect(ours).toBe(Buffer.from(bytes).toString('base64'));
    expect(Buffer.from(fromBase64(ours)).equals(Buffer.from(bytes))).toBe(true);
  });

  test('rejects bad characters and impossible lengths, naming them', () => {
    expect(() => fromBase64('Zm9v!A')).toThrow(/bad character "!" at 4/);
    expect(() => fromBase64('Zm9vY')).toThrow(/impossible length 5/);
  });
});

describe('sha256Hex', () => {
  test('matches the FIPS 180-2 examples', async () => {
    // FIPS 180-2, Appendix B.1 ("abc") and the empty message (NIST example values).
    expect(await sha256Hex(text('abc'))).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    expect(await sha256Hex(new Uint8Array(0))).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
  });
});
