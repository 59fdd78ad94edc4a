/**
 * Test-only valid inputs for every reader of outside data: the seeds the fuzz runner damages and
 * the base of the corrupt-file classes. Deterministic (seeded), no binary files needed.
 */
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { encode as encodePng } from 'fast-png';
import { Image, encode as encodeRaster } from 'image-js';
import { defaultRecipe } from '../src/batch/recipe';
import { encodeMrc } from './encode-mrc';
import { encodeTiff, type TiffCompression } from './encode-tiff';
import { rng } from './random';
import { ihdr, readChunks, writePng } from './png';
import { buildTiff } from './tiff';

/** One valid input. */
export interface Seed {
  name: string;
  bytes: Uint8Array;
}

const enc = new TextEncoder();
const W = 37;
const H = 23;

function samples() {
  const r = rng(7);
  const u16 = Uint16Array.from({ length: W * H }, (_, i) => (30000 + 20000 * Math.cos(i / 3) + 500 * r()) | 0);
  const u8 = Uint8Array.from(u16, (v) => v >> 8);
  const f32 = Float32Array.from(u16, (v) => v / 1000 - 3);
  return { u16, u8, f32 };
}

/** TIFF seeds: the exporter's strips (none, LZW, Deflate; 8/16-bit, float, RGB) and the test builder's tiles and predictors. */
export function tiffSeeds(): Seed[] {
  const { u16, u8, f32 } = samples();
  const out: Seed[] = [];
  const comps: TiffCompression[] = ['none', 'lzw', 'deflate', 'packbits'];
  for (const c of comps) {
    out.push({ name: `u8-${c}.tif`, bytes: encodeTiff({ width: W, height: H, data: u8, compression: c, rowsPerStrip: 5, resolution: { x: 4e7, unit: 'cm' } }) });
    out.push({ name: `u16-${c}.tif`, bytes: encodeTiff({ width: W, height: H, data: u16, compression: c, rowsPerStrip: 6 }) });
    out.push({ name: `f32-${c}.tif`, bytes: encodeTiff({ width: W, height: H, data: f32, compression: c, rowsPerStrip: 7, description: 'clay tactoids' }) });
  }
  out.push({ name: 'rgb.tif', bytes: encodeTiff({ width: W, height: H, data: Uint8Array.from({ length: W * H * 3 }, (_, i) => u8[(i / 3) | 0]), samplesPerPixel: 3 }) });
  out.push({ name: 'tiled-pred2.tif', bytes: buildTiff({ width: W, height: H, bits: 16, data: u16, compression: 8, predictor: 2, tile: { width: 16, length: 16 } }) });
  out.push({ name: 'tiled-lzw-be.tif', bytes: buildTiff({ width: W, height: H, bits: 8, data: u8, compression: 5, predictor: 2, tile: { width: 16, length: 16 }, bigEndian: true }) });
  out.push({ name: 'u32-lzw.tif', bytes: encodeTiff({ width: W, height: H, data: Uint32Array.from(u16, (v) => v * 300), compression: 'lzw', rowsPerStrip: 9 }) });
  out.push({ name: 'float-pred3.tif', bytes: buildTiff({ width: W, height: H, bits: 32, data: f32, compression: 8, predictor: 3, rowsPerStrip: 8 }) });
  return out;
}

/** PNG seeds: 8/16-bit grey, RGB, RGBA, palette, Adam7, with pHYs. */
export function pngSeeds(): Seed[] {
  const { u16, u8 } = samples();
  const palette = writePng([
    { type: 'IHDR', data: ihdr(4, 2, 8, 3) },
    { type: 'PLTE', data: Uint8Array.from([10, 10, 10, 200, 200, 200, 50, 60, 70]) },
    ...readChunks(encodePng({ width: 4, height: 2, data: Uint8Array.from([0, 1, 2, 1, 2, 0, 1, 1]), depth: 8, channels: 1 })).slice(1),
  ]);
  const phys = (() => {
    const chunks = readChunks(encodePng({ width: W, height: H, data: u8, depth: 8, channels: 1 }));
    const d = new Uint8Array(9);
    new DataView(d.buffer).setUint32(0, 4_000_000_000);
    new DataView(d.buffer).setUint32(4, 4_000_000_000);
    d[8] = 1;
    return writePng([chunks[0], { type: 'pHYs', data: d }, ...chunks.slice(1)]);
  })();
  return [
    { name: 'grey16.png', bytes: encodePng({ width: W, height: H, data: u16, depth: 16, channels: 1 }) },
    { name: 'grey8.png', bytes: encodePng({ width: W, height: H, data: u8, depth: 8, channels: 1 }) },
    { name: 'rgb.png', bytes: encodePng({ width: W, height: H, data: Uint8Array.from({ length: W * H * 3 }, (_, i) => (i * 7) & 255), depth: 8, channels: 3 }) },
    { name: 'rgba16.png', bytes: encodePng({ width: 5, height: 4, data: Uint16Array.from({ length: 80 }, (_, i) => i * 800), depth: 16, channels: 4 }) },
    { name: 'adam7.png', bytes: encodePng({ width: W, height: H, data: u16, depth: 16, channels: 1 }, { interlace: 'Adam7' }) },
    { name: 'palette.png', bytes: palette },
    { name: 'phys.png', bytes: phys },
  ];
}

