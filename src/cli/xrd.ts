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
import { pm, sig, tidy, tidyU } from '../diffraction/format';
import { checkInstrumentProfile } from '../diffraction/instrument';
import { internalStandardFrom } from '../diffraction/internal-standard';
import { describePhaseSize, type PhaseSize } from '../diffraction/phase-size';
import { writeFile } from 'node:fs/promises';
import { spacedHkl, spacedIndex } from '../figure/reflection-index';

const usage = `Usage: stratameter xrd PATTERN [--wavelength W] [--axis 2theta|q-nm|q-A] [--columns X,Y[,S]] [--k K]
                       [--standard PATTERN [--save-instrument OUT.json] | --instrument PROFILE.json
                        | --instrument-fwhm DEG [--correction gaussian|lorentzian]]
                       [--ka2 doublet|none] [--lp powder|film|none [--monochromator DEG]]
                       [--internal-standard si|lab6|cubic:A±U[:F|I|P]] [--json]

Finds and fits the peaks of a diffraction pattern (two or three columns: position, intensity,
optional uncertainty; or a CIF holding a measured powder profile), indexes them (cubic P, I, F; tetragonal P, I; hexagonal P, R; lamellar;
two-phase mixtures) with a zero-shift term, and gives d with its uncertainty budget, the refined
cells with figures of merit, crystallite sizes and Williamson–Hall size and strain.

Options:
  --wavelength W     CuKa1, CuKa, MoKa1, CoKa1, CrKa1, FeKa1, AgKa1, a value such as 0.15406nm,
                     1.5406A, 154.06pm or an energy such as 17.0keV (default: from the file's header;
                     a header and an option that disagree are refused, quoting both)
  --axis A           first column: 2theta (degrees), q-nm (nm⁻¹) or q-A (Å⁻¹) (default: header, else 2theta)
  --columns X,Y[,S]  the columns of position, intensity and its uncertainty, counted from 1
                     (default: from the column names on the header's last line, else 1,2[,3])
  --k K              Scherrer shape factor (default 0.9, shape unknown)
  --standard PATTERN       fit the instrument profile (Caglioti widths) from a line-profile
                           standard (e.g. LaB6, Si) measured on the same instrument
  --save-instrument FILE   keep that profile as JSON, for --instrument later
  --instrument FILE        an instrument profile saved before
  --instrument-fwhm DEG    a constant instrumental FWHM in degrees 2θ instead
  --correction R     with --instrument-fwhm: gaussian (quadratic, default) or lorentzian (linear)
  --ka2 M            doublet: fit Kα2 with each peak (default for a tube's Kα1); none
  --lp G             the Lorentz–polarisation factor fitted across each line of a 2θ pattern, so a
                     broad low-angle line's centre is its Bragg angle: powder (random powder,
                     Bragg–Brentano, default), film (an oriented clay film, Lorentz 1/sin 2θ), or
                     none (transmission or synchrotron data that need none, or already corrected)
  --monochromator DEG  2θ of the monochromator crystal (graphite 002 with Cu Kα: 26.6), for the
                     polarisation term of --lp powder or film (default: none)
  --internal-standard S    a standard mixed into the sample: its certified cell is held and the
                     zero shift (with specimen displacement) is fitted from its lines, its
                     uncertainty containing the fit and the certified cell: si (NIST SRM 640f),
                     lab6 (SRM 660c), or cubic:A±U[:F|I|P] a cubic cell of your own (nm, standard
                     uncertainty). Certified at 22.5 °C: measure near that temperature
  --json             one JSON object on standard output instead of a table

A peak is kept when its fitted area stands above its counting noise at a 1 % false-alarm rate per
pattern and it is distinctly narrower than any amorphous halo it sits on (both stated in the
notes). Every ± printed is 2u; the budget of d contains the fit, the profile shape, the zero shift
(measured from the indexed lines or an allowance) and the wavelength. Scherrer sizes ignore
strain and lose meaning above ~100 nm. Results inform research; they do not replace an
accredited calibration.
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
    pattern = readPatternFile(await read(path, 'pattern'), path, { axis, wavelength: wl, columns: options.get('columns') });
  } catch (e) {
    if (e instanceof PatternReadError) throw new UsageError(/give the columns to read/.test(e.message) ? `${e.message}: --columns X,Y[,S]` : e.message);
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
  const lpText = options.get('lp');
  const LP_NAMES: Record<string, 'powder' | 'oriented-film' | 'none'> = { powder: 'powder', film: 'oriented-film', none: 'none' };
  if (lpText !== undefined && !Object.hasOwn(LP_NAMES, lpText)) throw new UsageError(`--lp must be powder, film or none, got '${lpText}'`);
  const mono = num('monochromator');
  if (mono !== undefined && !(mono > 0 && mono < 180)) throw new UsageError(`--monochromator must be a 2θ in (0, 180) degrees, got '${options.get('monochromator')}'`);
  if (mono !== undefined && lpText === 'none') throw new UsageError('--monochromator has no effect with --lp none');
  const correction = options.get('correction');
  if (correction !== undefined && correction !== 'gaussian' && correction !== 'lorentzian') throw new UsageError(`--correction must be gaussian or lorentzian, got '${correction}'`);
  const opts: AnalyseOptions = {
    k: num('k'),
    minSnr: num('min-snr'),
    ka2: ka2 as 'doublet' | 'none' | undefined,
    lp: { specimen: LP_NAMES[lpText ?? 'powder'], monochromatorTwoThetaDeg: mono ?? null },
    correction: correction as 'gaussian' | 'lorentzian' | undefined,
  };
  const stdText = options.get('internal-standard');
  if (stdText !== undefined) {
    if (pattern.axis !== 'twoTheta') throw new UsageError(`--internal-standard measures a zero shift in 2θ: ${path} is on a q axis`);
    try {
      opts.internalStandard = internalStandardFrom(stdText);
    } catch (e) {
      throw new UsageError(`--internal-standard: ${(e as Error).message}`);
    }
  }
  if (opts.ka2 === 'doublet' && !pattern.ka2Nm) throw new UsageError('--ka2 doublet needs a Kα1 wavelength with a known Kα2 (a preset such as CuKa1, or a header naming both)');
  const inst = num('instrument-fwhm');
  const std = options.get('standard');
  const profilePath = options.get('instrument');
  if ([inst !== undefined, std !== undefined, profilePath !== undefined].filter(Boolean).length > 1) throw new UsageError('give one of --instrument-fwhm, --standard and --instrument');
  if (profilePath !== undefined) {
    let json: unknown;
    try {
      json = JSON.parse(await read(profilePath, 'instrument profile'));
    } catch (e) {
      if (e instanceof UsageError) throw e;
      throw new UsageError(`${profilePath}: not JSON (${(e as Error).message})`);
    }
    try {
      opts.instrument = checkInstrumentProfile(json, profilePath);
    } catch (e) {
      throw new UsageError((e as Error).message);
    }
  }
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
  const save = options.get('save-instrument');
  if (save !== undefined) {
    if (!opts.instrument) throw new UsageError('--save-instrument needs --standard PATTERN');
    await writeFile(save, JSON.stringify(opts.instrument, null, 2) + '\n');
  }
  try {
    return { pattern, analysis: analysePattern(pattern, opts) };
  } catch (e) {
    throw new UsageError((e as Error).message);
  }
}

const K = 2; // coverage factor of the printed ± (the record's default)

/** The JSON shape of `xrd --json`: every number to the digits its uncertainty supports. */
/** A phase's size for the JSON report: numbers to the digits their uncertainty supports (k = 1). */
function sizeJson(ps: PhaseSize | null) {
  if (!ps) return null;
  return {
    sizeNm: tidy(ps.sizeNm, ps.sizeUncNm),
    sizeUncNm: tidyU(ps.sizeUncNm),
    model: ps.model,
    strainTested: ps.strainTested,
    strain: ps.strain === null ? null : tidy(ps.strain, ps.strainUnc),
    strainUnc: tidyU(ps.strainUnc),
    lines: ps.lines,
    leftOutTwoThetaDeg: ps.leftOutTwoThetaDeg,
    reducedChi2: tidy(ps.reducedChi2, null, 3),
    linesDisagree: ps.linesDisagree,
    instrumentRemoved: ps.instrumentRemoved,
    uncertaintyContains: ps.statement,
  };
}

export function xrdReport(path: string, a: PatternAnalysis) {
  return {
    file: path,
    wavelengthNm: tidy(a.wavelengthNm),
    ka2Nm: tidy(a.ka2Nm),
    radiation: a.radiationLabel,
    radiationSource: a.radiationSource,
    lorentzPolarisation: a.lpLabel,
    sizeMethod: a.sizeMethod,
    dUncertainty: `dUncNm is the fit's standard uncertainty; dBudget holds standard uncertainties (k = 1) by source and dCombinedNm their root sum of squares; dCorrectedNm has the measured zero shift removed`,
    peaks: a.peaks.map((p) => ({
      kind: p.kind,
      twoThetaDeg: tidy(p.twoThetaDeg, p.twoThetaUncDeg),
      twoThetaUncDeg: tidyU(p.twoThetaUncDeg),
      dNm: tidy(p.dNm, p.budget.combinedNm),
      dUncNm: tidyU(p.dUncNm),
      dCorrectedNm: tidy(p.dCorrectedNm, p.budget.combinedNm),
      dCombinedNm: tidyU(p.budget.combinedNm),
      dBudget: { statisticalNm: tidyU(p.budget.statisticalNm), methodNm: tidyU(p.budget.methodNm), calibrationNm: tidyU(p.budget.calibrationNm), contains: p.budget.statement },
      qInvNm: tidy(p.qInvNm, p.qUncInvNm),
      qUncInvNm: tidyU(p.qUncInvNm),
      fwhmDeg: tidy(p.fwhmDeg, p.fwhmUncDeg),
      fwhmUncDeg: tidyU(p.fwhmUncDeg),
      fwhmInvNm: tidy(p.fwhmInvNm, p.fwhmUncInvNm),
      sampleFwhmDeg: tidy(p.sampleFwhmDeg, p.fwhmUncDeg),
      intensity: tidy(p.intensity, p.intensityUnc),
      intensityUnc: tidyU(p.intensityUnc),
      area: tidy(p.area, p.areaUnc),
      areaUnc: tidyU(p.areaUnc),
      eta: tidy(p.eta, p.etaUnc),
      asymmetry: tidy(p.asymmetry, null, 3),
      significance: tidy(p.significance, null, 3),
      crystalliteNm: tidy(p.crystalliteNm, p.crystalliteUncNm),
      crystalliteUncNm: tidyU(p.crystalliteUncNm),
      ka2: p.ka2,
      onHalo: p.onHalo,
      reducedChi2: tidy(p.reducedChi2, null, 3),
      atBound: p.atBound,
    })),
    indexing: {
      zeroShiftDeg: tidy(a.indexing.zeroShiftDeg, a.indexing.zeroShiftUncDeg),
      zeroShiftUncDeg: tidyU(a.indexing.zeroShiftUncDeg),
      phases: a.indexing.phases.map((ph, i) => ({
        name: ph.name,
        lattice: ph.kind,
        aNm: tidy(ph.aNm, ph.aUncNm),
        aUncNm: tidyU(ph.aUncNm),
        cNm: tidy(ph.cNm, ph.cUncNm),
        cUncNm: tidyU(ph.cUncNm),
        standard: ph.standard,
        smithSnyderFN: tidy(ph.figureOfMerit.fN, null, 3),
        fN: ph.figureOfMerit.n,
        deWolffMN: tidy(ph.figureOfMerit.mN, null, 3),
        mN: Math.min(20, ph.lines.length),
        lines: ph.lines.map((l) => ({ peak: l.peak, hkl: l.hkl, dObsNm: tidy(l.dObsNm, a.peaks[l.peak].budget.combinedNm), dCalcNm: tidy(l.dCalcNm, ph.cUncNm || ph.aUncNm), deltaTwoThetaDeg: tidy(l.deltaTwoThetaDeg, null, 2) })),
        unexplainedStrong: ph.unexplainedStrong,
        crystalliteSize: sizeJson(a.phaseSizes[i]),
      })),
      unindexed: a.indexing.unindexed,
    },
    series: a.series.map((s) => ({
      kind: s.kind,
      members: s.members.map((m) => ({ index: m.index, dNm: tidy(m.dNm, s.cellUncNm), residual: tidy(m.residual, null, 3) })),
      cellNm: tidy(s.cellNm, s.cellUncNm),
      cellUncNm: tidyU(s.cellUncNm),
      cellMeaning: s.kind === 'lamellar' ? 'lamellar period' : s.kind === 'hexagonal' ? 'a₀ = 2·d₁₀/√3' : 'cubic a',
      missing: s.missing,
    })),
    notes: a.notes,
  };
}

