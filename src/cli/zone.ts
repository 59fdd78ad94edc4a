/**
 * `stratameter zone`: indexes the spots of a power spectrum or an electron diffraction pattern
 * with a structure (a structure file or a built-in phase): each spot's hkl, the zone axis, the
 * residuals, and the candidate zone axes ranked.
 */
import { readFile } from 'node:fs/promises';
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { CifError, parseCif } from '../diffraction/cif';
import { pm, sig, tidy, tidyU } from '../diffraction/format';
import { ReportError, readMeasurementReport } from '../diffraction/measurement-report';
import { BUILT_IN_PHASES, indexSpots, zonePhaseFromLattice, zonePhaseFromStructure, type ZonePhase, type ZoneSpot } from '../diffraction/zone-axis';

const usage = `Usage: stratameter zone (--cif CIF | --phase NAME) (MEASUREMENT.json... | --spots LIST)
                        [--d-tolerance F] [--angle-tolerance DEG] [--json]

Gives each measured spot its hkl and finds the zone axis [uvw] from the spots' d-spacings and the
angles between them, with the residuals in d and in angle; when several zone axes fit, they are
ranked (spots explained, then χ², then the lowest index). Spots come from 'stratameter measure
--json' reports (calibrated periods with their directions) or are typed.

Options:
  --cif CIF              the structure (absences and intensities from its atoms and symmetry)
  --phase NAME           a built-in phase: ${BUILT_IN_PHASES.map((p) => p.name).join(', ')}
  --spots LIST           spots as 'd,angle' pairs in nm and degrees, separated by ';'
                         (e.g. '0.3135,0; 0.3135,70.5; 0.192,35.3'); d ± 0.5 % unless 'd±u,angle'
  --d-tolerance F        relative d tolerance on top of 3σ (default 0.02: calibration within ~1 %)
  --angle-tolerance DEG  largest angle residual (default 4)
  --json                 one JSON object on standard output instead of a table

Residuals are measured − calculated; every ± is a standard uncertainty (k = 1). Results inform
research; they do not replace an accredited calibration.
`;

function parseSpots(text: string): ZoneSpot[] {
  return text.split(';').map((s) => s.trim()).filter(Boolean).map((s, i) => {
    const m = /^([0-9.eE+-]+)(?:\s*(?:±|\+-)\s*([0-9.eE+-]+))?\s*,\s*([0-9.eE+-]+)$/.exec(s);
    if (!m) throw new UsageError(`--spots: spot ${i + 1} '${s}' is not 'd,angle' (nm, degrees)`);
    const d = Number(m[1]);
    const u = m[2] !== undefined ? Number(m[2]) : 0.005 * d;
    const a = Number(m[3]);
    if (!(d > 0 && d < 100) || !(u >= 0) || !Number.isFinite(a)) throw new UsageError(`--spots: spot ${i + 1} '${s}' has a bad number`);
    return { dNm: d, dUncNm: u, angleDeg: a };
  });
}