/** JPEG seeds: grey and colour. */
export function jpegSeeds(): Seed[] {
  const { u8 } = samples();
  const grey = new Image(W, H, { colorModel: 'GREY' });
  grey.getRawImage().data.set(u8);
  const rgb = new Image(W, H, { colorModel: 'RGB' });
  rgb.getRawImage().data.set(Uint8Array.from({ length: W * H * 3 }, (_, i) => (i * 5) & 255));
  return [
    { name: 'film.jpg', bytes: encodeRaster(grey, { format: 'jpeg' }) },
    { name: 'colour.jpg', bytes: encodeRaster(rgb, { format: 'jpeg' }) },
  ];
}

/** MRC seeds: modes 1, 2 (big-endian) and 6 with an extended header. */
export function mrcSeeds(): Seed[] {
  const { u16, f32 } = samples();
  return [
    { name: 'i16.mrc', bytes: encodeMrc({ width: W, height: H, mode: 1, data: Int16Array.from(u16, (v) => v - 32768), pixelSpacingAngstrom: 1.5 }) },
    { name: 'f32.mrc', bytes: encodeMrc({ width: W, height: H, mode: 2, data: f32, pixelSpacingAngstrom: 2, bigEndian: true }) },
    { name: 'u16.mrc', bytes: encodeMrc({ width: W, height: H, mode: 6, data: u16, extendedHeaderBytes: 64 }) },
  ];
}

/** Diffraction pattern seeds: whitespace, semicolon with decimal comma, three columns, q axis, an equal-step scan, a powder CIF. */
export function patternSeeds(): Seed[] {
  const rows: string[] = [];
  for (let i = 0; i < 60; i++) {
    const x = 2 + i * 0.05;
    rows.push(`${x.toFixed(2)} ${(100 + 900 * Math.exp(-(((x - 3.5) / 0.2) ** 2))).toFixed(1)}`);
  }
  const semi = rows.map((l) => l.replace('.', ',').replace(' ', ';'));
  const sigma = rows.map((l) => `${l.replace(' ', '\t')}\t3.0`);
  return [
    { name: 'film.xy', bytes: enc.encode(`# clay film, Cu K-alpha\n# 2theta counts\n${rows.join('\n')}\n`) },
    { name: 'film-semicolon.csv', bytes: enc.encode(`2theta;counts\n${semi.join('\r\n')}`) },
    { name: 'film-sigma.txt', bytes: enc.encode(`# lambda = 0.15406 nm\n${sigma.join('\n')}`) },
    { name: 'film-q.dat', bytes: enc.encode(`# q (1/nm) intensity\n${rows.map((l, i) => `${(1 + i * 0.02).toFixed(3)} ${l.split(' ')[1]}`).join('\n')}`) },
    { name: 'film-scan.dat', bytes: enc.encode(`# Cu K-alpha\n2.00 0.05 4.95\n${rows.map((l) => l.split(' ')[1]).join(' ').replace(/((?:\S+ ){7}\S+) /g, '$1\n')}\nEnd\n`) },
    {
      name: 'film-profile.cif',
      bytes: enc.encode(
        `data_film\n_diffrn_radiation_type 'Cu K\\a'\nloop_\n_diffrn_radiation_wavelength\n_diffrn_radiation_wavelength_wt\n1.540598 1.0\n1.544390 0.5\n_pd_meas_2theta_range_min 2.00\n_pd_meas_2theta_range_max 4.95\n_pd_meas_2theta_range_inc 0.05\nloop_\n_pd_meas_counts_total\n${rows.map((l) => l.split(' ')[1]).join('\n')}\n`,
      ),
    },
  ];
}

