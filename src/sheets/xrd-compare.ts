/**
 * Stack thickness from the micrographs beside the stack size from the basal X-ray reflection
 * (Scherrer): two measures of the same stacks along their normal.
 */
import type { PatternAnalysis } from '../diffraction/analyse';

/** The basal reflection's stack size, as the diffraction code gives it. */
export interface XrdStackSize {
  /** Scherrer size (mean column length along the stacking direction), nm. */
  sizeNm: number;
  /** Its standard uncertainty, nm, or null when not known (then no agreement is judged). */
  uSizeNm: number | null;
  /** d of the reflection, nm. */
  dNm: number;
  /** Where it came from: file and peak, and the method statement. */
  source: string;
}

/** A candidate basal line of a pattern: its d, and its Scherrer size when it has one. */
export interface XrdLine {
  dNm: number;
  dUncNm?: number;
  crystalliteNm?: number | null;
  crystalliteUncNm?: number | null;
  label?: string;
  /** A phase's size from several of its basal orders (preferred over a single line's). */
  pooled?: boolean;
  /** How the size was obtained: K, and whether the instrument's breadth was removed. */
  method?: string;
}

/**
 * The sizes a comparison with micrographs can use: each fitted line's own Scherrer size, and each
 * indexed lamellar phase's size from all its resolved 00l lines (marked `pooled`, d its period).
 * @param a an analysis
 * @returns d, size and its standard uncertainty, a label naming the line or the phase, and how the size was obtained
 */
export function sizedLines(a: PatternAnalysis): XrdLine[] {
  const own = a.peaks.map((p) => ({ dNm: p.dNm, crystalliteNm: p.crystalliteNm, crystalliteUncNm: p.crystalliteUncNm, label: p.twoThetaDeg !== null ? `peak at ${p.twoThetaDeg.toFixed(3)}° 2θ` : `peak at q ${p.qInvNm.toFixed(3)} nm⁻¹`, pooled: false, method: a.sizeMethod }));
  const phases = a.indexing.phases.flatMap((ph, j) => {
    const ps = a.phaseSizes?.[j];
    if (ph.kind !== 'lamellar' || !ps) return [];
    return [{ dNm: ph.cNm, crystalliteNm: ps.sizeNm, crystalliteUncNm: ps.sizeUncNm, label: `lamellar phase ${j + 1}, ${ps.lines} resolved 00l lines (${ps.model === 'mean' ? 'strain held at zero' : 'Williamson–Hall'})`, pooled: true, method: ps.instrumentRemoved ? 'instrument breadth removed' : 'no instrument correction: a lower bound' }];
  });
  return [...phases, ...own];
}

/**
 * The basal reflection among a pattern's lines: the line with a size whose d is within
 * `tolerance` of the sheets' layer period (the first order of the stacking); a lamellar phase's
 * size pooled over its orders first, else the closest line.
 * @param lines the pattern's lines (d in nm, Scherrer size when resolvable)
 * @param periodNm the layer period from the micrographs, nm
 * @param tolerance relative tolerance (default 0.06)
 * @returns the line, or null when none has a size near that period
 */
export function basalLine<T extends XrdLine>(lines: T[], periodNm: number, tolerance = 0.06): T | null {
  if (!(periodNm > 0)) throw new RangeError(`periodNm must be positive, got ${periodNm}`);
  let best: T | null = null;
  for (const l of lines) {
    if (!(l.crystalliteNm && l.crystalliteNm > 0)) continue;
    const rel = Math.abs(l.dNm - periodNm) / periodNm;
    if (rel > tolerance) continue;
    const better = !best || (!!l.pooled && !best.pooled) || (!!l.pooled === !!best.pooled && Math.abs(l.dNm - periodNm) < Math.abs(best.dNm - periodNm));
    if (better) best = l;
  }
  return best;
}

/** The comparison. */
export interface ScherrerComparison {
  xrd: XrdStackSize;
  /** Stacks measured in the micrographs. */
  n: number;
  /** Mean thickness (n·d), nm, and its standard error. */
  meanNm: number;
  semNm: number;
  /**
   * Thickness weighted as the X-ray beam weights columns: Σ t²·L / Σ t·L (t thickness, L the
   * stack's length as a stand-in for its lateral size), nm, with its jackknife standard error.
   */
  volumeWeightedNm: number;
  uVolumeWeightedNm: number;
  /** Mean layer count in the micrographs, and the Scherrer size in layers (size / d). */
  meanLayers: number;
  xrdLayers: number;
  /** Volume-weighted thickness minus the Scherrer size, nm, with its standard uncertainty (null when the size's is unknown). */
  differenceNm: number;
  uDifferenceNm: number | null;
  /** |difference| / its uncertainty (null when unknown). */
  z: number | null;
  /** One sentence for the user. */
  statement: string;
}

