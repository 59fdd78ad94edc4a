/**
 * Recognising lamellar, 2D-hexagonal and cubic reflection series among measured d-spacings.
 */

/** Series kinds recognised. */
export type SeriesKind = 'lamellar' | 'hexagonal' | 'Ia3d' | 'Pn3m' | 'Im3m' | 'Fm3m';

/** One expected reflection of a series: its index and N with d = cell / √N (hexagonal: see notes). */
interface Reflection {
  index: string;
  n: number;
}

const LAMELLAR: Reflection[] = Array.from({ length: 12 }, (_, i) => ({ index: `00${i + 1}`, n: (i + 1) ** 2 }));
// 2D hexagonal p6mm: N = h² + hk + k²
const HEXAGONAL: Reflection[] = [
  ['10', 1], ['11', 3], ['20', 4], ['21', 7], ['30', 9], ['22', 12], ['31', 13], ['40', 16],
].map(([index, n]) => ({ index: index as string, n: n as number }));
// cubic: N = h² + k² + l² (Hamley, Small-Angle Scattering (Wiley 2021) Table 1.1)
const cubic = (list: Array<[string, number]>): Reflection[] => list.map(([index, n]) => ({ index, n }));
const SERIES: Record<SeriesKind, Reflection[]> = {
  lamellar: LAMELLAR,
  hexagonal: HEXAGONAL,
  Ia3d: cubic([['211', 6], ['220', 8], ['321', 14], ['400', 16], ['420', 20], ['332', 22], ['422', 24]]),
  Pn3m: cubic([['110', 2], ['111', 3], ['200', 4], ['211', 6], ['220', 8], ['221', 9]]),
  Im3m: cubic([['110', 2], ['200', 4], ['211', 6], ['220', 8], ['310', 10], ['222', 12]]),
  Fm3m: cubic([['111', 3], ['200', 4], ['220', 8], ['311', 11], ['222', 12], ['400', 16]]),
};

/** Options of indexSeries. */
export interface IndexSeriesOptions {
  /** Kinds to try (default all). */
  kinds?: SeriesKind[];
  /** Relative tolerance on d for a match, added to 3σ of the peak (default 0.005). */
  tolerance?: number;
  /** Fewest members for a series to be reported (default lamellar 2, hexagonal 3, cubic 4). */
  minMembers?: number;
  /** Hexagonal and cubic: smallest fraction of the expected reflections in range that must be found (default 0.7). */
  minFraction?: number;
  /** Hexagonal and cubic, when intensities are given: smallest share of the total intensity the members must carry (default 0.5). */
  minIntensityShare?: number;
}

/** A measured d-spacing offered to the indexer. */
export interface SeriesPeak {
  /** d in nm. */
  dNm: number;
  /** Standard uncertainty of d in nm (0 if unknown). */
  dUncNm?: number;
  /** Intensity, used only to break ties between equally long series. */
  intensity?: number;
}

/** One assigned member of a series. */
export interface SeriesMember {
  /** Reflection index (lamellar 00l, hexagonal hk, cubic hkl). */
  index: string;
  /** Index of the peak in the input list. */
  peak: number;
  /** Measured d in nm. */
  dNm: number;
  /** d from the fitted cell in nm. */
  dCalcNm: number;
  /** Relative residual d/dCalc − 1. */
  residual: number;
}

/** A recognised series. */
export interface IndexedSeries {
  kind: SeriesKind;
  members: SeriesMember[];
  /** Cell: lamellar period, hexagonal a₀, or cubic a, in nm (weighted least squares over members). */
  cellNm: number;
  /** Standard uncertainty of cellNm: from the peaks' σ (× the Birge ratio when the members scatter more), or from the scatter when no σ is given. */
  cellUncNm: number;
  /** RMS of the relative residuals. */
  rmsResidual: number;
  /** Expected reflections within the measured d range that were not found. */
  missing: string[];
}

/** d of a reflection from the cell: lamellar and cubic d = cell/√N; hexagonal d = (√3/2)·a/√N. */
function dOf(kind: SeriesKind, cell: number, n: number): number {
  return kind === 'hexagonal' ? ((Math.sqrt(3) / 2) * cell) / Math.sqrt(n) : cell / Math.sqrt(n);
}

/**
 * Looks for reflection series among d-spacings: lamellar (d ratios 1 : 1/2 : 1/3 …), 2D hexagonal
 * p6mm (q ratios 1 : √3 : 2 : √7 : 3 …) and the cubic mesophases Ia3d, Pn3m, Im3m, Fm3m.
 *
 * @param peaks measured d-spacings (any order) with optional uncertainties and intensities
 * @param options kinds, tolerance, minimum members
 * @returns for each kind, the best series (most members, then strongest), by kind order
 *
 * Notes: every peak is tried as the series' first reflection; lamellar series need orders 1 and 2,
 * hexagonal and cubic ones their first three reflections and minFraction of those expected in
 * the measured range (mesophase patterns show nearly all of them; crystalline hk0 rows otherwise
 * mimic cubic ratios), and, when intensities are given, minIntensityShare of the total intensity
 * (a mesophase pattern is dominated by its series). A peak matches when its d lies
 * within 3σ + tolerance·d of the prediction. The cell is the weighted mean of the members'
 * cell values (lamellar L = l·d; hexagonal a₀ = 2·d·√N/√3, so a₀ = 2·d₁₀/√3; cubic a = d·√N).
 * A series is a hypothesis: chance coincidences happen in dense patterns, so check the residuals.
 * Reference: Hamley, Small-Angle Scattering (Wiley 2021) Table 1.1.
 */