export const command: CliCommand = {
  name: 'zone',
  summary: 'index spots of a power spectrum or electron diffraction pattern with a structure: hkl and zone axis',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, { values: ['cif', 'phase', 'spots', 'd-tolerance', 'angle-tolerance'], booleans: ['json'] });
    const cifPath = options.get('cif');
    const phaseName = options.get('phase');
    if ((cifPath === undefined) === (phaseName === undefined)) throw new UsageError('give either --cif CIF or --phase NAME');
    let phase: ZonePhase;
    let source: string;
    if (cifPath !== undefined) {
      let text: string;
      try {
        text = await readFile(cifPath, 'utf8');
      } catch {
        throw new UsageError(`cannot read structure file '${cifPath}'`);
      }
      try {
        phase = zonePhaseFromStructure(parseCif(text, { fileName: cifPath }), 0.08);
      } catch (e) {
        if (e instanceof CifError || e instanceof RangeError) throw new UsageError(`${cifPath}: ${e.message}`);
        throw e;
      }
      source = cifPath;
    } else {
      const b = BUILT_IN_PHASES.find((p) => p.name.toLowerCase() === phaseName!.toLowerCase());
      if (!b) throw new UsageError(`--phase '${phaseName}' is not built in; choose ${BUILT_IN_PHASES.map((p) => p.name).join(', ')} or give --cif`);
      phase = zonePhaseFromLattice(b.name, b.cell, 0.06, b.allows);
      source = `built-in ${b.name} (${b.source})`;
    }
    const spots: ZoneSpot[] = [];
    const labels: string[] = [];
    const typed = options.get('spots');
    if (typed !== undefined) {
      for (const s of parseSpots(typed)) {
        spots.push(s);
        labels.push(`typed ${spots.length}`);
      }
    }
    for (const file of positional) {
      let text: string;
      try {
        text = await readFile(file, 'utf8');
      } catch {
        throw new UsageError(`cannot read measurement '${file}'`);
      }
      let rep;
      try {
        rep = readMeasurementReport(text, file);
      } catch (e) {
        if (e instanceof ReportError) throw new UsageError(e.message);
        throw e;
      }
      for (const p of rep.periods) {
        if (p.angleDeg === undefined) continue;
        spots.push({ dNm: p.periodNm, dUncNm: p.uncertaintyNm, angleDeg: p.angleDeg, angleUncDeg: p.angleUncDeg });
        labels.push(p.label ?? file);
      }
    }
    if (spots.length < 2) throw new UsageError(`a zone axis needs at least two spots with a direction, got ${spots.length}`);
    const num = (name: string) => {
      const v = options.get(name);
      if (v === undefined) return undefined;
      const n = Number(v);
      if (!Number.isFinite(n)) throw new UsageError(`--${name} must be a number, got '${v}'`);
      return n;
    };
    let r;
    try {
      r = indexSpots(spots, phase, { dRelTolerance: num('d-tolerance'), angleToleranceDeg: num('angle-tolerance') });
    } catch (e) {
      if (e instanceof RangeError) throw new UsageError(e.message);
      throw e;
    }
    if (flags.has('json')) {
      io.out(JSON.stringify({
        phase: r.phase,
        source,
        spots: spots.map((s, i) => ({ label: labels[i], dNm: tidy(s.dNm, s.dUncNm), dUncNm: tidyU(s.dUncNm), angleDeg: tidy(s.angleDeg, s.angleUncDeg ?? 1) })),
        candidates: r.candidates.map((c) => ({
          uvw: c.uvw,
          mirrored: c.mirrored,
          chi2: tidy(c.chi2, null, 3),
          reducedChi2: tidy(c.reducedChi2, null, 3),
          rmsDResidualNm: tidyU(c.rmsDResidualNm),
          rmsAngleResidualDeg: tidyU(c.rmsAngleResidualDeg),
          assignments: c.assignments.map((a) => ({ spot: a.spot, hkl: a.hkl, dCalcNm: tidy(a.dCalcNm, null, 6), dResidualNm: tidyU(a.dResidualNm), angleResidualDeg: tidy(a.angleResidualDeg, null, 2) })),
          unassigned: c.unassigned,
        })),
        ambiguous: r.ambiguous,
        notes: r.notes,
      }, null, 2) + '\n');
      return 0;
    }
    const out: string[] = [];
    out.push(`${spots.length} spots indexed with ${source}`);
    if (r.candidates.length === 0) out.push('No zone axis explains the spots.');
    r.candidates.forEach((c, n) => {
      out.push('');
      out.push(`${n === 0 ? 'Best' : `Candidate ${n + 1}`}: zone axis [${c.uvw.join(' ')}]${c.mirrored ? ' (image mirrored)' : ''}; ${c.assignments.length}/${spots.length} spots; χ² ${sig(c.chi2, 3)}; rms residual d ${sig(c.rmsDResidualNm, 2)} nm, angle ${sig(c.rmsAngleResidualDeg, 2)}°`);
      if (n > 0) return;
      out.push('   spot                         d measured (nm)       hkl         d calc (nm)   Δd (nm)     Δangle (°)');
      for (const a of c.assignments) {
        const s = spots[a.spot];
        out.push(`   ${labels[a.spot].slice(0, 28).padEnd(28)} ${pm(s.dNm, s.dUncNm).padEnd(21)} ${a.hkl.join(' ').padEnd(11)} ${sig(a.dCalcNm, 5).padEnd(13)} ${sig(a.dResidualNm, 2).padEnd(11)} ${sig(a.angleResidualDeg, 2)}`);
      }
      if (c.unassigned.length) out.push(`   not in this zone: ${c.unassigned.map((i) => labels[i]).join(', ')}`);
    });
    for (const n of r.notes) out.push(`note: ${n}`);
    io.out(out.join('\n') + '\n');
    return 0;
  },
};
