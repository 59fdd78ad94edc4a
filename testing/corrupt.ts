/**
 * Test-only generators of the corrupt, hostile and oversized inputs of each class that issue
 * "Hardening" lists: every one must be refused with a clear message (or, where it says so, read
 * with a warning, or have its bad record skipped). The fuzz runner mixes them into its inputs
 * and the regression corpus is made from them.
 */
import { zlibSync } from 'fflate';
import { encodeTiff } from './encode-tiff';
import { encodeMrc } from './encode-mrc';
import { b64, jpegSeeds, libraryExport, measurementSeeds, pngSeeds, sha256, stateSeeds, syntheticCif, type Seed } from './fuzz-seeds';
import { ihdr, pngFromScanlines, readChunks, writePng } from './png';
import { buildTiff, entryOffset, firstIfdOffset } from './tiff';

/** What a reader must do with a corrupt input. */
export type Expectation =
  /** an error of the reader's own, naming the file */
  | { kind: 'refuse'; message?: RegExp }
  /** a result, with a warning matching the pattern */
  | { kind: 'warn'; warning: RegExp }
  /** (library import) the record with this id skipped, never stored */
  | { kind: 'skip'; store: string; id: string }
  /** a result, within the time and memory bounds (hostile but valid) */
  | { kind: 'accept' }
  /** a result or a clear error, within the time and memory bounds */
  | { kind: 'any' };

/** One corrupt input. */
export interface CorruptInput extends Seed {
  /** The class it belongs to (as the issue names it). */
  cls: string;
  expect: Expectation;
}

/** A class of corrupt inputs for one reader. */
export interface CorruptClass {
  /** The reader: tiff, png, jpeg, mrc, pattern, structure, recipe, measurement, library, state. */
  reader: string;
  id: string;
  /** Makes one input of the class (deterministic in r). */
  make(r: () => number): CorruptInput;
}

const enc = new TextEncoder();
const pick = <T>(r: () => number, xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];

/** A TIFF with a tag's inline value replaced (type SHORT or LONG as found). */
function withTag(bytes: Uint8Array, tag: number, value: number): Uint8Array {
  const out = bytes.slice();
  const at = entryOffset(out, tag);
  if (at < 0) throw new Error(`tag ${tag} not in the test TIFF`);
  const le = out[0] === 0x49;
  const v = new DataView(out.buffer);
  if (v.getUint16(at + 2, le) === 3) v.setUint16(at + 8, value, le);
  else v.setUint32(at + 8, value, le);
  return out;
}

const u16 = (n: number, seed: number) => Uint16Array.from({ length: n }, (_, i) => (i * 977 + seed * 131) & 0xffff);

