/**
 * `stratameter xrd PATTERN`: peaks, d-spacings, crystallite sizes and reflection series of a
 * powder XRD or small-angle pattern.
 */
import { readFile } from 'node:fs/promises';
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { analysePattern, instrumentFromStandard, type AnalyseOptions, type PatternAnalysis } from '../diffraction/analyse';
import type { AxisUnit, Pattern } from '../diffraction/pattern';
import { PatternReadError, readPatternFile } from '../diffraction/read-pattern';

const usage = `Usage: stratameter xrd PATTERN [--wavelength W] [--axis 2theta|q-nm|q-A] [--k K]
                       [--instrument-fwhm DEG | --standard PATTERN] [--correction gaussian|lorentzian]
                       [--ka2 doublet|none] [--min-snr S] [--json]

Finds and fits the peaks of a diffraction pattern (two or three columns: position, intensity,
optional uncertainty), gives d, q, FWHM, area and height with their fit uncertainties, the
Scherrer crystallite size of each peak, and the lamellar, 2D-hexagonal or cubic series found.

Options:
  --wavelength W     CuKa1, CuKa, MoKa1, CoKa1, CrKa1, AgKa1, or a value such as 0.15406nm or
                     1.5406A (default: from the file's header; required for 2θ data without one)
  --axis A           first column: 2theta (degrees), q-nm (nm⁻¹) or q-A (Å⁻¹) (default: header, else 2theta)
  --k K              Scherrer shape factor (default 0.9, shape unknown)
  --instrument-fwhm DEG   instrumental FWHM in degrees 2θ to remove (default 0)
  --standard PATTERN      measure the instrumental FWHM from a line-broadening standard's pattern
  --correction R     gaussian (quadratic, default) or lorentzian (linear) subtraction
  --ka2 M            doublet: fit Kα2 with each peak (default when the wavelength is a Kα1 line); none
  --min-snr S        peak detection threshold over the noise (default 4)
  --json             one JSON object on standard output instead of a table

Background: SNIP (Ryan et al. 1988); search on a Savitzky–Golay smooth; pseudo-Voigt fits by
Levenberg–Marquardt. Uncertainties are statistical (fit) only. Scherrer sizes ignore strain and
lose meaning above ~100 nm.
`;

const AXES: Record<string, AxisUnit> = { '2theta': 'twoThetaDeg', 'q-nm': 'qInvNm', 'q-a': 'qInvA' };

/** Options shared by xrd and match: reads the pattern and runs the analysis. */
export async function loadAndAnalyse(path: string, options: Map<string, string>): Promise<{ pattern: Pattern; analysis: PatternAnalysis }> {
  const read = async (p: string, what: string) => {
    try {
      return await readFile(p, 'utf8');
    } catch {
      throw new UsageError(`cannot read ${what} '${p}'`);
    }
  };
  const axisText = options.get('axis');
  const axis = axisText === undefined ? undefined : AXES[axisText.toLowerCase()];
  if (axisText !== undefined && !axis) throw new UsageError(`--axis must be 2theta, q-nm or q-A, got '${axisText}'`);
  const wl = options.get('wavelength');
  let pattern: Pattern;
  try {
    pattern = readPatternFile(await read(path, 'pattern'), path, { axis, wavelength: wl });
  } catch (e) {
    if (e instanceof PatternReadError) throw new UsageError(e.message);
    throw e;
  }
  if (pattern.axis === 'twoTheta' && pattern.wavelengthNm === null) {
    throw new UsageError(`${path}: no wavelength in the header; give --wavelength (e.g. CuKa1)`);
  }
  const num = (name: string) => {
    const v = options.get(name);
    if (v === undefined) return undefined;
    const n = Number(v);
    if (!Number.isFinite(n)) throw new UsageError(`--${name} must be a number, got '${v}'`);
    return n;
  };
  const ka2 = options.get('ka2');
  if (ka2 !== undefined && ka2 !== 'doublet' && ka2 !== 'none') throw new UsageError(`--ka2 must be doublet or none, got '${ka2}'`);
  const correction = options.get('correction');
  if (correction !== undefined && correction !== 'gaussian' && correction !== 'lorentzian') throw new UsageError(`--correction must be gaussian or lorentzian, got '${correction}'`);
  const opts: AnalyseOptions = {
    k: num('k'),
    minSnr: num('min-snr'),
    ka2: ka2 as 'doublet' | 'none' | undefined,
    correction: correction as 'gaussian' | 'lorentzian' | undefined,
  };
  if (opts.ka2 === 'doublet' && !pattern.ka2Nm) throw new UsageError('--ka2 doublet needs a Kα1 wavelength with a known Kα2 (a preset such as CuKa1, or a header naming both)');
  const inst = num('instrument-fwhm');
  const std = options.get('standard');
  if (inst !== undefined && std !== undefined) throw new UsageError('give --instrument-fwhm or --standard, not both');
  if (inst !== undefined) opts.instrumentFwhmDeg = inst;
  if (std !== undefined) {
    let sp: Pattern;
    try {
      sp = readPatternFile(await read(std, 'standard pattern'), std, { axis, wavelength: wl ?? (pattern.wavelengthNm ? `${pattern.wavelengthNm}nm` : undefined), ka2Nm: pattern.ka2Nm ?? undefined });
    } catch (e) {
      if (e instanceof PatternReadError) throw new UsageError(e.message);
      throw e;
    }
    try {
      opts.instrument = instrumentFromStandard(sp, std);
    } catch (e) {
      throw new UsageError((e as Error).message);
    }
  }
  try {
    return { pattern, analysis: analysePattern(pattern, opts) };
  } catch (e) {
    throw new UsageError((e as Error).message);
  }
}

