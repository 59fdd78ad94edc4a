/**
 * The labels of a measurement's figure over the image, with their ±: "FFT region · d 2.490 ±
 * 0.012 nm (k = 2)". The registry's figures (src/measure/tools.ts) label a period with its value
 * only; the app draws them with the expanded uncertainty of the period's whole budget
 * (expressPeriod), so that no number on the image stands without its ±.
 */
import { checkCoverageFactor, DEFAULT_COVERAGE_FACTOR, expressPeriod, formatPlusMinus, type Measurement, type Periodicity } from '../measure/measurement';
import type { Calibration } from '../image/grey-image';
import { periodLabel, type FigureShape } from './shapes';

/**
 * A period as drawn on the image: "d 2.490 ± 0.012 nm (k = 2)" (px when uncalibrated).
 * @param p the period
 * @param calibration the pixel size in force, or null
 * @param k coverage factor of the ± (default 2)
 * @returns the label; its ± is U = k·u of the budget expressPeriod gives (statistical, local
 *   variation, method and calibration parts; the tables beside the image name them)
 * Reference: GUM (JCGM 100:2008) §6: the expanded uncertainty U = k·u_c.
 */
export function periodBudgetLabel(p: Periodicity, calibration: Calibration | null, k: number = DEFAULT_COVERAGE_FACTOR): string {
  const b = expressPeriod(p, calibration, k);
  return `d ${formatPlusMinus(b.value, b.expanded)} ${b.unit} (k = ${Number(b.k.toPrecision(3))})`;
}

/**
 * A tool's figure with every period in its labels given its ±: each label's "d <value>" written
 * by the registry for one of the record's periods (in order, each period once) becomes that
 * period's {@link periodBudgetLabel}.
 * @param m the record the figure was drawn for (its periods and calibration)
 * @param shapes the figure (toolOf(m.tool).figure(m))
 * @param k coverage factor of the ± (default 2)
 * @returns new shapes; shapes and labels without a period are returned as they are
 * @throws TypeError when the record has no periodicities array or shapes is not an array; RangeError for a bad k
 */
export function withBudgetLabels(m: Pick<Measurement, 'periodicities' | 'calibration'>, shapes: readonly FigureShape[], k: number = DEFAULT_COVERAGE_FACTOR): FigureShape[] {
  if (!m || !Array.isArray(m.periodicities)) throw new TypeError(`withBudgetLabels: the record must have a periodicities array, got ${Object.prototype.toString.call(m?.periodicities)}`);
  if (!Array.isArray(shapes)) throw new TypeError(`withBudgetLabels: shapes must be an array, got ${Object.prototype.toString.call(shapes)}`);
  checkCoverageFactor(k);
  const used = new Set<number>();
  return shapes.map((s) => {
    if (!s.label) return s;
    let label = s.label;
    m.periodicities.forEach((p, i) => {
      if (used.has(i)) return;
      const plain = `d ${periodLabel(p, m.calibration)}`;
      const at = label.indexOf(plain);
      // only a whole number: "d 2.49 nm" must not match inside "d 2.490 nm"
      if (at < 0 || /[0-9A-Za-z.]/.test(label.charAt(at + plain.length))) return;
      used.add(i);
      label = `${label.slice(0, at)}${periodBudgetLabel(p, m.calibration, k)}${label.slice(at + plain.length)}`;
    });
    return label === s.label ? s : { ...s, label };
  });
}
