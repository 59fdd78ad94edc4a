/**
 * The name each fitted line goes by wherever lines are listed beside the peak table: the
 * cross-check with micrograph periods, its unmatched lines, a stored set.
 */
import type { PatternAnalysis } from './analyse';
import { sig } from './format';
import { spacedHkl } from '../figure/reflection-index';

/**
 * Labels the fitted lines of an analysis as its peak table does.
 *
 * @param analysis - peaks, recognised series and indexed phases of one pattern
 * @returns one label per peak, in peak order: the hkl of the first indexed phase that holds the
 *   line, prefixed by the phase's number when several phases are indexed ("2: 0 0 1"); else the
 *   index of a recognised series ("002", "hexagonal 11"); else the line's position
 *   ("peak 21.312°", or "peak q 15.02" for a pattern on a q axis)
 *
 * Notes: a series label alone would name two different lines "0 0 2" when two lamellar phases
 * are indexed; the phase number keeps them apart (common practice: one label per reflection).
 */
export function fittedLineLabels(analysis: Pick<PatternAnalysis, 'peaks' | 'series' | 'indexing'>): string[] {
  if (typeof analysis !== 'object' || analysis === null || !Array.isArray(analysis.peaks)) {
    throw new TypeError('fittedLineLabels: the analysis must hold its peaks, series and indexing');
  }
  const label = new Map<number, string>();
  const phases = analysis.indexing?.phases ?? [];
  phases.forEach((ph, j) => {
    for (const l of ph.lines) if (!label.has(l.peak)) label.set(l.peak, `${phases.length > 1 ? `${j + 1}: ` : ''}${spacedHkl(l.hkl)}`);
  });
  for (const s of analysis.series ?? []) {
    for (const m of s.members) if (!label.has(m.peak)) label.set(m.peak, s.kind === 'lamellar' ? m.index : `${s.kind} ${m.index}`);
  }
  return analysis.peaks.map((p, i) => label.get(i) ?? (p.twoThetaDeg !== null ? `peak ${sig(p.twoThetaDeg, 5)}°` : `peak q ${sig(p.qInvNm, 5)}`));
}