/** A small synthetic structure (NaCl-like, F-centred cubic) written as a CIF. */
export function syntheticCif(): string {
  const ops = ['x,y,z', '-x,-y,z', 'x+1/2,y+1/2,z', 'x+1/2,y,z+1/2', 'x,y+1/2,z+1/2', '-x+1/2,-y+1/2,z'];
  return [
    'data_halite_like',
    "_chemical_name_common 'rock salt, synthetic seed'",
    '_cell_length_a 5.6402(1)',
    '_cell_length_b 5.6402(1)',
    '_cell_length_c 5.6402(1)',
    '_cell_angle_alpha 90',
    '_cell_angle_beta 90',
    '_cell_angle_gamma 90',
    'loop_',
    '_space_group_symop_operation_xyz',
    ...ops.map((o) => `'${o}'`),
    'loop_',
    '_atom_site_label',
    '_atom_site_type_symbol',
    '_atom_site_fract_x',
    '_atom_site_fract_y',
    '_atom_site_fract_z',
    '_atom_site_U_iso_or_equiv',
    'Na1 Na 0 0 0 0.012',
    'Cl1 Cl 0.5 0.5 0.5 0.010',
    '',
  ].join('\n');
}

/** Structure-file seeds: the open reference CIFs (tests/fixtures/reference-data) and a synthetic one. */
export function structureSeeds(): Seed[] {
  const dir = new URL('../tests/fixtures/reference-data/', import.meta.url);
  const files = ['crystal_graphite-2H_COD1200017.cif', 'crystal_brucite_COD1000054.cif', 'crystal_muscovite-3T_COD1100015.cif'];
  return [...files.map((f) => ({ name: f, bytes: new Uint8Array(readFileSync(new URL(f, dir))) })), { name: 'halite.cif', bytes: enc.encode(syntheticCif()) }];
}

/** Recipe seeds: the default, a minimal and a full recipe. */
export function recipeSeeds(): Seed[] {
  const d = defaultRecipe();
  return [
    { name: 'default.json', bytes: enc.encode(JSON.stringify(d, null, 2)) },
    { name: 'minimal.json', bytes: enc.encode('{"schemaVersion": 1, "name": "tactoid basal spacing"}') },
    { name: 'full.json', bytes: enc.encode(JSON.stringify({ ...d, name: 'film series', description: 'clay tactoids in a polymer film', area: { kind: 'tiles', rows: 2, columns: 2, infoStripPx: 'auto' }, acceptance: { minStrength: 5, periodRangeNm: [0.5, '20 Å'], maxRelUncertainty: 0.1 } }, null, 1)) },
  ];
}

/** Measurement-report seeds: a measure report (both layouts) and a sheets report. */
export function measurementSeeds(): Seed[] {
  const measure = {
    file: 'tactoid-a.tif', width: 1024, height: 1024,
    calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02 },
    periodicities: [
      { periodPx: 14.81, periodNm: 0.7405, angleDeg: 30, uncertaintyPx: 0.1, uncertaintyNm: 0.0159, strength: 20 },
      { periodPx: 8.859, periodNm: 0.44295, angleDeg: 120, uncertaintyPx: 0.05, uncertaintyNm: 0.0095, strength: 8 },
    ],
  };
  const v2 = {
    file: 'tactoid-c.tif', widthPx: 512, heightPx: 512, calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02, detail: 'typed' }, coverageFactorK: 2,
    periodicities: [{ periodPx: 25, angleDeg: 12, geometry: 'normal', u: { statisticalPx: 0.1, localVariationPx: 0, methodPx: 0 }, uAngleDeg: 0.2, strength: 30, flags: [], budget: { periodNm: 1.25, uCombinedNm: 0.026, coverageFactorK: 2, expandedUncertaintyNm: 0.052 } }],
  };
  const sheets = {
    file: 'tactoid-b.tif', calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02 },
    sheets: [{ layers: 10, thicknessNm: 7.4, periodNm: 0.74 }, { layers: 12, thicknessNm: 8.9, periodNm: 0.7425 }],
    stats: { n: 2, thicknessNm: { mean: 8.15, sd: 1.06, median: 8.15 } },
  };
  return [
    { name: 'fringes.json', bytes: enc.encode(JSON.stringify(measure, null, 1)) },
    { name: 'fringes-v2.json', bytes: enc.encode(JSON.stringify(v2, null, 1)) },
    { name: 'sheets.json', bytes: enc.encode(JSON.stringify(sheets, null, 1)) },
  ];
}