export function indexSeries(peaks: SeriesPeak[], options: IndexSeriesOptions = {}): IndexedSeries[] {
  const kinds = options.kinds ?? (Object.keys(SERIES) as SeriesKind[]);
  const tol = options.tolerance ?? 0.005;
  const minFraction = options.minFraction ?? 0.7;
  if (!(minFraction >= 0 && minFraction <= 1)) throw new RangeError(`minFraction must be in [0, 1], got ${minFraction}`);
  if (!(tol > 0 && tol < 0.2)) throw new RangeError(`tolerance must be in (0, 0.2), got ${tol}`);
  for (const k of kinds) if (!SERIES[k]) throw new RangeError(`unknown series kind '${k}'`);
  peaks.forEach((p, i) => {
    if (!(p.dNm > 0)) throw new RangeError(`peak ${i}: dNm must be positive, got ${p.dNm}`);
  });
  if (peaks.length === 0) return [];
  const minShare = options.minIntensityShare ?? 0.5;
  const totalIntensity = peaks.reduce((a, p) => a + Math.max(0, p.intensity ?? 0), 0);
  const dMin = Math.min(...peaks.map((p) => p.dNm)) * (1 - tol);
  const out: IndexedSeries[] = [];
  for (const kind of kinds) {
    const refl = SERIES[kind];
    const minMembers = options.minMembers ?? (kind === 'lamellar' ? 2 : kind === 'hexagonal' ? 3 : 4);
    let best: { s: IndexedSeries; score: number } | null = null;
    for (let first = 0; first < peaks.length; first++) {
      const cell0 = kind === 'hexagonal' ? (peaks[first].dNm * 2 * Math.sqrt(refl[0].n)) / Math.sqrt(3) : peaks[first].dNm * Math.sqrt(refl[0].n);
      const members: SeriesMember[] = [];
      const missing: string[] = [];
      const used = new Set<number>();
      for (const r of refl) {
        const dPred = dOf(kind, cell0, r.n);
        if (dPred < dMin) break;
        let bestJ = -1;
        let bestErr = Infinity;
        peaks.forEach((p, j) => {
          if (used.has(j)) return;
          const err = Math.abs(p.dNm - dPred);
          if (err <= 3 * (p.dUncNm ?? 0) + tol * dPred && err < bestErr) {
            bestErr = err;
            bestJ = j;
          }
        });
        if (bestJ >= 0) {
          used.add(bestJ);
          members.push({ index: r.index, peak: bestJ, dNm: peaks[bestJ].dNm, dCalcNm: dPred, residual: 0 });
        } else missing.push(r.index);
      }
      if (members.length < minMembers) continue;
      const needFirst = kind === 'lamellar' ? 2 : 3;
      if (refl.slice(0, needFirst).some((r, k) => members[k]?.index !== r.index)) continue;
      if (kind !== 'lamellar' && members.length / (members.length + missing.length) < minFraction) continue;
      if (kind !== 'lamellar' && totalIntensity > 0) {
        const share = members.reduce((a, m) => a + (peaks[m.peak].intensity ?? 0), 0) / totalIntensity;
        if (share < minShare) continue;
      }
      // weighted mean cell
      let sw = 0;
      let swc = 0;
      const cells: number[] = [];
      const nOf = (idx: string) => refl.find((r) => r.index === idx)!.n;
      for (const m of members) {
        const n = nOf(m.index);
        const factor = kind === 'hexagonal' ? (2 * Math.sqrt(n)) / Math.sqrt(3) : Math.sqrt(n);
        const c = m.dNm * factor;
        const s = (peaks[m.peak].dUncNm ?? 0) * factor;
        const w = s > 0 ? 1 / (s * s) : 1;
        cells.push(c);
        sw += w;
        swc += w * c;
      }
      const cell = swc / sw;
      const haveSigma = members.every((m) => (peaks[m.peak].dUncNm ?? 0) > 0);
      let cellUnc: number;
      if (haveSigma) cellUnc = 1 / Math.sqrt(sw);
      else {
        const mean = cells.reduce((a, b) => a + b, 0) / cells.length;
        cellUnc = Math.sqrt(cells.reduce((a, c) => a + (c - mean) ** 2, 0) / Math.max(1, cells.length - 1) / cells.length);
      }
      let ss = 0;
      let chi2 = 0;
      members.forEach((m, q) => {
        m.dCalcNm = dOf(kind, cell, nOf(m.index));
        m.residual = m.dNm / m.dCalcNm - 1;
        ss += m.residual ** 2;
        const n = nOf(m.index);
        const factor = kind === 'hexagonal' ? (2 * Math.sqrt(n)) / Math.sqrt(3) : Math.sqrt(n);
        const sc = (peaks[m.peak].dUncNm ?? 0) * factor;
        if (sc > 0) chi2 += ((cells[q] - cell) / sc) ** 2;
      });
      // members that scatter more than their σ allow: inflate by the Birge ratio √(χ²/(n−1))
      if (haveSigma && members.length > 1) cellUnc *= Math.max(1, Math.sqrt(chi2 / (members.length - 1)));
      const s: IndexedSeries = { kind, members, cellNm: cell, cellUncNm: cellUnc, rmsResidual: Math.sqrt(ss / members.length), missing };
      const strength = members.reduce((a, m) => a + (peaks[m.peak].intensity ?? 0), 0);
      const score = members.length * 1e12 + Math.min(strength, 1e11);
      if (!best || score > best.score) best = { s, score };
    }
    if (best) out.push(best.s);
  }
  return out;
}
