/**
 * `stratameter reconcile --pattern PATTERN MEASUREMENT.json...` (formerly `match`): reconciles periods and sheets measured
 * in micrographs with the peaks of a diffraction pattern, the ring and spot d-spacings of an
 * electron-diffraction measurement (`saed --json`) and optionally a reference phase's CIF.
 */
import { readFile } from 'node:fs/promises';
import { basename } from 'node:path';
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { pm, sig, tidy, tidyU } from '../diffraction/format';
import { loadAndAnalyse } from './xrd';
import { CifError, parseCif, powderReflections } from '../diffraction/cif';
import { ReportError, readMeasurementReport } from '../diffraction/measurement-report';
import { fittedLineLabels } from '../diffraction/line-labels';
import { reconcile, type DiffractionLine, type MicrographPeriod, type SheetStats } from '../diffraction/reconcile';
import { spacedHkl, spacedLineLabel } from '../figure/reflection-index';
import { sizedLines } from '../sheets/xrd-compare';

const usage = `Usage: stratameter reconcile --pattern PATTERN | --saed SAED.json [--cif CIF] MEASUREMENT.json...
                             [--wavelength W] [--z-max Z] [--all-lines] [--json]

Pairs every period measured in the micrographs (the JSON printed by 'stratameter measure --json'
or 'stratameter sheets --json') with the diffraction d-values it can be: the pattern's fitted
peaks, every member of a lamellar, hexagonal or cubic series recognised in it, and, with --cif,
the reflections of a reference phase, and, with --saed, the ring and spot d-spacings of an
electron-diffraction pattern (the JSON printed by 'stratameter saed --camera … --json'). Each pair gets its relative difference and its z =
(period − d)/√(u_period² + u_d²). Sheet thickness is compared with the Scherrer size of the 00l
peaks. When the best pairs agree on one significant common factor, a pixel-size correction is
proposed (never applied).

Options:
  --pattern PATTERN  the diffraction pattern (see 'stratameter xrd --help' for its options:
                     --wavelength, --axis, --k, --instrument-fwhm, --ka2, --min-snr,
                     --internal-standard also apply)
  --saed FILE        add the electron-diffraction d-spacings of 'stratameter saed --json' (each
                     with its standard uncertainty, camera constant included); --pattern may
                     then be left out
  --cif CIF          add a reference phase's reflections (d ≥ 0.1 nm)
  --z-max Z          largest |z| for a pair (default 3)
  --all-lines        list every unmatched line (default: the strong ones, ≥ 10 % of the
                     strongest of their source, each with d and intensity)
  --json             one JSON object on standard output instead of a table
`;

const f = (v: number, d = 4) => (Number.isFinite(v) ? v.toFixed(d) : '—');

/**
 * The d-spacings of an electron-diffraction measurement, as written by `stratameter saed --json`:
 * its `lines` (d and standard uncertainty, nm), with the rings' heights and the spots' intensities.
 * @param text the file's text
 * @param file its name, for the labels and the errors
 * @returns one line per ring and spot, labelled with the file's name
 * @throws UsageError naming the file and what is wrong with it
 */
