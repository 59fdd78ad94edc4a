/**
 * The wavelength of the electrons of a transmission microscope from its accelerating voltage,
 * with the relativistic correction.
 */
import { electronWavelengthNm } from '../bragg';

/** Lowest and highest accelerating voltage accepted, kV. */
export const VOLTAGE_RANGE_KV: readonly [number, number] = Object.freeze([1, 3000]) as readonly [number, number];

/**
 * Relativistic electron wavelength for an accelerating voltage in kV.
 * @param voltageKv accelerating voltage, kV, within 1–3000
 * @returns wavelength in nm
 * @throws RangeError naming the value when it is not a number within 1–3000 kV
 * Notes: λ = h/√(2m₀eU(1 + eU/(2m₀c²))) with the CODATA 2018 constants (the relativistic de
 * Broglie relation; src/diffraction/bragg.ts). 200 kV gives 2.5079 pm (reference-values §4).
 */
export function electronWavelengthForKv(voltageKv: number): number {
  if (typeof voltageKv !== 'number' || !Number.isFinite(voltageKv) || voltageKv < VOLTAGE_RANGE_KV[0] || voltageKv > VOLTAGE_RANGE_KV[1]) {
    throw new RangeError(`the accelerating voltage must be a number of kV from ${VOLTAGE_RANGE_KV[0]} to ${VOLTAGE_RANGE_KV[1]}, got ${String(voltageKv)}`);
  }
  return electronWavelengthNm(voltageKv * 1000);
}
