/**
 * Making a calibration: a pixel size whose relative standard uncertainty is built from named
 * parts, each evaluated by type A (from the image) or type B (from other knowledge).
 * Budget: GUM, JCGM 100:2008 (§4.2 type A, §4.3 type B, §5.1.2 combination).
 */
import type { Calibration, CalibrationSource, CalibrationUncertaintyPart } from '../image/grey-image';

/**
 * Relative standard uncertainty of a pixel size that rests on the microscope's indicated
 * magnification: ±5 %, its reproducibility (EMSA abstract "Magnification determination for high
 * resolution electron microscopy", reference-values §5), taken as a standard uncertainty.
 */
export const INDICATED_MAGNIFICATION_REL = 0.05;

/**
 * The same ±5 % read as a rectangular bound, 5 %/√3 = 2.9 % (GUM §4.3.7): the allowance for how
 * well a burned-in scale bar, drawn from the nominal calibration, represents the true pixel size.
 */
export const SCALE_BAR_REPRESENTATION_REL = INDICATED_MAGNIFICATION_REL / Math.sqrt(3);

/** Standard uncertainty of a quantity known only to lie within ±halfWidth (rectangular distribution, GUM §4.3.7). */
export function rectangularU(halfWidth: number): number {
  return halfWidth / Math.sqrt(3);
}

/**
 * A calibration with its uncertainty budget.
 *
 * @param nmPerPx pixel size along x, nm
 * @param source the route that produced it
 * @param detail readable provenance
 * @param parts the named relative standard uncertainties (k = 1); their root-sum-square is relUncertainty
 * @param axes optional y pixel size and shear for a two-axis calibration
 * @returns the Calibration
 * @throws RangeError naming the bad value (non-positive size, a negative or non-finite part)
 */
export function makeCalibration(
  nmPerPx: number,
  source: CalibrationSource,
  detail: string,
  parts: CalibrationUncertaintyPart[],
  axes: { nmPerPxY?: number; shearDeg?: number } = {},
): Calibration {
  if (typeof nmPerPx !== 'number' || !Number.isFinite(nmPerPx) || nmPerPx <= 0) throw new RangeError(`nmPerPx must be a positive number, got ${String(nmPerPx)}`);
  if (!Array.isArray(parts)) throw new TypeError('parts must be an array of { name, rel, type }');
  for (const p of parts) {
    if (typeof p?.rel !== 'number' || !Number.isFinite(p.rel) || p.rel < 0) throw new RangeError(`uncertainty part '${String(p?.name)}' must be a non-negative number, got ${String(p?.rel)}`);
    if (p.type !== 'A' && p.type !== 'B') throw new RangeError(`uncertainty part '${p.name}' must be of type 'A' or 'B', got ${String(p.type)}`);
  }
  const relUncertainty = Math.sqrt(parts.reduce((s, p) => s + p.rel * p.rel, 0));
  if (!(relUncertainty < 1)) throw new RangeError(`the relative uncertainty ${relUncertainty} is 100 % or more: not a calibration`);
  const c: Calibration = { nmPerPx, source, relUncertainty, detail, parts: parts.map((p) => ({ ...p })) };
  if (axes.nmPerPxY !== undefined) {
    if (!(axes.nmPerPxY > 0) || !Number.isFinite(axes.nmPerPxY)) throw new RangeError(`nmPerPxY must be a positive number, got ${axes.nmPerPxY}`);
    c.nmPerPxY = axes.nmPerPxY;
  }
  if (axes.shearDeg !== undefined && axes.shearDeg !== 0) {
    if (!Number.isFinite(axes.shearDeg) || Math.abs(axes.shearDeg) >= 45) throw new RangeError(`shearDeg must be within ±45°, got ${axes.shearDeg}`);
    c.shearDeg = axes.shearDeg;
  }
  return c;
}

/** "end location 0.04 %, bar representation 2.9 % (type B)": the parts of a calibration's budget in words. */
export function calibrationPartsText(c: Calibration): string {
  if (!c.parts || c.parts.length === 0) return `${pct(c.relUncertainty)} (parts not recorded)`;
  return c.parts.map((p) => `${p.name} ${pct(p.rel)} (type ${p.type})`).join(', ');
}

function pct(rel: number): string {
  return `${Number((100 * rel).toPrecision(2))} %`;
}