export function readElectronLines(text: string, file: string): DiffractionLine[] {
  let v: unknown;
  try {
    v = JSON.parse(text);
  } catch {
    throw new UsageError(`--saed ${file}: not JSON (expected the output of 'stratameter saed --camera … --json')`);
  }
  const o = v as { lines?: unknown; rings?: Array<{ height?: unknown }>; spots?: Array<{ intensity?: unknown }>; uncertainties?: unknown; camera?: unknown };
  if (!o || typeof o !== 'object' || !Array.isArray(o.lines)) {
    const why = o && typeof o === 'object' && 'calibration' in o ? 'a camera-constant calibration, not a measurement of a sample' : 'no lines';
    throw new UsageError(`--saed ${file}: ${why} (expected the output of 'stratameter saed --camera … --json')`);
  }
  if (typeof o.uncertainties !== 'string' || !o.uncertainties.startsWith('standard (k = 1)')) throw new UsageError(`--saed ${file}: the uncertainties are not stated as standard (k = 1); not read`);
  const list = o.lines as unknown[];
  if (list.length === 0) throw new UsageError(`--saed ${file}: the measurement has no ring or spot`);
  const base = basename(file);
  const heights = [...(o.rings ?? []).map((r) => r.height), ...(o.spots ?? []).map((s) => s.intensity)];
  return list.map((l, i) => {
    const x = l as { dNm?: unknown; dUncNm?: unknown; label?: unknown };
    if (!(typeof x.dNm === 'number' && x.dNm > 0 && Number.isFinite(x.dNm))) throw new UsageError(`--saed ${file}: line ${i + 1} has d = ${String(x.dNm)}, not a positive number of nm`);
    if (!(typeof x.dUncNm === 'number' && x.dUncNm >= 0 && Number.isFinite(x.dUncNm))) throw new UsageError(`--saed ${file}: line ${i + 1} has an uncertainty of ${String(x.dUncNm)}, not a number ≥ 0`);
    const h = heights.length === list.length ? heights[i] : undefined;
    return { dNm: x.dNm, dUncNm: x.dUncNm, label: `${base} ${typeof x.label === 'string' ? x.label : `line ${i + 1}`}`, phase: base, intensity: typeof h === 'number' && Number.isFinite(h) ? h : undefined };
  });
}

/** A pair for JSON, its numbers to the digits their uncertainty supports. */
function tidyPair<T extends { dNm: number; dUncNm: number; relDiff: number; z: number }>(p: T): T {
  return { ...p, dNm: tidy(p.dNm, p.dUncNm)!, dUncNm: tidyU(p.dUncNm)!, relDiff: tidy(p.relDiff, null, 3)!, z: tidy(p.z, null, 3)! };
}

