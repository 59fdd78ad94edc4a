/**
 * `stratameter reflections CIF`: lists a structure file's reflections (hkl, d, 2θ at a
 * wavelength, multiplicity, relative intensity).
 */
import { readFile } from 'node:fs/promises';
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { CifError, parseCif, powderReflections } from '../diffraction/cif';
import { sig, tidy } from '../diffraction/format';
import { RadiationError, resolveRadiation } from '../diffraction/radiation';

const usage = `Usage: stratameter reflections CIF [--wavelength W] [--d-min D] [--min-intensity I] [--all] [--json]

Lists the reflections of a structure file: hkl, d, 2θ at the wavelength, multiplicity and the
relative intensity (kinematic: |F|² with the file's atoms, multiplicity and, with a wavelength,
the Lorentz–polarisation factor of an unpolarised beam; strongest = 100). Systematically absent
reflections are left out (--all keeps them, marked).

Options:
  --wavelength W     CuKa1, MoKa1, ..., 0.15406nm, 1.5406A, 154.06pm or 17.0keV (2θ column)
  --d-min D          smallest d in nm (default 0.1)
  --min-intensity I  leave out reflections weaker than I (relative, default 0)
  --all              also list systematically absent reflections
  --json             one JSON object on standard output instead of a table
`;

export const command: CliCommand = {
  name: 'reflections',
  summary: "list a structure file's reflections: hkl, d, 2θ at a wavelength, relative intensity",
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, { values: ['wavelength', 'd-min', 'min-intensity'], booleans: ['all', 'json'] });
    if (positional.length !== 1) throw new UsageError('give exactly one CIF file');
    const path = positional[0];
    let text: string;
    try {
      text = await readFile(path, 'utf8');
    } catch {
      throw new UsageError(`cannot read structure file '${path}'`);
    }
    const dMinText = options.get('d-min');
    const dMin = dMinText === undefined ? 0.1 : Number(dMinText);
    if (!(dMin > 0 && dMin < 100)) throw new UsageError(`--d-min must be a positive number of nm, got '${dMinText}'`);
    const minText = options.get('min-intensity');
    const minI = minText === undefined ? 0 : Number(minText);
    if (!(minI >= 0 && minI <= 100)) throw new UsageError(`--min-intensity must be in [0, 100], got '${minText}'`);
    let lambda: number | undefined;
    let label = 'no wavelength given: no 2θ column';
    const wl = options.get('wavelength');
    if (wl !== undefined) {
      try {
        const r = resolveRadiation([], { wavelength: wl });
        if (!r) throw new UsageError(`--wavelength '${wl}' is not understood`);
        lambda = r.wavelengthNm;
        label = `${r.label} — from ${r.source}`;
      } catch (e) {
        if (e instanceof RadiationError) throw new UsageError(e.message);
        throw e;
      }
    }
    let st;
    try {
      st = parseCif(text, { fileName: path });
    } catch (e) {
      if (e instanceof CifError) throw new UsageError(e.message);
      throw e;
    }
    let refl;
    try {
      refl = powderReflections(st, { dMinNm: dMin, wavelengthNm: lambda, includeAbsent: flags.has('all') });
    } catch (e) {
      if (e instanceof RangeError) throw new UsageError(`${path}: ${e.message}`);
      throw e;
    }
    refl = refl.filter((r) => r.absent || r.intensity >= minI);
    const c = st.cell;
    if (flags.has('json')) {
      io.out(JSON.stringify({
        file: path,
        phase: st.name,
        spaceGroup: st.spaceGroupName,
        cell: { aNm: tidy(c.aNm.value, c.aNm.su), bNm: tidy(c.bNm.value, c.bNm.su), cNm: tidy(c.cNm.value, c.cNm.su), alphaDeg: tidy(c.alphaDeg.value, c.alphaDeg.su), betaDeg: tidy(c.betaDeg.value, c.betaDeg.su), gammaDeg: tidy(c.gammaDeg.value, c.gammaDeg.su) },
        wavelengthNm: lambda === undefined ? null : tidy(lambda),
        radiation: label,
        reflections: refl.map((r) => ({ hkl: r.hkl, dNm: tidy(r.dNm, null, 6), twoThetaDeg: tidy(r.twoThetaDeg, null, 6), multiplicity: r.multiplicity, intensity: tidy(r.intensity, null, 3), absent: r.absent })),
        notes: st.notes,
      }, null, 2) + '\n');
      return 0;
    }
    const out: string[] = [];
    out.push(`${path}: ${st.name}${st.spaceGroupName ? `, ${st.spaceGroupName}` : ''}; a ${sig(c.aNm.value, 6)}, b ${sig(c.bNm.value, 6)}, c ${sig(c.cNm.value, 6)} nm, α ${sig(c.alphaDeg.value, 6)}, β ${sig(c.betaDeg.value, 6)}, γ ${sig(c.gammaDeg.value, 6)}°`);
    out.push(`wavelength: ${label}`);
    out.push(`${refl.length} reflections with d ≥ ${dMin} nm${minI > 0 ? ` and intensity ≥ ${minI}` : ''}`);
    out.push('');
    out.push('   h   k   l      d (nm)    2θ (°)   mult   intensity');
    for (const r of refl) {
      const hkl = r.hkl.map((v) => String(v).padStart(4)).join('');
      out.push(`${hkl}  ${r.dNm.toFixed(5).padStart(10)}  ${r.twoThetaDeg === null ? '     —  ' : r.twoThetaDeg.toFixed(3).padStart(8)}  ${String(r.multiplicity).padStart(5)}   ${r.absent ? 'absent' : r.intensity.toFixed(1).padStart(6)}`);
    }
    for (const n of st.notes) out.push(`note: ${n}`);
    io.out(out.join('\n') + '\n');
    return 0;
  },
};