export const CORRUPT_CLASSES: CorruptClass[] = [
  // ---- TIFF ----
  {
    reader: 'tiff', id: 'tile-width-2^32-1',
    make: (r) => {
      const w = 20 + Math.floor(r() * 40);
      const t = buildTiff({ width: w, height: 20, bits: 16, data: u16(w * 20, 1), compression: 8, tile: { width: 16, length: 16 }, tags: [{ tag: 322, type: 4, values: [2 ** 32 - 1] }, { tag: 323, type: 4, values: [pick(r, [1, 16, 2 ** 32 - 1])] }] });
      return { name: 'tile-huge.tif', bytes: t, cls: 'tiled TIFF with a tile 2³²−1 px wide', expect: { kind: 'refuse', message: /tile/ } };
    },
  },
  {
    reader: 'tiff', id: 'tile-2^31x1',
    make: () => ({ name: 'tile-2e31.tif', bytes: buildTiff({ width: 40, height: 20, bits: 8, data: new Uint8Array(800), compression: 8, tile: { width: 16, length: 16 }, tags: [{ tag: 322, type: 4, values: [2 ** 31] }, { tag: 323, type: 4, values: [1] }] }), cls: 'tile declared 2³¹ × 1', expect: { kind: 'refuse', message: /tile/ } }),
  },
  {
    reader: 'tiff', id: 'predictor-invalid',
    make: (r) => ({ name: 'predictor.tif', bytes: buildTiff({ width: 30, height: 10, bits: 16, data: u16(300, 2), compression: pick(r, [1, 5, 8] as const), tags: [{ tag: 317, type: 3, values: [pick(r, [0, 4, 5, 255, 65535])] }] }), cls: 'TIFF predictor 0 (or another undefined value)', expect: { kind: 'refuse', message: /Predictor/ } }),
  },
  {
    reader: 'tiff', id: 'fewer-byte-counts',
    make: (r) => {
      const t = buildTiff({ width: 30, height: 24, bits: 16, data: u16(720, 3), compression: pick(r, [1, 5, 8] as const), rowsPerStrip: 4 });
      const counts = new DataView(t.buffer).getUint32(entryOffset(t, 279) + 8, true);
      const n = 1 + Math.floor(r() * 4);
      const list = Array.from({ length: n }, (_, i) => new DataView(t.buffer).getUint32(counts + 4 * i, true));
      return { name: 'counts.tif', bytes: buildTiff({ width: 30, height: 24, bits: 16, data: u16(720, 3), compression: 8, rowsPerStrip: 4, tags: [{ tag: 279, type: 4, values: list }] }), cls: 'fewer strip byte counts than offsets', expect: { kind: 'refuse', message: /byte counts/ } };
    },
  },
  {
    reader: 'tiff', id: 'strip-bomb-predictor',
    make: (r) => {
      // predictor 2 under Deflate or LZW, each strip holding far more data than its rows
      const rows = 2;
      const big = new Uint8Array(rows * 64 * 2 * (50 + Math.floor(r() * 200)));
      const compressed = r() < 0.5 ? zlibSync(big, { level: 9 }) : zlibSync(big, { level: 1 });
      const t = buildTiff({ width: 64, height: 8, bits: 16, data: new Uint16Array(512), compression: 8, predictor: 2, rowsPerStrip: rows });
      const offsets = new DataView(t.buffer).getUint32(entryOffset(t, 273) + 8, true);
      const out = new Uint8Array(t.length + compressed.length);
      out.set(t);
      out.set(compressed, t.length);
      new DataView(out.buffer).setUint32(offsets, t.length, true);
      const countsAt = new DataView(out.buffer).getUint32(entryOffset(out, 279) + 8, true);
      new DataView(out.buffer).setUint32(countsAt, compressed.length, true);
      return { name: 'strip-bomb.tif', bytes: out, cls: 'TIFF strips with predictor 2 under Deflate inflating past their rows', expect: { kind: 'refuse', message: /more than the \d+ bytes/ } };
    },
  },
  {
    reader: 'tiff', id: 'declared-bomb',
    make: (r) => {
      const side = pick(r, [16384, 32768, 65535]);
      const t = buildTiff({ width: 16, height: 16, bits: 16, data: new Uint16Array(256), compression: 8, predictor: 2 });
      return { name: 'declared.tif', bytes: withTag(withTag(withTag(t, 256, side), 257, side), 278, side), cls: 'small Deflate TIFF declaring a huge image', expect: { kind: 'refuse' } };
    },
  },
  {
    reader: 'tiff', id: 'subifd-loop',
    make: (r) => {
      const tag = pick(r, [34665, 330, 34853]);
      const t = buildTiff({ width: 20, height: 10, bits: 8, data: new Uint8Array(200), tags: [{ tag, type: 4, values: [0] }] });
      new DataView(t.buffer).setUint32(entryOffset(t, tag) + 8, firstIfdOffset(t), true);
      return { name: 'loop.tif', bytes: t, cls: 'self-referencing metadata directory', expect: { kind: 'warn', warning: /a loop/ } };
    },
  },
  {
    reader: 'tiff', id: 'offset-outside',
    make: (r) => {
      const t = encodeTiff({ width: 20, height: 20, data: new Uint8Array(400), rowsPerStrip: 20 });
      return { name: 'outside.tif', bytes: withTag(t, 273, t.length + Math.floor(r() * 1e6)), cls: 'strip offset outside the file', expect: { kind: 'refuse', message: /truncated/ } };
    },
  },
  // ---- PNG ----
  {
    reader: 'png', id: 'crc',
    make: (r) => {
      const seed = pick(r, pngSeeds());
      const chunks = readChunks(seed.bytes);
      const i = Math.floor(r() * chunks.length);
      const bytes = writePng(chunks, { wrongCrc: i });
      return { name: seed.name, bytes, cls: 'PNG chunk CRC not checked', expect: { kind: 'refuse', message: /CRC/ } };
    },
  },
  {
    reader: 'png', id: 'adler',
    make: (r) => {
      const seed = pick(r, pngSeeds());
      const chunks = readChunks(seed.bytes);
      const idat = chunks.findIndex((c) => c.type === 'IDAT');
      const z = chunks[idat].data.slice();
      z[z.length - 1 - Math.floor(r() * 4)] ^= 1 + Math.floor(r() * 255);
      chunks[idat] = { type: 'IDAT', data: z };
      return { name: seed.name, bytes: writePng(chunks), cls: 'zlib Adler-32 not checked', expect: { kind: 'refuse', message: /Adler-32/ } };
    },
  },
  {
    reader: 'png', id: 'short',
    make: (r) => {
      const seed = pick(r, pngSeeds());
      const cut = 1 + Math.floor(r() * 16);
      return { name: seed.name, bytes: seed.bytes.subarray(0, seed.bytes.length - cut), cls: 'PNG a few bytes short', expect: { kind: 'refuse', message: /truncated/ } };
    },
  },
  {
    reader: 'png', id: 'short-data',
    make: (r) => {
      const w = 8 + Math.floor(r() * 20);
      const h = 4 + Math.floor(r() * 10);
      const raw = new Uint8Array(h * (w + 1) - 1 - Math.floor(r() * w));
      return { name: 'short-data.png', bytes: pngFromScanlines(w, h, 8, 0, raw), cls: 'PNG image data short of its rows (missing pixels read as 0)', expect: { kind: 'refuse', message: /image data gives/ } };
    },
  },
  {
    reader: 'png', id: 'palette-missing',
    make: (r) => {
      const w = 4 + Math.floor(r() * 8);
      return { name: 'palette.png', bytes: pngFromScanlines(w, 2, 8, 3, new Uint8Array(2 * (w + 1))), cls: 'palette PNG without a palette', expect: { kind: 'refuse', message: /without a PLTE/ } };
    },
  },
  {
    reader: 'png', id: 'palette-index',
    make: (r) => {
      // two rows of 4 indices, each after its filter byte 0; the palette has 2 entries
      const raw = Uint8Array.from([0, 0, 1, 2 + Math.floor(r() * 200), 0, 0, 1, 1, 0, 1]);
      return { name: 'index.png', bytes: pngFromScanlines(4, 2, 8, 3, raw, [{ type: 'PLTE', data: new Uint8Array(6) }]), cls: 'palette index beyond the palette', expect: { kind: 'refuse', message: /palette index/ } };
    },
  },
  {
    reader: 'png', id: 'inflate-bomb',
    make: (r) => {
      // 1 MB-class file whose image data inflates past the budget: refused from IHDR before inflating
      const side = pick(r, [16384, 20000, 30000]);
      const idat = zlibSync(new Uint8Array(2 ** 20), { level: 9 });
      const bytes = writePng([{ type: 'IHDR', data: ihdr(side, side, 8, 6) }, { type: 'IDAT', data: idat }, { type: 'IEND', data: new Uint8Array(0) }]);
      return { name: 'bomb.png', bytes, cls: 'PNG whose image data inflates to 1 GiB or more', expect: { kind: 'refuse' } };
    },
  },
  {
    reader: 'png', id: 'iccp-bomb',
    make: (r) => {
      const seed = pngSeeds()[1];
      const chunks = readChunks(seed.bytes);
      const profile = zlibSync(new Uint8Array((8 + Math.floor(r() * 56)) * 2 ** 20), { level: 9 });
      const iccp = new Uint8Array([...enc.encode('icc'), 0, 0, ...profile]);
      return { name: 'iccp.png', bytes: writePng([chunks[0], { type: 'iCCP', data: iccp }, ...chunks.slice(1)]), cls: 'colour-profile chunk inflating to tens of MiB (never inflated)', expect: { kind: 'accept' } };
    },
  },
  {
    reader: 'png', id: 'filter-type',
    make: (r) => {
      const raw = new Uint8Array(3 * 9);
      raw[9 * Math.floor(r() * 3)] = 5 + Math.floor(r() * 250);
      return { name: 'filter.png', bytes: pngFromScanlines(8, 3, 8, 0, raw), cls: 'undefined PNG filter type', expect: { kind: 'refuse', message: /filter type/ } };
    },
  },
  // ---- JPEG ----
  {
    reader: 'jpeg', id: 'missing-huffman',
    make: (r) => {
      const seed = pick(r, jpegSeeds());
      const bad = seed.bytes.slice();
      for (let at = 2; at < bad.length - 4; ) {
        const marker = bad[at + 1];
        const len = (bad[at + 2] << 8) | bad[at + 3];
        if (marker === 0xda) break;
        if (marker === 0xc4) {
          let p = at + 4;
          while (p < at + 2 + len) {
            bad[p] = (bad[p] & 0xf0) | 3;
            let n = 0;
            for (let i = 1; i <= 16; i++) n += bad[p + i];
            p += 17 + n;
          }
        }
        at += 2 + len;
      }
      return { name: seed.name, bytes: bad, cls: 'JPEG scan using a missing Huffman table', expect: { kind: 'refuse', message: /Huffman table/ } };
    },
  },
  {
    reader: 'jpeg', id: 'truncated',
    make: (r) => {
      const seed = pick(r, jpegSeeds());
      return { name: seed.name, bytes: seed.bytes.subarray(0, Math.floor(seed.bytes.length * (0.3 + 0.6 * r()))), cls: 'JPEG cut short', expect: { kind: 'refuse' } };
    },
  },
  // ---- MRC ----
  {
    reader: 'mrc', id: 'huge-stack',
    make: (r) => {
      const b = encodeMrc({ width: 8, height: 8, mode: 2, data: new Float32Array(64) });
      new DataView(b.buffer).setInt32(8, pick(r, [2 ** 31 - 1, 65536, 1 << 20]), true);
      return { name: 'stack.mrc', bytes: b, cls: 'MRC declaring a huge stack', expect: { kind: 'refuse', message: /truncated/ } };
    },
  },
  {
    reader: 'mrc', id: 'nan',
    make: (r) => {
      const d = new Float32Array(64).fill(1);
      d[Math.floor(r() * 64)] = pick(r, [NaN, Infinity, -Infinity]);
      return { name: 'nan.mrc', bytes: encodeMrc({ width: 8, height: 8, mode: 2, data: d }), cls: 'NaN or infinite pixels', expect: { kind: 'refuse', message: /NaN or infinite/ } };
    },
  },
  // ---- structure files ----
  {
    reader: 'structure', id: 'unicode-space',
    make: (r) => {
      const ch = pick(r, ['\u000B', '\u000C', '\u00A0', '\u2028', '\uFEFF', '\u3000', '\u0085', '\u2009']);
      const lines = syntheticCif().split('\n');
      const i = 2 + Math.floor(r() * (lines.length - 4));
      const line = lines[i];
      const at = Math.max(0, line.indexOf(' '));
      lines[i] = at > 0 && r() < 0.8 ? line.slice(0, at) + ch + line.slice(at + 1) : ch + line;
      return { name: 'spaces.cif', bytes: enc.encode(lines.join('\n')), cls: 'vertical tab, form feed, no-break space, U+2028 or a byte-order mark in a structure file', expect: { kind: 'refuse', message: /^spaces\.cif: line \d+: column \d+: / } };
    },
  },
  {
    reader: 'structure', id: 'symops-100k',
    make: (r) => {
      const n = pick(r, [193, 1000, 100000]);
      const text = syntheticCif().replace(/loop_\n_space_group_symop_operation_xyz\n(('[^']*'\n)+)/, `loop_\n_space_group_symop_operation_xyz\n${"'x,y,z'\n".repeat(n)}`);
      return { name: 'symops.cif', bytes: enc.encode(text), cls: 'structure file with 100,000 symmetry operations', expect: { kind: 'refuse', message: /at most 192/ } };
    },
  },
  {
    reader: 'structure', id: 'missing-coordinates',
    make: (r) => {
      const drop = pick(r, ['_atom_site_fract_y', '_atom_site_fract_z']);
      const text = syntheticCif().replace(`${drop}\n`, '').replace('Na1 Na 0 0 0 0.012', 'Na1 Na 0 0 0.012').replace('Cl1 Cl 0.5 0.5 0.5 0.010', 'Cl1 Cl 0.5 0.5 0.010');
      return { name: 'coords.cif', bytes: enc.encode(text), cls: 'atom loop without y/z coordinates', expect: { kind: 'refuse', message: /no _atom_site_fract_[yz]/ } };
    },
  },
  {
    reader: 'structure', id: 'absurd-cell',
    make: (r) => {
      const v = pick(r, ['1e16', '-5.64', '0', '1e-9', '?', '1e400']);
      return { name: 'cell.cif', bytes: enc.encode(syntheticCif().replace('_cell_length_b 5.6402(1)', `_cell_length_b ${v}`)), cls: 'absurd cell (a = 10¹⁵ nm, negative lengths)', expect: { kind: 'refuse', message: /_cell_length_b/ } };
    },
  },
  {
    reader: 'structure', id: 'long-number',
    make: (r) => {
      // a value of 200,000 digits before a number (found by the fuzz runner: the number pattern backtracked quadratically)
      const digits = pick(r, ['7', '1', '0']).repeat(50_000 + Math.floor(r() * 150_000));
      const [from, to] = pick(r, [
        ['Cl1 Cl 0.5 0.5 0.5', `Cl1 Cl ${digits}-0.5 0.5 0.5`],
        ['_cell_angle_beta 90', `_cell_angle_beta ${digits}x`],
        ["'x,y,z'", `'${digits}x,y,z'`],
      ] as const);
      const text = syntheticCif().replace(from, to);
      return { name: 'digits.cif', bytes: enc.encode(text), cls: 'a value of 200,000 digits (quadratic number pattern)', expect: { kind: 'any' } };
    },
  },
  // ---- diffraction patterns ----
  {
    reader: 'pattern', id: 'absurd-values',
    make: (r) => {
      const rows = Array.from({ length: 20 }, (_, i) => `${(5 + i * 0.1).toFixed(1)} ${100 + i}`);
      const i = 1 + Math.floor(r() * 18);
      const kind = Math.floor(r() * 4);
      if (kind === 0) rows[i] = `${(5 + i * 0.1).toFixed(1)} ${pick(r, ['1e300', '-1e200', '1e13', 'NaN', 'Infinity', '1e999'])}`;
      else if (kind === 1) rows[i] = rows[i - 1]; // repeated 2θ
      else if (kind === 2) rows[i] = `${(5 + (i - 1.5) * 0.1).toFixed(2)} 100`; // decreasing inside an increasing file
      else rows[i] = `${pick(r, ['1e30', '-1e9'])} 100`;
      return { name: 'pattern.xy', bytes: enc.encode(`# 2theta counts\n${rows.join('\n')}\n`), cls: 'non-finite or absurd pattern values, repeated or decreasing 2θ', expect: { kind: 'refuse', message: /^pattern\.xy: (line \d+: |2θ range)/ } };
    },
  },
  // ---- recipes ----
  {
    reader: 'recipe', id: 'malformed',
    make: (r) => {
      const text = pick(r, ['{"schemaVersion": 1,', '{"schemaVersion": 1, "area": {"kind": "everywhere"}}', '{"schemaVersion": 2}', '{"schemaVersion": 1, "acceptance": {"periodRangeNm": [1, "20 px"]}}', '{"schemaVersion": 1, "measurements": [{"tool": "spectrum", "topK": -1}]}', '[]', '']);
      return { name: 'recipe.json', bytes: enc.encode(text), cls: 'malformed recipe text', expect: { kind: 'refuse', message: /^recipe\.json: recipe / } };
    },
  },
  // ---- measurement reports ----
  {
    reader: 'measurement', id: 'null-period',
    make: (r) => {
      const base = JSON.parse(new TextDecoder().decode(measurementSeeds()[0].bytes));
      base.periodicities[Math.floor(r() * base.periodicities.length)] = pick(r, [null, 7, 'x', [], { periodNm: -1, uncertaintyNm: 0.1 }, { periodNm: 1, uncertaintyNm: -2 }]);
      return { name: 'report.json', bytes: enc.encode(JSON.stringify(base)), cls: 'reconciliation input with a null period', expect: { kind: 'refuse', message: /^report\.json: periodicities\[\d\]/ } };
    },
  },
  // ---- library exports ----
  ...(
    [
      ['recipe-text', 'recipes', 'r1', (l: ReturnType<typeof libraryExport>) => { l.recipes[0].json = '{"schemaVersion": 1, "area": '; }],
      ['rel-uncertainty-5', 'calibrations', 'p1', (l: ReturnType<typeof libraryExport>) => { l.calibrations[0].relUncertainty = 5; }],
      ['rel-uncertainty-negative', 'calibrations', 'p1', (l: ReturnType<typeof libraryExport>) => { l.calibrations[0].relUncertainty = -1; }],
      ['empty-image', 'images', 'img-1', (l: ReturnType<typeof libraryExport>) => { Object.assign(l.images[0], { fileBase64: '', sha256Hex: sha256(new Uint8Array(0)), byteSize: 0 }); }],
      ['non-image', 'images', 'img-1', (l: ReturnType<typeof libraryExport>) => { const t = enc.encode('notes from the session, not an image'); Object.assign(l.images[0], { fileBase64: b64(t), sha256Hex: sha256(t), byteSize: t.length }); }],
      ['size-mismatch', 'images', 'img-1', (l: ReturnType<typeof libraryExport>) => { l.images[0].width = 17; }],
      ['measurement-shape', 'measurements', 'm1', (l: ReturnType<typeof libraryExport>) => { (l.measurements[0].periodicities as unknown[])[0] = null; }],
    ] as const
  ).map(([id, store, recordId, edit]): CorruptClass => ({
    reader: 'library', id,
    make: () => {
      const l = libraryExport();
      edit(l);
      return { name: 'library.json', bytes: enc.encode(JSON.stringify(l)), cls: `library import of an unusable record (${id})`, expect: { kind: 'skip', store, id: recordId } };
    },
  })),
  {
    reader: 'library', id: 'format-version-0',
    make: (r) => {
      const l = libraryExport();
      l.formatVersion = pick(r, [0, -1, 0.5, '2', null]);
      return { name: 'library.json', bytes: enc.encode(JSON.stringify(l)), cls: 'library export of format version 0', expect: { kind: 'refuse', message: /formatVersion/ } };
    },
  },
  {
    reader: 'library', id: 'deep-nesting',
    make: (r) => {
      const l = libraryExport();
      const depth = pick(r, [5000, 20000]);
      const text = JSON.stringify(l).replace('"detail":{}', `"detail":${'{"a":'.repeat(depth)}1${'}'.repeat(depth)}`);
      return { name: 'library.json', bytes: enc.encode(text), cls: 'record nested thousands of levels deep (found by the fuzz runner: stack overflow)', expect: { kind: 'refuse', message: /nested more than/ } };
    },
  },
  // ---- batch state ----
  {
    reader: 'state', id: 'deep-nesting',
    make: (r) => {
      const s = new TextDecoder().decode(stateSeeds()[0].bytes);
      const depth = pick(r, [1000, 5000]);
      const text = s.replace(/"sha256": "[0-9a-f]+"/, `"sha256": ${'['.repeat(depth)}1${']'.repeat(depth)}`);
      return { name: 'batch-state.json', bytes: enc.encode(text), cls: 'state entry nested thousands of levels deep (found by the fuzz runner: stack overflow)', expect: { kind: 'refuse', message: /malformed/ } };
    },
  },
  {
    reader: 'state', id: 'half-written',
    make: (r) => {
      const s = stateSeeds()[0].bytes;
      return { name: 'batch-state.json', bytes: s.subarray(0, Math.floor(s.length * (0.1 + 0.85 * r()))), cls: 'half-written batch state file', expect: { kind: 'refuse', message: /batch state/ } };
    },
  },
];

/** The corrupt classes of one reader. */
export function classesOf(reader: string): CorruptClass[] {
  return CORRUPT_CLASSES.filter((c) => c.reader === reader);
}