export const command: CliCommand = {
  name: 'reconcile',
  summary: 'reconcile micrograph periods and sheets with a diffraction pattern',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, {
      values: ['pattern', 'saed', 'cif', 'z-max', 'wavelength', 'axis', 'columns', 'k', 'instrument-fwhm', 'standard', 'instrument', 'correction', 'ka2', 'min-snr', 'internal-standard'],
      booleans: ['json', 'all-lines'],
    });
    const patternPath = options.get('pattern');
    const saedPath = options.get('saed');
    if (!patternPath && !saedPath) throw new UsageError('--pattern PATTERN or --saed SAED.json is required (the diffraction side)');
    if (positional.length === 0) throw new UsageError('give at least one MEASUREMENT.json');
    const zMaxText = options.get('z-max');
    const zMax = zMaxText === undefined ? 3 : Number(zMaxText);
    if (!(zMax > 0)) throw new UsageError(`--z-max must be a positive number, got '${zMaxText}'`);
    const analysis = patternPath ? (await loadAndAnalyse(patternPath, options)).analysis : null;
    if (!patternPath) {
      const only = ['wavelength', 'axis', 'columns', 'k', 'instrument-fwhm', 'standard', 'instrument', 'correction', 'ka2', 'min-snr', 'internal-standard'].filter((o) => options.has(o));
      if (only.length) throw new UsageError(`${only.map((o) => `--${o}`).join(', ')} go${only.length === 1 ? 'es' : ''} with --pattern`);
    }
    const notes: string[] = [];
    const periods: MicrographPeriod[] = [];
    let sheets: SheetStats | null = null;
    const rels = new Set<number>();
    for (const file of positional) {
      let text: string;
      try {
        text = await readFile(file, 'utf8');
      } catch (e) {
        throw new UsageError(`cannot read measurement '${file}': ${(e as NodeJS.ErrnoException).code ?? 'the file cannot be opened'}`);
      }
      let l;
      try {
        l = readMeasurementReport(text, file);
      } catch (e) {
        if (e instanceof ReportError) throw new UsageError(e.message);
        throw e;
      }
      periods.push(...l.periods);
      notes.push(...l.notes);
      if (l.relUncertainty !== null) rels.add(l.relUncertainty);
      if (l.sheets) {
        if (sheets) notes.push(`${file}: a second sheet statistic; only the first is compared`);
        else sheets = l.sheets;
      }
    }
    const series = analysis?.series ?? [];
    const labels = analysis ? fittedLineLabels(analysis) : [];
    const lines: DiffractionLine[] = (analysis?.peaks ?? []).map((p, i) => ({
      dNm: p.dCorrectedNm,
      dUncNm: p.budget.combinedNm,
      label: labels[i]!,
      phase: basename(patternPath!),
      crystalliteNm: p.crystalliteNm,
      intensity: p.intensity,
    }));
    if (saedPath) {
      let text: string;
      try {
        text = await readFile(saedPath, 'utf8');
      } catch (e) {
        throw new UsageError(`cannot read --saed '${saedPath}': ${(e as NodeJS.ErrnoException).code ?? 'the file cannot be opened'}`);
      }
      lines.push(...readElectronLines(text, saedPath));
    }
    const cifPath = options.get('cif');
    if (cifPath) {
      let text: string;
      try {
        text = await readFile(cifPath, 'utf8');
      } catch {
        throw new UsageError(`cannot read CIF '${cifPath}'`);
      }
      let st;
      try {
        st = parseCif(text, { fileName: cifPath });
      } catch (e) {
        if (e instanceof CifError) throw new UsageError(e.message);
        throw e;
      }
      const c = st.cell;
      const relSu = Math.max(c.aNm.su / c.aNm.value, c.bNm.su / c.bNm.value, c.cNm.su / c.cNm.value);
      const phase = st.name || basename(cifPath);
      let reflections;
      try {
        reflections = powderReflections(st, { dMinNm: 0.1, wavelengthNm: analysis?.wavelengthNm ?? undefined });
      } catch (e) {
        if (e instanceof RangeError) throw new UsageError(`${cifPath}: ${e.message}`);
        throw e;
      }
      for (const r of reflections) {
        if (r.intensity < 0.5) continue;
        lines.push({ dNm: r.dNm, dUncNm: r.dNm * relSu, label: `${phase} ${spacedHkl(r.hkl)}`, phase, intensity: r.intensity });
      }
      notes.push(...st.notes.map((n) => `${basename(cifPath)}: ${n}`));
    }
    const calRel = rels.size === 1 ? [...rels][0] : undefined;
    if (rels.size > 1) notes.push('measurements carry different calibration uncertainties: the calibration proposal uses the full uncertainties');
    const basal = analysis ? sizedLines(analysis).find((l) => l.pooled) : undefined;
    const basalSize = basal ? { sizeNm: basal.crystalliteNm!, sizeUncNm: basal.crystalliteUncNm!, periodNm: basal.dNm, label: basal.label! } : null;
    const rec = reconcile({ periods, sheets: sheets ?? undefined, calibrationRelUncertainty: calRel }, { lines, series, basalSize }, { zMax });
    // unmatched lines: the strong ones (≥ 10 % of the strongest line of their source), or all with --all-lines
    const unmatchedSet = new Set(rec.unmatchedLines);
    const unmatched = lines.filter((l) => unmatchedSet.has(l.label));
    const topOf = new Map<string, number>();
    for (const l of lines) topOf.set(l.phase ?? '', Math.max(topOf.get(l.phase ?? '') ?? 0, l.intensity ?? 0));
    const strongUnmatched = flags.has('all-lines') ? unmatched : unmatched.filter((l) => (l.intensity ?? 0) >= 0.1 * (topOf.get(l.phase ?? '') ?? 0));
    if (flags.has('json')) {
      io.out(JSON.stringify({
        pattern: patternPath ?? null,
        saed: saedPath ?? null,
        measurements: positional,
        wavelengthNm: tidy(analysis?.wavelengthNm ?? null),
        radiation: analysis?.radiationLabel ?? null,
        radiationSource: analysis?.radiationSource ?? null,
        periods: periods.map((p) => ({ ...p, periodNm: tidy(p.periodNm, p.uncertaintyNm), uncertaintyNm: tidyU(p.uncertaintyNm) })),
        pairs: rec.pairs.map(tidyPair),
        best: rec.best.map((b) => (b ? tidyPair(b) : null)),
        unmatchedPeriods: rec.unmatchedPeriods.map((i) => ({ ...periods[i], periodNm: tidy(periods[i].periodNm, periods[i].uncertaintyNm), uncertaintyNm: tidyU(periods[i].uncertaintyNm) })),
        unmatchedLines: rec.unmatchedLines,
        unmatchedStrongLines: strongUnmatched.map((l) => ({ label: l.label, dNm: tidy(l.dNm, l.dUncNm), dUncNm: tidyU(l.dUncNm), intensity: tidy(l.intensity ?? null, null, 3), phase: l.phase })),
        series: series.map((s) => ({ kind: s.kind, cellNm: tidy(s.cellNm, s.cellUncNm), cellUncNm: tidyU(s.cellUncNm), members: s.members.map((m) => ({ index: m.index, dNm: tidy(m.dNm, s.cellUncNm) })) })),
        thickness: rec.thickness,
        calibration: rec.calibration,
        notes: [...notes, ...rec.notes],
      }, null, 2) + '\n');
      return 0;
    }
    const out: string[] = [];
    out.push(`${periods.length} micrograph period(s) against ${lines.length} diffraction line(s) from ${[patternPath, saedPath, cifPath].filter(Boolean).join(' and ')}`);
    if (analysis) out.push(`wavelength: ${analysis.radiationLabel} — from ${analysis.radiationSource}`);
    out.push('every ± is the combined standard uncertainty (k = 1) of period and line');
    out.push('');
    out.push('period (nm)          best match                       d (nm)             diff      z');
    periods.forEach((p, i) => {
      const b = rec.best[i];
      const left = pm(p.periodNm, p.uncertaintyNm).padEnd(20);
      if (!b) out.push(`${left} —  (no line within |z| ≤ ${zMax})   ${p.label ?? ''}`);
      else out.push(`${left} ${spacedLineLabel(b.label).padEnd(32)} ${pm(b.dNm, b.dUncNm).padEnd(18)} ${(100 * b.relDiff).toFixed(2).padStart(6)} %  ${b.z.toFixed(2).padStart(5)}   ${p.label ?? ''}`);
      const others = rec.pairs.filter((q) => q.period === i && q !== b);
      if (others.length) out.push(`${''.padEnd(20)} also: ${others.slice(0, 4).map((q) => `${spacedLineLabel(q.label)} (z ${q.z.toFixed(1)})`).join(', ')}`);
    });
    out.push('');
    const hidden = unmatched.length - strongUnmatched.length;
    out.push(`Unmatched ${flags.has('all-lines') ? '' : 'strong '}lines: ${strongUnmatched.length ? '' : 'none'}${hidden > 0 ? `(${hidden} weaker not shown; --all-lines lists them)` : ''}`);
    for (const l of strongUnmatched) out.push(`  ${spacedLineLabel(l.label).padEnd(32)} d ${pm(l.dNm, l.dUncNm).padEnd(22)} intensity ${sig(l.intensity ?? NaN, 3)}`);
    if (rec.thickness) {
      const t = rec.thickness;
      out.push(`Sheets: mean thickness ${f(t.sheetMeanNm, 2)} ± ${f(t.sheetSdNm, 2)} nm (sd); 00l crystallite size ${t.crystalliteUncNm !== null ? `${pm(t.crystalliteNm, 2 * t.crystalliteUncNm)} nm (± 2u)` : `${f(t.crystalliteNm, 1)} nm`}, ${t.crystalliteFrom}` +
        (t.layerPeriodNm ? `; layers: ${f(t.layersFromSheets!, 1)} from sheets, ${f(t.layersFromCrystallite!, 1)} from the crystallite size (period ${f(t.layerPeriodNm, 5)} nm)` : ''));
      out.push(`  ${t.note}`);
    }
    if (rec.calibration) out.push(`Calibration: multiply nm per pixel by ${f(rec.calibration.factor, 4)} ± ${f(rec.calibration.factorUnc, 4)} — ${rec.calibration.reason}`);
    else out.push('Calibration: no correction proposed');
    for (const n of [...notes, ...rec.notes]) out.push(`note: ${n}`);
    io.out(out.join('\n') + '\n');
    return 0;
  },
};