/**
 * Compares stack thicknesses measured in micrographs with the Scherrer size of the basal reflection.
 *
 * The Scherrer size is a volume-weighted mean column length (Langford & Wilson, J. Appl. Cryst. 11, 102 (1978)); the micrographs' thicknesses are weighted alike (t²·L over t·L); standard error by the jackknife (Quenouille 1956, Tukey 1958).
 *
 * @param stacks thickness (n·d) in nm, layers and length (any unit, a weight) of each stack
 * @param xrd the basal reflection's size
 * @returns the means, the weighted thickness, the difference with its uncertainty and a statement
 * Notes: the Scherrer size ignores strain and depends on the shape factor K, and a stack
 * shorter than the beam's coherence or tilted out of the image plane is seen differently by the
 * two methods; a difference is a finding to look at, not an error of either. At least two
 * stacks are needed.
 */
export function compareWithScherrer(stacks: { thicknessNm: number; layers: number; lengthWeight: number }[], xrd: XrdStackSize): ScherrerComparison {
  if (!(stacks.length >= 2)) throw new RangeError(`the comparison needs at least two stacks, got ${stacks.length}`);
  if (!(xrd.sizeNm > 0 && xrd.dNm > 0)) throw new RangeError(`the X-ray size and d must be positive, got ${xrd.sizeNm} nm and ${xrd.dNm} nm`);
  stacks.forEach((s, i) => {
    if (!(s.thicknessNm > 0 && s.lengthWeight > 0)) throw new RangeError(`stacks[${i}] needs a positive thickness and length, got ${s.thicknessNm}, ${s.lengthWeight}`);
  });
  const n = stacks.length;
  const t = stacks.map((s) => s.thicknessNm);
  const meanNm = t.reduce((a, b) => a + b, 0) / n;
  const sd = Math.sqrt(t.reduce((a, b) => a + (b - meanNm) ** 2, 0) / (n - 1));
  const vw = (list: typeof stacks) => list.reduce((a, s) => a + s.thicknessNm ** 2 * s.lengthWeight, 0) / list.reduce((a, s) => a + s.thicknessNm * s.lengthWeight, 0);
  const volumeWeightedNm = vw(stacks);
  const leaveOut = stacks.map((_, i) => vw(stacks.filter((__, j) => j !== i)));
  const loMean = leaveOut.reduce((a, b) => a + b, 0) / n;
  const uVolumeWeightedNm = Math.sqrt(((n - 1) / n) * leaveOut.reduce((a, b) => a + (b - loMean) ** 2, 0));
  const meanLayers = stacks.reduce((a, s) => a + s.layers, 0) / n;
  const differenceNm = volumeWeightedNm - xrd.sizeNm;
  const uDifferenceNm = xrd.uSizeNm === null ? null : Math.hypot(uVolumeWeightedNm, xrd.uSizeNm);
  const z = uDifferenceNm && uDifferenceNm > 0 ? Math.abs(differenceNm) / uDifferenceNm : null;
  const f = (v: number) => v.toFixed(v < 10 ? 2 : 1);
  let statement = `Micrographs (${n} stacks): volume-weighted thickness ${f(volumeWeightedNm)} ± ${f(2 * uVolumeWeightedNm)} nm (k = 2, between stacks), mean ${f(meanNm)} nm; X-ray (Scherrer, ${xrd.source}): ${f(xrd.sizeNm)}${xrd.uSizeNm === null ? ' nm (uncertainty not known)' : ` ± ${f(2 * xrd.uSizeNm)} nm (k = 2)`}, ${(xrd.sizeNm / xrd.dNm).toFixed(1)} layers of ${xrd.dNm.toFixed(3)} nm.`;
  if (z === null) statement += ' Agreement not judged: the X-ray size has no uncertainty.';
  else statement += z <= 2 ? ` They agree within their uncertainties (|difference| = ${(z).toFixed(1)} u).` : ` They differ by ${f(Math.abs(differenceNm))} nm (${z.toFixed(1)} u): the micrographs' stacks are ${differenceNm > 0 ? 'thicker' : 'thinner'} than the X-ray coherent size.`;
  void sd;
  return {
    xrd,
    n,
    meanNm,
    semNm: sd / Math.sqrt(n),
    volumeWeightedNm,
    uVolumeWeightedNm,
    meanLayers,
    xrdLayers: xrd.sizeNm / xrd.dNm,
    differenceNm,
    uDifferenceNm,
    z,
    statement,
  };
}
