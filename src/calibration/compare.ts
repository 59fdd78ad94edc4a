/**
 * Cross-checking two calibrations of the same image (e.g. the file's metadata against its
 * burned-in scale bar).
 */
import type { Calibration } from '../image/grey-image';

export interface CalibrationComparison {
  /** (b − a) / a. */
  relDifference: number;
  /** √(u_a² + u_b²), relative. */
  combinedRelUncertainty: number;
  /** Coverage factor used. */
  k: number;
  /** True when |relDifference| ≤ k × combinedRelUncertainty. */
  agree: boolean;
  /** A sentence showing both values when they disagree, else null. */
  warning: string | null;
}

export interface CompareOptions {
  /** Coverage factor; 2 when absent (about 95 % for normal errors, GUM §6.3.3). */
  k?: number;
}

/**
 * Tells whether two pixel sizes for the same image agree within their combined uncertainty.
 * @param a the first calibration (e.g. metadata)
 * @param b the second (e.g. scale bar)
 * @param options coverage factor k
 * @returns the relative difference, the combined uncertainty and a warning when they disagree
 * Notes: the difference of two independent estimates has u = √(u_a² + u_b²) (JCGM 100:2008,
 * GUM, §5.1.6); disagreement beyond k·u is reported (normalised error |E_n| > 1, ISO 13528).
 */
export function compareCalibrations(a: Calibration, b: Calibration, options: CompareOptions = {}): CalibrationComparison {
  for (const [n, c] of [['a', a], ['b', b]] as const) {
    if (!c || !(c.nmPerPx > 0) || !Number.isFinite(c.nmPerPx)) throw new RangeError(`calibration ${n} needs a positive nmPerPx, got ${c?.nmPerPx}`);
    if (!(c.relUncertainty >= 0) || !Number.isFinite(c.relUncertainty)) {
      throw new RangeError(`calibration ${n} needs a non-negative relUncertainty, got ${c.relUncertainty}`);
    }
  }
  const k = options.k ?? 2;
  if (!(k > 0) || !Number.isFinite(k)) throw new RangeError(`k must be a positive number, got ${k}`);
  const rel = b.nmPerPx / a.nmPerPx - 1;
  const combined = Math.hypot(a.relUncertainty, b.relUncertainty);
  const agree = Math.abs(rel) <= k * combined;
  const show = (c: Calibration) => `${c.source} ${Number(c.nmPerPx.toPrecision(5))} nm/px ± ${(100 * c.relUncertainty).toPrecision(2)} %`;
  return {
    relDifference: rel,
    combinedRelUncertainty: combined,
    k,
    agree,
    warning: agree
      ? null
      : `pixel sizes disagree: ${show(a)} vs ${show(b)} (differ by ${(100 * rel).toFixed(1)} %, more than k = ${k} × ${(100 * combined).toPrecision(2)} %)`,
  };
}
