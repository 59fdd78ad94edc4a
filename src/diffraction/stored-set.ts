/**
 * A diffraction set as the library keeps it, and back: the lines (d ± u, label, crystallite
 * size) and the recognised series that the reconciliation with micrograph periods needs.
 */
import { twoThetaToD } from './bragg';
import type { DiffractionLine, DiffractionSide } from './reconcile';
import type { IndexedSeries } from './series';

/** One diffraction peak as the user or a peak search gives it. */
export interface DiffractionPeak {
  /** Peak position, degrees 2θ. */
  twoThetaDeg: number;
  /** Peak height or area in the pattern's own units (may be 0 when unknown). */
  intensity: number;
}

/** A stored XRD/SAXS pattern or peak list, with what was worked out from it. */
export interface DiffractionSet {
  /** Unique id. */
  id: string;
  /** Name the user gave the set. */
  name: string;
  /** ISO 8601 time the set was stored. */
  createdIso: string;
  /** The pattern as text (two columns, 2θ and counts), or null when only peaks are kept. */
  patternText: string | null;
  /** Peaks, or null when only the pattern text is kept. */
  peaks: DiffractionPeak[] | null;
  /** Radiation wavelength in nm. */
  wavelengthNm: number;
  /** Results (d-spacings, assignments, reconciliation with micrographs), plain JSON. */
  results: Record<string, unknown> | null;
}

/** What a stored set keeps in its `results` (plain JSON). */
export interface StoredSetResults {
  /** Layout version of this object. */
  version: 1;
  /** The pattern's file name, or null for typed peaks. */
  fileName: string | null;
  /** Kα2 wavelength in nm when the pattern had a doublet. */
  ka2Nm: number | null;
  /** The lines as fitted or typed. */
  lines: DiffractionLine[];
  /** Series recognised among them. */
  series: IndexedSeries[];
}

/** Input of `diffractionSetRecord`. */
export interface NewDiffractionSet {
  id: string;
  name: string;
  createdIso: string;
  /** The pattern text (two or three columns), or null for typed peaks. */
  patternText: string | null;
  fileName: string | null;
  /** Radiation wavelength in nm. */
  wavelengthNm: number;
  ka2Nm: number | null;
  /** Peak positions for the record's peak list: 2θ (null for a peak typed as d or q) and intensity. */
  peaks: { twoThetaDeg: number | null; intensity: number | null }[];
  lines: DiffractionLine[];
  series: IndexedSeries[];
}

/**
 * The library record of a diffraction set.
 *
 * @param set the set's pattern, wavelength, lines and series
 * @returns a `DiffractionSet` for `putDiffractionSet`; peaks without a 2θ are left out of the
 *   record's peak list (their d is in `results.lines`)
 * @throws RangeError for a wavelength that is not positive or a line without a positive d
 */
export function diffractionSetRecord(set: NewDiffractionSet): DiffractionSet {
  if (!(set.wavelengthNm > 0 && Number.isFinite(set.wavelengthNm))) throw new RangeError(`wavelengthNm must be a positive number, got ${set.wavelengthNm}`);
  set.lines.forEach((l, i) => {
    if (!(l.dNm > 0 && Number.isFinite(l.dNm))) throw new RangeError(`lines[${i}].dNm must be a positive number, got ${l.dNm}`);
    if (!(l.dUncNm >= 0)) throw new RangeError(`lines[${i}].dUncNm must be ≥ 0, got ${l.dUncNm}`);
  });
  const results: StoredSetResults = { version: 1, fileName: set.fileName, ka2Nm: set.ka2Nm, lines: set.lines, series: set.series };
  return {
    id: set.id,
    name: set.name,
    createdIso: set.createdIso,
    patternText: set.patternText,
    peaks: set.peaks.flatMap((p) => (p.twoThetaDeg === null ? [] : [{ twoThetaDeg: p.twoThetaDeg, intensity: p.intensity ?? 0 }])),
    wavelengthNm: set.wavelengthNm,
    results: results as unknown as Record<string, unknown>,
  };
}

/**
 * The diffraction side of a reconciliation from a stored set.
 *
 * @param set a library record
 * @returns its lines and series: from `results` when the set was stored with them, else from
 *   the peak list by Bragg's law at the set's wavelength (then without uncertainty, labelled by 2θ)
 */
export function diffractionSideOfSet(set: DiffractionSet): DiffractionSide {
  const r = set.results as Partial<StoredSetResults> | null;
  if (r && r.version === 1 && Array.isArray(r.lines)) return { lines: r.lines, series: Array.isArray(r.series) ? r.series : [] };
  const lines: DiffractionLine[] = (set.peaks ?? [])
    .filter((p) => p.twoThetaDeg > 0 && p.twoThetaDeg < 180)
    .map((p) => ({ dNm: twoThetaToD(p.twoThetaDeg, set.wavelengthNm), dUncNm: 0, label: `2θ ${p.twoThetaDeg.toFixed(3)}°`, intensity: p.intensity }));
  return { lines, series: [] };
}