const r = (v: number | null | undefined, digits: number) => (v === null || v === undefined || !Number.isFinite(v) ? null : Number(v.toPrecision(digits)));

/** The JSON shape of `xrd --json`. */
export function xrdReport(path: string, a: PatternAnalysis) {
  return {
    file: path,
    wavelengthNm: a.wavelengthNm,
    ka2Nm: a.ka2Nm,
    sizeMethod: a.sizeMethod,
    peaks: a.peaks.map((p) => ({
      twoThetaDeg: r(p.twoThetaDeg, 7),
      twoThetaUncDeg: r(p.twoThetaUncDeg, 3),
      dNm: r(p.dNm, 7),
      dUncNm: r(p.dUncNm, 3),
      qInvNm: r(p.qInvNm, 7),
      qUncInvNm: r(p.qUncInvNm, 3),
      fwhmDeg: r(p.fwhmDeg, 5),
      fwhmUncDeg: r(p.fwhmUncDeg, 3),
      fwhmInvNm: r(p.fwhmInvNm, 5),
      intensity: r(p.intensity, 5),
      intensityUnc: r(p.intensityUnc, 3),
      area: r(p.area, 5),
      areaUnc: r(p.areaUnc, 3),
      eta: r(p.eta, 3),
      crystalliteNm: r(p.crystalliteNm, 4),
      crystalliteUncNm: r(p.crystalliteUncNm, 3),
      ka2: p.ka2,
      reducedChi2: r(p.reducedChi2, 3),
      atBound: p.atBound,
    })),
    series: a.series.map((s) => ({
      kind: s.kind,
      members: s.members.map((m) => ({ index: m.index, dNm: r(m.dNm, 7), residual: r(m.residual, 3) })),
      cellNm: r(s.cellNm, 7),
      cellUncNm: r(s.cellUncNm, 3),
      cellMeaning: s.kind === 'lamellar' ? 'lamellar period' : s.kind === 'hexagonal' ? 'a₀ = 2·d₁₀/√3' : 'cubic a',
      missing: s.missing,
    })),
    notes: a.notes,
  };
}

function table(path: string, a: PatternAnalysis): string {
  const lines: string[] = [];
  lines.push(`${path}: ${a.peaks.length} peaks; wavelength ${a.wavelengthNm ?? '—'} nm${a.ka2Nm ? ` (Kα2 ${a.ka2Nm} nm fitted as a doublet)` : ''}`);
  lines.push('');
  lines.push('   2θ (°)        d (nm)            q (nm⁻¹)   FWHM (°)   height     size (nm)');
  for (const p of [...a.peaks].sort((x, y) => y.dNm - x.dNm)) {
    const tt = p.twoThetaDeg === null ? '       —      ' : `${p.twoThetaDeg.toFixed(4).padStart(8)} ±${(p.twoThetaUncDeg ?? 0).toFixed(4)}`;
    const d = `${p.dNm.toFixed(5).padStart(8)} ±${p.dUncNm.toFixed(5)}`;
    const fw = p.fwhmDeg === null ? '    —   ' : p.fwhmDeg.toFixed(4).padStart(8);
    const sz = p.crystalliteNm === null ? '   —' : `${p.crystalliteNm.toFixed(1).padStart(6)} ±${(p.crystalliteUncNm ?? 0).toFixed(1)}`;
    lines.push(`${tt}  ${d}  ${p.qInvNm.toFixed(4).padStart(9)}  ${fw}  ${p.intensity.toFixed(0).padStart(8)}  ${sz}${p.atBound.length ? '  (at bound: ' + p.atBound.join(', ') + ')' : ''}`);
  }
  lines.push('');
  if (a.series.length === 0) lines.push('No lamellar, hexagonal or cubic series recognised.');
  for (const s of a.series) {
    const what = s.kind === 'lamellar' ? 'period' : s.kind === 'hexagonal' ? 'a₀' : 'a';
    lines.push(`${s.kind} series: ${s.members.map((m) => `${m.index} ${m.dNm.toFixed(5)}`).join(', ')}; ${what} = ${s.cellNm.toFixed(5)} ± ${s.cellUncNm.toFixed(5)} nm${s.missing.length ? `; not seen: ${s.missing.join(', ')}` : ''}`);
  }
  lines.push(`Sizes: ${a.sizeMethod || '—'}`);
  for (const n of a.notes) lines.push(`note: ${n}`);
  return lines.join('\n') + '\n';
}

export const command: CliCommand = {
  name: 'xrd',
  summary: 'peaks, d-spacings, crystallite sizes and series of a powder XRD or SAXS pattern',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, {
      values: ['wavelength', 'axis', 'k', 'instrument-fwhm', 'standard', 'correction', 'ka2', 'min-snr'],
      booleans: ['json'],
    });
    if (positional.length !== 1) throw new UsageError('give exactly one PATTERN file');
    const { analysis } = await loadAndAnalyse(positional[0], options);
    io.out(flags.has('json') ? JSON.stringify(xrdReport(positional[0], analysis), null, 2) + '\n' : table(positional[0], analysis));
    return 0;
  },
};
