/**
 * `stratameter saed PATTERN`: electron diffraction. With --standard, the camera constant of the
 * setting from a polycrystalline standard's rings (and the projector distortion); with --camera,
 * the ring and spot d-spacings of a sample's pattern, and the angles between spots.
 */
import { readFile, writeFile } from 'node:fs/promises';
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { openImageFile } from './open-image';
import { calibrateCameraConstant, type CameraConstant } from '../diffraction/electron/camera-constant';
import type { RingAnalysis } from '../diffraction/electron/rings';
import { electronDiffractionSet, measureElectronPattern, type CameraSetting, type PatternMeasurement } from '../diffraction/electron/measure';
import { RING_STANDARDS, ringStandard, userRingStandard, type RingStandard } from '../diffraction/electron/standards';
import { electronWavelengthForKv, VOLTAGE_RANGE_KV } from '../diffraction/electron/wavelength';
import { spacedHkl } from '../figure/reflection-index';

const usage = `Usage: stratameter saed PATTERN --standard ID|cubic:A±U[:F|I|P] [--kv V] [--detector-pixel-um P]
                          [--save-camera FILE] [--json]
       stratameter saed PATTERN --camera FILE | --camera-constant K±U  [--rings | --spots] [--kv V] [--json]
       stratameter saed --list-standards

Electron diffraction patterns (selected-area rings and spots).

Calibrate (--standard): finds the pattern centre from its Friedel symmetry (a beam stop is
masked), follows every ring around the pattern and fits them as concentric ellipses of one shape
(the projector lenses' distortion), indexes the rings against the standard and reports the camera
constant K (1/d = K·R, reciprocal nm per px) with its uncertainty, λL = 1/K, the camera length for
a stated voltage, and the ellipticity. --save-camera writes the setting to a file for --camera.

Measure (--camera): ring d-spacings from the elliptically corrected azimuthal average, spot
d-spacings (Friedel pairs: half the distance between mates) and the angles between spots.

Options:
  --standard ID          a built-in ring standard (au, al; see --list-standards), or
                         cubic:A±U[:F|I|P] a cubic cell of your own (nm, default centring F)
  --kv V                 accelerating voltage, kV (${VOLTAGE_RANGE_KV[0]}–${VOLTAGE_RANGE_KV[1]}): the wavelength and camera length
  --detector-pixel-um P  detector pixel size, µm: the camera length in mm
  --save-camera FILE     write the calibrated setting (K, its uncertainty, the distortion) as JSON
  --camera FILE          a setting saved by --save-camera
  --camera-constant K±U  a camera constant typed (nm⁻¹ per px, standard uncertainty); no distortion
  --rings | --spots      measure only rings, or only spots (default: both)
  --json                 one JSON object on standard output instead of text
  --list-standards       print the built-in ring standards and exit

Every ± is an expanded uncertainty U = 2u (k = 2) and says what it contains. Directions are
degrees counter-clockwise from +x as the image is shown (x right, y up). The values inform
research; they do not replace an accredited calibration.
`;

/** The file --save-camera writes and --camera reads. */
export interface CameraFile {
  kind: 'stratameter-camera-constant';
  version: 1;
  kInvNmPerPx: number;
  relUncertainty: number;
  distortion: { e1: number; e2: number };
  ellipticity: number;
  majorAxisDeg: number;
  voltageKv: number | null;
  detail: string;
}

const NUM = '([0-9]*\\.?[0-9]+(?:[eE][-+]?\\d+)?)';
const PM = '\\s*(?:±|\\+-|\\+\\/-)\\s*';

/** Parses "cubic:A±U[:F|I|P]" or a built-in id. */
export function parseRingStandard(text: string): RingStandard {
  const m = new RegExp(`^cubic:${NUM}${PM}${NUM}(?::([FIP]))?$`).exec(text.trim());
  if (m) {
    const c = (m[3] ?? 'F') as 'F' | 'I' | 'P';
    try {
      return userRingStandard(Number(m[1]), Number(m[2]), c);
    } catch (e) {
      throw new UsageError(`--standard ${text}: ${(e as Error).message}`);
    }
  }
  if (text.startsWith('cubic')) throw new UsageError(`--standard cubic must be cubic:A±U or cubic:A±U:F|I|P (nm), e.g. cubic:0.4078±0.0004:F, got '${text}'`);
  try {
    return ringStandard(text);
  } catch (e) {
    throw new UsageError((e as Error).message);
  }
}

