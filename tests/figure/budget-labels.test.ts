// The labels drawn over the image carry their ±: each period's expanded uncertainty U = k·u of its
// whole budget (GUM, JCGM 100:2008 §5.1.2 and §6.2: parts combined in quadrature, U = k·u_c),
// worked by hand below.
import { describe, expect, test } from 'vitest';
import { periodBudgetLabel, withBudgetLabels } from '../../src/figure/budget-labels';
import { makeCalibration } from '../../src/calibration/calibration';
import { recordHead, type Measurement, type Periodicity } from '../../src/measure/measurement';
import { toolOf } from '../../src/measure/tools';

const period = (periodPx: number, statisticalPx: number, localVariationPx: number): Periodicity => ({
  periodPx, angleDeg: 30, geometry: 'normal', u: { statisticalPx, localVariationPx, methodPx: 0 }, uAngleDeg: 0.5, strength: 10, flags: [],
});
// 0.1 nm/px with a 0.2 % relative standard uncertainty (a round test value)
const cal = makeCalibration(0.1, 'manual', 'typed', [{ name: 'typed value', rel: 0.002, type: 'B' }]);

describe('labels on the image', () => {
  test('a period says its ± and k: 24.9 px at 0.1 nm/px, u = 0.05 and 0.03 px, 0.2 % calibration', () => {
    // by hand: 2.49 nm; u_c = √(0.005² + 0.003² + (2.49 × 0.002)²) = 0.00767 nm; U = 2u_c = 0.0153 nm
    expect(periodBudgetLabel(period(24.9, 0.05, 0.03), cal)).toBe('d 2.490 ± 0.015 nm (k = 2)');
    // uncalibrated: u_c = √(0.05² + 0.03²) = 0.0583 px, U = 0.117 px
    expect(periodBudgetLabel(period(24.9, 0.05, 0.03), null)).toBe('d 24.90 ± 0.12 px (k = 2)');
    // k = 3: U = 0.0230 nm
    expect(periodBudgetLabel(period(24.9, 0.05, 0.03), cal, 3)).toBe('d 2.490 ± 0.023 nm (k = 3)');
  });

  test("the spectrum's region and the profile's line: the registry's 'd <value>' becomes the value with its ±", () => {
    const m: Measurement = {
      ...recordHead('spectrum'), region: { kind: 'rect', x: 10, y: 20, width: 128, height: 128 }, calibration: cal, settings: {},
      periodicities: [period(24.9, 0.05, 0.03), period(12.45, 0.02, 0)], notes: [],
    };
    const plain = toolOf('spectrum').figure(m);
    expect(plain[0].label).toBe('FFT region · d 2.490 nm');
    const drawn = withBudgetLabels(m, plain);
    expect(drawn[0].label).toBe('FFT region · d 2.490 ± 0.015 nm (k = 2)');
    expect(drawn[0]).toMatchObject({ kind: 'rect', x: 10, y: 20, width: 128, height: 128 });
    const line: Measurement = { ...m, tool: 'profile', region: { kind: 'line', x0: 0, y0: 0, x1: 100, y1: 0, widthPx: 5 }, periodicities: [period(24.9, 0.05, 0.03)] };
    expect(withBudgetLabels(line, toolOf('profile').figure(line), 2)[0].label).toBe('profile · d 2.490 ± 0.015 nm (k = 2)');
    // no period: the label as it was
    const none = { ...m, periodicities: [] };
    expect(withBudgetLabels(none, toolOf('spectrum').figure(none))[0].label).toBe('FFT region');
  });

  test('a value that only starts like another is left alone', () => {
    const m = { calibration: null, periodicities: [period(24.9, 0.05, 0.03)] };
    expect(withBudgetLabels(m, [{ kind: 'point', x: 0, y: 0, label: 'd 24.905 px' }])[0].label).toBe('d 24.905 px');
    expect(withBudgetLabels(m, [{ kind: 'point', x: 0, y: 0, label: 'd 24.90 px' }])[0].label).toBe('d 24.90 ± 0.12 px (k = 2)');
    expect(() => withBudgetLabels(m, [], 0)).toThrow(/0/);
    expect(() => withBudgetLabels({ calibration: null } as never, [])).toThrow(/periodicities/);
  });
});
