/**
 * Numbers of the diffraction outputs to the digits their uncertainty supports: no
 * "0.15405929000000002 nm" anywhere.
 */
import { decimalsFor, formatPlusMinus } from '../measure/measurement';

/**
 * A value rounded for JSON: to the third significant digit of its uncertainty, or to `digits`
 * significant digits when it has none; null for a missing or non-finite value.
 * @param v the value
 * @param u its standard uncertainty (0, null or undefined: none known)
 * @param digits significant digits without an uncertainty (default 7)
 * @returns the rounded number, or null
 */
export function tidy(v: number | null | undefined, u?: number | null, digits = 7): number | null {
  if (v === null || v === undefined || !Number.isFinite(v)) return null;
  if (u !== null && u !== undefined && Number.isFinite(u) && u > 0) return Number(v.toFixed(decimalsFor(u, 3)));
  return v === 0 ? 0 : Number(v.toPrecision(digits));
}

/** An uncertainty rounded to 2 significant digits (for JSON), null when missing. */
export function tidyU(u: number | null | undefined): number | null {
  if (u === null || u === undefined || !Number.isFinite(u)) return null;
  return u === 0 ? 0 : Number(u.toPrecision(2));
}

/**
 * "1.2503 ± 0.0041" (the uncertainty to 2 significant digits), or the value to `digits`
 * significant digits with no uncertainty.
 * @param v value
 * @param u standard or expanded uncertainty as the caller states it
 * @param digits significant digits when u is missing (default 5)
 * @returns the text
 */
export function pm(v: number, u: number | null | undefined, digits = 5): string {
  if (!Number.isFinite(v)) return '—';
  if (u === null || u === undefined || !(u > 0) || !Number.isFinite(u)) return String(Number(v.toPrecision(digits)));
  return formatPlusMinus(v, u);
}

/** A number to `digits` significant digits, without trailing float noise. */
export function sig(v: number | null | undefined, digits = 5): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  return String(Number(v.toPrecision(digits)));
}