/** Parses "K±U" (nm⁻¹ per px and its standard uncertainty). */
export function parseCameraConstant(text: string): CameraSetting {
  const m = new RegExp(`^\\s*${NUM}${PM}${NUM}\\s*$`).exec(text);
  if (!m || !(Number(m[1]) > 0)) throw new UsageError(`--camera-constant must be K±U in nm⁻¹ per px with its standard uncertainty, e.g. 0.0512±0.0001, got '${text}'`);
  const k = Number(m[1]);
  const rel = Number(m[2]) / k;
  if (!(rel < 1)) throw new UsageError(`--camera-constant: the uncertainty ${m[2]} is not smaller than the constant ${m[1]}`);
  return { kInvNmPerPx: k, relUncertainty: rel, distortion: { e1: 0, e2: 0 }, detail: `typed: K = ${m[1]} ± ${m[2]} nm⁻¹/px (standard uncertainty), no distortion correction` };
}

/** Reads a camera file, naming what is wrong with it. */
export function parseCameraFile(text: string, file: string): CameraFile {
  let v: unknown;
  try {
    v = JSON.parse(text);
  } catch {
    throw new UsageError(`${file}: not JSON (expected a file written by 'stratameter saed --save-camera')`);
  }
  const c = v as Partial<CameraFile>;
  if (!c || typeof c !== 'object' || c.kind !== 'stratameter-camera-constant') throw new UsageError(`${file}: not a camera-constant file (written by 'stratameter saed --save-camera')`);
  if (c.version !== 1) throw new UsageError(`${file}: camera-constant file version ${String(c.version)} is not known (expected 1)`);
  if (!(typeof c.kInvNmPerPx === 'number' && c.kInvNmPerPx > 0 && Number.isFinite(c.kInvNmPerPx))) throw new UsageError(`${file}: kInvNmPerPx must be a positive number, got ${String(c.kInvNmPerPx)}`);
  if (!(typeof c.relUncertainty === 'number' && c.relUncertainty >= 0 && c.relUncertainty < 1)) throw new UsageError(`${file}: relUncertainty must be a number in [0, 1), got ${String(c.relUncertainty)}`);
  if (!c.distortion || typeof c.distortion.e1 !== 'number' || typeof c.distortion.e2 !== 'number' || !(Math.hypot(c.distortion.e1, c.distortion.e2) < 0.2)) {
    throw new UsageError(`${file}: distortion must be {e1, e2}, two numbers below 0.2 in size`);
  }
  return c as CameraFile;
}

const pct = (rel: number) => `${Number((100 * rel).toPrecision(2))} %`;
const g6 = (v: number) => Number(v.toPrecision(6)).toString();

/** The calibration as text. */
export function formatCamera(c: CameraConstant & { analysis: RingAnalysis }, file: string): string {
  const L: string[] = [`pattern        ${file}`, `standard       ${c.standard.name}, a = ${c.standard.aNm} ± ${c.standard.uANm} nm (standard uncertainty; ${c.standard.source})`];
  L.push(`camera const.  K = ${g6(c.kInvNmPerPx)} nm⁻¹ per px ± ${pct(2 * c.relUncertainty)} (k = 2; contains ${c.parts.map((p) => `${p.name} ${pct(p.rel)}`).join(', ')}, each k = 1)`);
  L.push(`λL             ${g6(c.lambdaLNmPx)} nm·px ± ${pct(2 * c.relUncertainty)} (k = 2; R·d = λL)`);
  if (c.voltageKv !== null && c.wavelengthNm !== null && c.cameraLengthPx !== null) {
    L.push(`wavelength     ${(c.wavelengthNm * 1000).toFixed(4)} pm at ${c.voltageKv} kV (relativistic; the voltage taken as exact)`);
    L.push(`camera length  ${g6(c.cameraLengthPx)} px${c.cameraLengthMm !== null ? ` = ${c.cameraLengthMm.toFixed(1)} mm` : ''} ± ${pct(2 * c.relUncertainty)} (k = 2)`);
  }
  L.push(`ellipticity    ${(100 * c.ellipticity).toFixed(2)} ± ${(200 * c.uEllipticity).toFixed(2)} % (a/b − 1, k = 2), major axis ${c.majorAxisDeg.toFixed(1)}°`);
  const g = c.analysis.geometry;
  L.push(`centre         x ${g.cx.toFixed(2)} ± ${(2 * c.analysis.uCx).toFixed(2)}, y ${g.cy.toFixed(2)} ± ${(2 * c.analysis.uCy).toFixed(2)} px (k = 2)${c.analysis.maskedPx ? `; ${c.analysis.maskedPx} px masked (beam stop, clipping)` : ''}`);
  L.push('');
  L.push('  hkl     radius (px)   d standard (nm)   K of ring − K');
  for (const r of c.rings) L.push(`  ${spacedHkl(r.hkl).padEnd(6)}  ${r.ring.radiusPx.toFixed(3).padStart(11)}   ${r.dNm.toFixed(5).padStart(15)}   ${(100 * r.relResidual).toFixed(3).padStart(8)} %`);
  if (c.unindexedRadiiPx.length) L.push(`not indexed: rings at ${c.unindexedRadiiPx.map((r) => r.toFixed(1)).join(', ')} px`);
  L.push(`Birge ratio ${c.birgeRatio.toFixed(2)} over ${c.rings.length} rings`);
  for (const n of c.analysis.notes) L.push(`note: ${n}`);
  if (c.standard.source.includes('from memory')) L.push('note: the standard\'s lattice parameter is a value from memory; its allowance is in the uncertainty');
  return `${L.join('\n')}\n`;
}