const sha256 = (b: Uint8Array) => createHash('sha256').update(b).digest('hex');
const b64 = (b: Uint8Array) => Buffer.from(b).toString('base64');

/** The parts of a valid library export, as plain data, for seeds and corrupt classes. */
export function libraryExport(): Record<string, unknown> & { images: Record<string, unknown>[]; measurements: Record<string, unknown>[]; calibrations: Record<string, unknown>[]; recipes: Record<string, unknown>[]; diffraction: Record<string, unknown>[] } {
  const w = 16;
  const data = Uint16Array.from({ length: w * w }, (_, i) => 100 + ((50 * Math.cos(i / 2)) | 0) + 50);
  const file = encodeTiff({ width: w, height: w, data });
  const grey = Uint8Array.from({ length: 16 }, (_, i) => i * 16);
  const calibration = { nmPerPx: 0.1, source: 'manual', relUncertainty: 0.02, detail: 'typed in' };
  return {
    format: 'stratameter-library',
    formatVersion: 2,
    schemaVersion: 5,
    exportedIso: '2026-01-05T10:00:00.000Z',
    images: [{ id: 'img-1', fileName: 'film <b>"07"</b>.tif', addedIso: '2026-01-05T10:00:00.000Z', mimeType: 'image/tiff', byteSize: file.length, sha256Hex: sha256(file), width: w, height: w, bitDepth: 16, sampleKind: 'uint', calibration, fileBase64: b64(file), thumbnail: { width: 4, height: 4, greyBase64: b64(grey) } }],
    measurements: [{
      recordVersion: 2, id: 'm1', imageId: 'img-1', fileName: 'film.tif', createdIso: '2026-01-05T10:00:00Z', tool: 'spectrum',
      region: { kind: 'rect', x: 0, y: 0, width: 16, height: 16 }, calibration, settings: { window: 'hann' },
      periodicities: [{ periodPx: 4, angleDeg: 0, geometry: 'normal', u: { statisticalPx: 0.1, localVariationPx: 0, methodPx: 0 }, uAngleDeg: 0, strength: 9, flags: [] }],
      detail: {}, notes: [],
    }],
    calibrations: [{ id: 'p1', name: 'TEM 1, 80 kx', instrument: 'TEM 1', magnification: 80000, camera: 'CMOS', binning: 1, nmPerPx: 0.0198, relUncertainty: 0.012, method: 'standard', createdIso: '2026-01-01T00:00:00Z' }],
    diffraction: [{ id: 'd1', name: 'film XRD', createdIso: '2026-01-02T00:00:00Z', patternText: '5.0 100\n5.1 120\n5.2 110\n', peaks: null, wavelengthNm: 0.154059292, results: null }],
    recipes: [{ id: 'r1', name: 'basal fringes', version: 1, json: '{"schemaVersion":1,"name":"basal fringes"}' }],
    batches: [],
    batchFiles: [],
  };
}

/** Library-export seeds. */
export function librarySeeds(): Seed[] {
  return [{ name: 'library.json', bytes: enc.encode(JSON.stringify(libraryExport())) }];
}

/** Batch-state seeds: a state with two finished files. */
export function stateSeeds(): Seed[] {
  const h = (s: string) => createHash('sha256').update(s).digest('hex');
  const state = {
    schemaVersion: 1,
    entries: {
      'a.tif': { sha256: h('a'), recipeHash: h('r'), status: 'ok', recordFile: 'records/a.tif.0.json', finishedIso: '2026-01-01T00:00:00Z' },
      'b c.tif': { sha256: h('b'), recipeHash: h('r'), status: 'failed', recordFile: 'records/b_c.tif~1.json', finishedIso: '2026-01-01T00:00:01Z' },
    },
  };
  return [{ name: 'batch-state.json', bytes: enc.encode(JSON.stringify(state, null, 1)) }];
}

export { sha256, b64 };