const LATTICE_LABEL: Record<string, string> = { 'cubic-P': 'cubic P', 'cubic-I': 'cubic I', 'cubic-F': 'cubic F', 'tetragonal-P': 'tetragonal P', 'tetragonal-I': 'tetragonal I', 'hexagonal-P': 'hexagonal P', 'hexagonal-R': 'hexagonal R', lamellar: 'lamellar' };

function table(path: string, a: PatternAnalysis): string {
  const lines: string[] = [];
  lines.push(`${path}: ${a.peaks.length} peaks`);
  lines.push(`wavelength: ${a.radiationLabel} — from ${a.radiationSource}`);
  lines.push(`Lorentz–polarisation factor across each line: ${a.lpLabel}`);
  lines.push(`d ± U: U = ${K}u, u combining the fit, the profile shape, the zero shift (${a.indexing.zeroShiftDeg !== null ? 'measured and removed' : 'not measured: an allowance'}) and the wavelength`);
  lines.push('');
  lines.push('   2θ (°)              d (nm)                 FWHM (°)   height   size (nm)   hkl');
  const hklOf = new Map<number, string>();
  a.indexing.phases.forEach((ph, j) => ph.lines.forEach((l) => { if (!hklOf.has(l.peak)) hklOf.set(l.peak, `${a.indexing.phases.length > 1 ? `${j + 1}: ` : ''}${spacedHkl(l.hkl)}`); }));
  a.peaks.forEach((p, i) => {
    const tt = p.twoThetaDeg === null ? '—' : pm(p.twoThetaDeg, p.twoThetaUncDeg);
    const d = pm(p.dCorrectedNm, K * p.budget.combinedNm);
    const fw = p.fwhmDeg === null ? '—' : sig(p.fwhmDeg, 3);
    const sz = p.kind === 'band' ? '(hk) band' : p.crystalliteNm === null ? '—' : pm(p.crystalliteNm, K * (p.crystalliteUncNm ?? 0));
    lines.push(`${tt.padEnd(20)} ${d.padEnd(22)} ${fw.padStart(8)}  ${sig(p.intensity, 3).padStart(7)}   ${sz.padEnd(11)} ${hklOf.get(i) ?? ''}${p.atBound.length ? '  (at bound: ' + p.atBound.join(', ') + ')' : ''}`);
  });
  lines.push('');
  if (a.indexing.phases.length === 0) lines.push('Indexing: no lattice explains the strong lines.');
  a.indexing.phases.forEach((ph, j) => {
    const cell = ph.kind === 'lamellar' ? `period ${pm(ph.cNm, K * ph.cUncNm)} nm` : ph.kind.startsWith('cubic') ? `a = ${pm(ph.aNm, K * ph.aUncNm)} nm` : `a = ${pm(ph.aNm, K * ph.aUncNm)} nm, c = ${pm(ph.cNm, K * ph.cUncNm)} nm`;
    const fom = ph.figureOfMerit;
    lines.push(`Phase ${j + 1}${ph.standard ? ` (internal standard ${ph.name})` : ''}: ${LATTICE_LABEL[ph.kind]}, ${cell} (± ${K}u); ${ph.lines.length} lines; F${fom.n} = ${sig(fom.fN, 3)} (Smith–Snyder), M${Math.min(20, ph.lines.length)} = ${sig(fom.mN, 3)} (de Wolff)`);
    const ps = a.phaseSizes[j];
    if (ps) lines.push(`  ${describePhaseSize(ps, K)}`);
  });
  if (a.indexing.zeroShiftDeg !== null) {
    const st = a.indexing.phases.find((p) => p.standard);
    const contains = st ? `contains the fit of the standard's ${st.lines.length} lines and its certified cell` : 'contains the fit of the indexed lines';
    lines.push(`Zero shift: ${pm(a.indexing.zeroShiftDeg, K * (a.indexing.zeroShiftUncDeg ?? 0))}° (± ${K}u; ${contains}), removed from the d-spacings`);
  }
  if (a.indexing.unindexed.length) lines.push(`Not indexed: ${a.indexing.unindexed.map((i) => `d ${sig(a.peaks[i].dNm, 5)} nm`).join(', ')}`);
  for (const s of a.series) {
    const what = s.kind === 'lamellar' ? 'period' : s.kind === 'hexagonal' ? 'a₀' : 'a';
    lines.push(`${s.kind} series: ${s.members.map((m) => `${spacedIndex(m.index)} ${sig(m.dNm, 5)}`).join(', ')}; ${what} = ${pm(s.cellNm, K * s.cellUncNm)} nm${s.missing.length ? `; not seen: ${s.missing.map(spacedIndex).join(', ')}` : ''}`);
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
      values: ['wavelength', 'axis', 'columns', 'k', 'instrument-fwhm', 'standard', 'instrument', 'save-instrument', 'correction', 'ka2', 'min-snr', 'internal-standard', 'lp', 'monochromator'],
      booleans: ['json'],
    });
    if (positional.length !== 1) throw new UsageError('give exactly one PATTERN file');
    const { analysis } = await loadAndAnalyse(positional[0], options);
    io.out(flags.has('json') ? JSON.stringify(xrdReport(positional[0], analysis), null, 2) + '\n' : table(positional[0], analysis));
    return 0;
  },
};