/** The measurement as text. */
export function formatPattern(m: PatternMeasurement, file: string): string {
  const L: string[] = [`pattern        ${file}`, `camera         ${m.camera.detail}`];
  L.push(`centre         x ${m.geometry.cx.toFixed(2)} ± ${(2 * m.uCx).toFixed(2)}, y ${m.geometry.cy.toFixed(2)} ± ${(2 * m.uCy).toFixed(2)} px (k = 2)`);
  L.push('d ± U: k = 2, contains the radius (or spot positions) and the camera constant');
  if (m.rings.length) {
    L.push('', 'rings  radius (px)        d (nm)      U (nm)   of which camera');
    m.rings.forEach((r, i) => L.push(`  ${String(i + 1).padStart(3)}  ${r.radiusPx.toFixed(3).padStart(11)}  ${r.dNm.toFixed(5).padStart(12)}  ${(2 * r.uDNm).toFixed(5).padStart(10)}  ${(2 * r.uCameraPartNm).toFixed(5).padStart(10)}`));
  }
  if (m.spots.length) {
    L.push('', 'spots   x (px)   y (px)       d (nm)      U (nm)   direction (°)   from');
    m.spots.forEach((s, i) => L.push(`  ${String(i + 1).padStart(3)}  ${s.x.toFixed(2).padStart(7)}  ${s.y.toFixed(2).padStart(7)}  ${s.dNm.toFixed(5).padStart(11)}  ${(2 * s.uDNm).toFixed(5).padStart(10)}  ${(s.directionDeg >= 359.995 ? 0 : s.directionDeg).toFixed(2).padStart(7)} ± ${(2 * s.uDirectionDeg).toFixed(2)}   ${s.fromPair ? 'Friedel pair' : 'one spot'}`));
    if (m.angles.length) {
      L.push('', 'angles between spots (k = 2)');
      for (const a of m.angles) L.push(`  ${a.i + 1}–${a.j + 1}  ${a.angleDeg.toFixed(2)} ± ${(2 * a.uAngleDeg).toFixed(2)}°`);
    }
  }
  for (const n of m.notes) L.push(`note: ${n}`);
  return `${L.join('\n')}\n`;
}

