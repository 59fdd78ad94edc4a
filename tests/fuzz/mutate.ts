/**
 * Seeded mutations for the fuzz runs: byte-level damage for binary files, text-level damage for
 * text and JSON. Deterministic in the random generator given.
 */
const enc = new TextEncoder();
const dec = new TextDecoder();

// ---- byte mutations ----

function pick<T>(r: () => number, xs: readonly T[]): T {
  return xs[Math.floor(r() * xs.length)];
}

/** Offsets where a header field is likely: the first 300 bytes, or anywhere. */
function spot(r: () => number, n: number): number {
  return Math.floor(r() * (r() < 0.6 ? Math.min(300, n) : n));
}

const HUGE = [0xffffffff, 0x7fffffff, 0x80000000, 0x10000, 65535, 1 << 20, 0, 1];

/** Applies 1–4 random byte-level mutations. */
export function mutateBytes(seed: Uint8Array, r: () => number): { bytes: Uint8Array; mutation: string } {
  let b = seed.slice();
  const done: string[] = [];
  const count = 1 + Math.floor(r() * 4);
  for (let k = 0; k < count; k++) {
    const op = Math.floor(r() * 7);
    if (b.length === 0) break;
    if (op === 0) {
      const at = spot(r, b.length);
      const bit = Math.floor(r() * 8);
      b[at] ^= 1 << bit;
      done.push(`flip ${at}.${bit}`);
    } else if (op === 1) {
      const at = spot(r, b.length);
      const n = 1 + Math.floor(r() * 8);
      const ins = Uint8Array.from({ length: n }, () => Math.floor(r() * 256));
      const nb = new Uint8Array(b.length + n);
      nb.set(b.subarray(0, at));
      nb.set(ins, at);
      nb.set(b.subarray(at), at + n);
      b = nb;
      done.push(`insert ${n}@${at}`);
    } else if (op === 2) {
      const at = spot(r, b.length);
      const n = Math.min(b.length - at, 1 + Math.floor(r() * 8));
      const nb = new Uint8Array(b.length - n);
      nb.set(b.subarray(0, at));
      nb.set(b.subarray(at + n), at);
      b = nb;
      done.push(`delete ${n}@${at}`);
    } else if (op === 3) {
      const len = Math.floor(r() * b.length);
      b = b.slice(0, len);
      done.push(`truncate ${len}`);
    } else if (op === 4 || op === 5) {
      // Huge declared size or wrong offset: a 32-bit or 16-bit word in a header set to an extreme.
      const at = spot(r, Math.max(1, b.length - 4));
      const v = pick(r, HUGE);
      const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
      if (at + 4 <= b.length && op === 4) dv.setUint32(at, v, r() < 0.5);
      else if (at + 2 <= b.length) dv.setUint16(at, v & 0xffff, r() < 0.5);
      done.push(`${op === 4 ? 'u32' : 'u16'} ${v}@${at}`);
    } else {
      // A float word set to NaN or ±Infinity (float TIFF / MRC pixels and header fields).
      const at = Math.floor(r() * Math.max(1, b.length - 4));
      if (at + 4 <= b.length) new DataView(b.buffer, b.byteOffset).setFloat32(at, pick(r, [NaN, Infinity, -Infinity, 3.4e38]), true);
      done.push(`float ${at}`);
    }
  }
  return { bytes: b, mutation: done.join(', ') };
}

// ---- text mutations ----

const TEXT_PIECES = ['NaN', 'Infinity', '-Infinity', '1e309', '-0', '1e-320', '""', 'null', '[]', '{}', '\u0000', '\t', ';', ',', '\n', '\r', '#', 'é', '\uFFFD', '9'.repeat(400), '0x1F', ' '];

/** The first 500 matches of a global pattern (enough to pick from, cheap on long texts). */
function firstMatches(t: string, re: RegExp): RegExpMatchArray[] {
  const out: RegExpMatchArray[] = [];
  for (const m of t.matchAll(re)) {
    out.push(m);
    if (out.length >= 500) break;
  }
  return out;
}

/** Applies 1–3 text mutations: tokens inserted, lines repeated/removed, very long lines, cuts. */
export function mutateText(seed: Uint8Array, r: () => number, json: boolean): { bytes: Uint8Array; mutation: string } {
  let t = dec.decode(seed);
  const done: string[] = [];
  const count = 1 + Math.floor(r() * 3);
  for (let k = 0; k < count; k++) {
    const op = Math.floor(r() * (json ? 8 : 7));
    const at = Math.floor(r() * (t.length + 1));
    if (op === 0) {
      const p = pick(r, TEXT_PIECES);
      t = t.slice(0, at) + p + t.slice(at);
      done.push(`insert ${JSON.stringify(p.slice(0, 12))}@${at}`);
    } else if (op === 1) {
      const n = 1 + Math.floor(r() * 20);
      t = t.slice(0, at) + t.slice(at + n);
      done.push(`delete ${n}@${at}`);
    } else if (op === 2) {
      t = t.slice(0, at);
      done.push(`truncate ${at}`);
    } else if (op === 3) {
      const n = 10_000 + Math.floor(r() * 200_000);
      t = t.slice(0, at) + (r() < 0.5 ? 'x' : '7').repeat(n) + t.slice(at);
      done.push(`long line ${n}@${at}`);
    } else if (op === 4) {
      const lines = t.split('\n');
      const i = Math.floor(r() * lines.length);
      lines.splice(i, 0, lines[i] ?? '');
      t = lines.join('\n');
      done.push(`repeat line ${i}`);
    } else if (op === 5) {
      // Replace a number with an extreme one.
      const m = firstMatches(t, /-?\d+(\.\d+)?(e-?\d+)?/gi);
      if (m.length) {
        const hit = m[Math.floor(r() * m.length)];
        const v = pick(r, ['NaN', 'Infinity', '1e308', '-1e308', '0', '-1', '4294967297', '1e-300']);
        t = t.slice(0, hit.index) + v + t.slice(hit.index! + hit[0].length);
        done.push(`number ${hit[0]}→${v}`);
      }
    } else if (op === 6) {
      const c = t.charCodeAt(Math.min(at, t.length - 1)) ^ (1 << Math.floor(r() * 7));
      t = t.slice(0, at) + String.fromCharCode(c) + t.slice(at + 1);
      done.push(`flip char ${at}`);
    } else {
      // Deep nesting in place of a JSON value.
      const depth = pick(r, [100, 1000, 5000, 20000]);
      const m = firstMatches(t, /:\s*("[^"]*"|-?\d[\d.eE+-]*|true|false|null)/g);
      if (m.length) {
        const hit = m[Math.floor(r() * m.length)];
        const open = r() < 0.5 ? '['.repeat(depth) : '{"a":'.repeat(depth);
        const close = open[0] === '[' ? ']'.repeat(depth) : '}'.repeat(depth);
        t = t.slice(0, hit.index! + 1) + open + '1' + close + t.slice(hit.index! + hit[0].length);
        done.push(`nest ${depth}`);
      }
    }
  }
  return { bytes: enc.encode(t), mutation: done.join(', ') };
}
