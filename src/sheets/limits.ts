/**
 * Limits shared by the sheet measurements.
 */

/**
 * The smallest layer period that layers can be counted at, px. Below it the fringes sit close
 * to the sampling limit (2 px, Nyquist), where the pixel grid, the detector and interpolation
 * make their contrast unreliable (common practice: several samples per period are needed to
 * locate each layer).
 */
export const MIN_COUNTABLE_PERIOD_PX = 2.5;