export const command: CliCommand = {
  name: 'saed',
  summary: 'electron diffraction: camera constant from a ring standard; ring and spot d-spacings',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, {
      values: ['standard', 'kv', 'detector-pixel-um', 'save-camera', 'camera', 'camera-constant'],
      booleans: ['json', 'rings', 'spots', 'list-standards'],
    });
    if (flags.has('list-standards')) {
      for (const s of RING_STANDARDS) io.out(`${s.id.padEnd(4)} ${s.name}: a = ${s.aNm} ± ${s.uANm} nm (standard uncertainty; ${s.uncertaintyBasis}); ${s.source}\n`);
      return 0;
    }
    if (positional.length !== 1) throw new UsageError(`expected one PATTERN, got ${positional.length}: see 'stratameter saed --help'`);
    const modes = ['standard', 'camera', 'camera-constant'].filter((o) => options.has(o));
    if (modes.length !== 1) throw new UsageError(modes.length === 0 ? 'give --standard ID to calibrate, or --camera FILE / --camera-constant K±U to measure' : `give one of --standard, --camera, --camera-constant, not ${modes.map((m) => `--${m}`).join(' and ')}`);
    let voltageKv: number | undefined;
    if (options.has('kv')) {
      voltageKv = Number(options.get('kv'));
      try {
        electronWavelengthForKv(voltageKv);
      } catch (e) {
        throw new UsageError(`--kv: ${(e as Error).message.replace(/got NaN$/, `got '${options.get('kv')}'`)}`);
      }
    }
    let pixelUm: number | undefined;
    if (options.has('detector-pixel-um')) {
      pixelUm = Number(options.get('detector-pixel-um'));
      if (!(pixelUm > 0 && Number.isFinite(pixelUm))) throw new UsageError(`--detector-pixel-um must be a positive number, got '${options.get('detector-pixel-um')}'`);
    }
    if (flags.has('rings') && flags.has('spots')) throw new UsageError('give --rings or --spots, not both (neither measures both)');
    const standard = options.has('standard') ? parseRingStandard(options.get('standard')!) : null;
    if (standard && (flags.has('rings') || flags.has('spots'))) throw new UsageError('--rings and --spots go with --camera or --camera-constant (a calibration uses rings)');
    if (!standard && (options.has('save-camera') || options.has('detector-pixel-um'))) throw new UsageError('--save-camera and --detector-pixel-um go with --standard');
    let camera: CameraSetting | null = null;
    let cameraVoltage: number | null = null;
    if (options.has('camera')) {
      const f = options.get('camera')!;
      let text: string;
      try {
        text = await readFile(f, 'utf8');
      } catch (e) {
        throw new UsageError(`--camera ${f}: ${(e as NodeJS.ErrnoException).code === 'ENOENT' ? 'no such file' : (e as Error).message}`);
      }
      const c = parseCameraFile(text, f);
      camera = { kInvNmPerPx: c.kInvNmPerPx, relUncertainty: c.relUncertainty, distortion: c.distortion, detail: c.detail };
      cameraVoltage = c.voltageKv;
    } else if (options.has('camera-constant')) {
      camera = parseCameraConstant(options.get('camera-constant')!);
    }
    const file = positional[0];
    const image = openImageFile(file);
    if (standard) {
      let c: ReturnType<typeof calibrateCameraConstant>;
      try {
        c = calibrateCameraConstant(image, standard, { voltageKv, detectorPixelUm: pixelUm });
      } catch (e) {
        if (e instanceof RangeError) throw new UsageError(`${file}: ${e.message}`);
        throw e;
      }
      const saved: CameraFile = { kind: 'stratameter-camera-constant', version: 1, kInvNmPerPx: c.kInvNmPerPx, relUncertainty: c.relUncertainty, distortion: c.distortion, ellipticity: c.ellipticity, majorAxisDeg: c.majorAxisDeg, voltageKv: voltageKv ?? null, detail: c.detail };
      if (options.has('save-camera')) await writeFile(options.get('save-camera')!, `${JSON.stringify(saved, null, 1)}\n`);
      if (flags.has('json')) {
        const { analysis, ...rest } = c;
        io.out(`${JSON.stringify({ file, uncertainties: 'standard (k = 1)', camera: saved, calibration: rest, centre: { cx: analysis.geometry.cx, cy: analysis.geometry.cy, uCx: analysis.uCx, uCy: analysis.uCy }, notes: analysis.notes })}\n`);
      } else io.out(formatCamera(c, file));
      return 0;
    }
    if (voltageKv !== undefined && cameraVoltage !== null && voltageKv !== cameraVoltage) {
      io.err(`note: the camera was calibrated at ${cameraVoltage} kV and this pattern is said to be at ${voltageKv} kV: K holds for one voltage and camera length only\n`);
    }
    let m: PatternMeasurement;
    try {
      m = measureElectronPattern(image, camera!, { what: flags.has('rings') ? 'rings' : flags.has('spots') ? 'spots' : 'both' });
    } catch (e) {
      if (e instanceof RangeError) throw new UsageError(`${file}: ${e.message}`);
      throw e;
    }
    if (flags.has('json')) {
      const kv = voltageKv ?? cameraVoltage;
      const set = kv !== null ? electronDiffractionSet(m, { id: `saed-${file}`, name: file, createdIso: new Date().toISOString(), fileName: file, voltageKv: kv }) : null;
      const lines = [
        ...m.rings.map((r, i) => ({ dNm: r.dNm, dUncNm: r.uDNm, label: `ring ${i + 1}` })),
        ...m.spots.map((s, i) => ({ dNm: s.dNm, dUncNm: s.uDNm, label: `spot ${i + 1}` })),
      ];
      io.out(`${JSON.stringify({ file, uncertainties: 'standard (k = 1); the text output shows U = 2u', geometry: m.geometry, uCx: m.uCx, uCy: m.uCy, camera: m.camera, rings: m.rings, spots: m.spots, angles: m.angles, lines, record: set, notes: m.notes })}\n`);
    } else io.out(formatPattern(m, file));
    return 0;
  },
};
