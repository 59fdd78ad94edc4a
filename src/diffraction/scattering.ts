/**
 * X-ray atomic scattering factors from the 9-parameter analytical approximation
 * f(s) = Σᵢ₌₁⁴ aᵢ exp(−bᵢ s²) + c, s = sin θ / λ in Å⁻¹.
 *
 * Coefficients: International Tables for Crystallography Vol. C (2006) Table 6.1.1.4 (neutral
 * atoms; Cromer–Mann form), transcribed from a secondary copy of that table and not checked here
 * against the printed page. Ions are treated as neutral atoms (the difference matters only at
 * small s).
 */

/** a1 b1 a2 b2 a3 b3 a4 b4 c. */
const TABLE: Record<string, readonly number[]> = {
  H: [0.489918, 20.6593, 0.262003, 7.74039, 0.196767, 49.5519, 0.049879, 2.20159, 0.001305],
  Li: [1.1282, 3.9546, 0.7508, 1.0524, 0.6175, 85.3905, 0.4653, 168.261, 0.0377],
  B: [2.0545, 23.2185, 1.3326, 1.021, 1.0979, 60.3498, 0.7068, 0.1403, -0.1932],
  C: [2.31, 20.8439, 1.02, 10.2075, 1.5886, 0.5687, 0.865, 51.6512, 0.2156],
  N: [12.2126, 0.0057, 3.1322, 9.8933, 2.0125, 28.9975, 1.1663, 0.5826, -11.529],
  O: [3.0485, 13.2771, 2.2868, 5.7011, 1.5463, 0.3239, 0.867, 32.9089, 0.2508],
  F: [3.5392, 10.2825, 2.6412, 4.2944, 1.517, 0.2615, 1.0243, 26.1476, 0.2776],
  Na: [4.7626, 3.285, 3.1736, 8.8422, 1.2674, 0.3136, 1.1128, 129.424, 0.676],
  Mg: [5.4204, 2.8275, 2.1735, 79.2611, 1.2269, 0.3808, 2.3073, 7.1937, 0.8584],
  Al: [6.4202, 3.0387, 1.9002, 0.7426, 1.5936, 31.5472, 1.9646, 85.0886, 1.1151],
  Si: [6.2915, 2.4386, 3.0353, 32.3337, 1.9891, 0.6785, 1.541, 81.6937, 1.1407],
  P: [6.4345, 1.9067, 4.1791, 27.157, 1.78, 0.526, 1.4908, 68.1645, 1.1149],
  S: [6.9053, 1.4679, 5.2034, 22.2151, 1.4379, 0.2536, 1.5863, 56.172, 0.8669],
  Cl: [11.4604, 0.0104, 7.1964, 1.1662, 6.2556, 18.5194, 1.6455, 47.7784, -9.5574],
  K: [8.2186, 12.7949, 7.4398, 0.7748, 1.0519, 213.187, 0.8659, 41.6841, 1.4228],
  Ca: [8.6266, 10.4421, 7.3873, 0.6599, 1.5899, 85.7484, 1.0211, 178.437, 1.3751],
  Ti: [9.7595, 7.8508, 7.3558, 0.5, 1.6991, 35.6338, 1.9021, 116.105, 1.2807],
  Cr: [10.6406, 6.1038, 7.3537, 0.392, 3.324, 20.2626, 1.4922, 98.7399, 1.1832],
  Mn: [11.2819, 5.3409, 7.3573, 0.3432, 3.0193, 17.8674, 2.2441, 83.7543, 1.0896],
  Fe: [11.7695, 4.7611, 7.3573, 0.3072, 3.5222, 15.3535, 2.3045, 76.8805, 1.0369],
  Co: [12.2841, 4.2791, 7.3409, 0.2784, 4.0034, 13.5359, 2.3488, 71.1692, 1.0118],
  Ni: [12.8376, 3.8785, 7.292, 0.2565, 4.4438, 12.1763, 2.38, 66.3421, 1.0341],
  Cu: [13.338, 3.5828, 7.1676, 0.247, 5.6158, 11.3966, 1.6735, 64.8126, 1.191],
  Zn: [14.0743, 3.2655, 7.0318, 0.2333, 5.1652, 10.3163, 2.41, 58.7097, 1.3041],
  Mo: [3.7025, 0.2772, 17.2356, 1.0958, 12.8876, 11.004, 3.7429, 61.6584, 4.3875],
  Ag: [19.2808, 0.6446, 16.6885, 7.4726, 4.8045, 24.6605, 1.0463, 99.8156, 5.179],
  Au: [16.8819, 0.4611, 18.5913, 8.6216, 25.5582, 1.4826, 5.86, 36.3956, 12.0658],
};

/** Elements with tabulated coefficients. */
export const SCATTERING_ELEMENTS: readonly string[] = Object.keys(TABLE);

/** The element symbol in a CIF type symbol such as 'Al3+', 'O2-', 'C0', 'FE'. */
export function elementOf(typeSymbol: string): string {
  const m = /^([A-Za-z]{1,2})/.exec(typeSymbol.trim());
  if (!m) throw new RangeError(`no element symbol in '${typeSymbol}'`);
  const two = m[1][0].toUpperCase() + (m[1][1] ?? '').toLowerCase();
  if (m[1].length === 2 && (TABLE[two] || /[a-z]/.test(m[1][1]))) return two;
  return m[1][0].toUpperCase();
}

/**
 * X-ray atomic scattering factor of a neutral atom.
 * @param element element symbol (e.g. 'Si')
 * @param sInvA s = sin θ / λ in Å⁻¹ (valid to 2 Å⁻¹)
 * @returns f in electrons
 * Reference: International Tables for Crystallography Vol. C (2006) Table 6.1.1.4.
 */
export function scatteringFactor(element: string, sInvA: number): number {
  const c = TABLE[element];
  if (!c) throw new RangeError(`no scattering-factor coefficients for element '${element}' (have ${SCATTERING_ELEMENTS.join(', ')})`);
  if (!(sInvA >= 0 && sInvA <= 6)) throw new RangeError(`sInvA must be in [0, 6], got ${sInvA}`);
  const s2 = sInvA * sInvA;
  return c[0] * Math.exp(-c[1] * s2) + c[2] * Math.exp(-c[3] * s2) + c[4] * Math.exp(-c[5] * s2) + c[6] * Math.exp(-c[7] * s2) + c[8];
}
