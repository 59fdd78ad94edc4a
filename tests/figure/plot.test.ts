// The plot figure: ticks at least 11 px, rule labels that never overlap, and the data table that
// is the plot's text alternative and its CSV.
import { expect, test } from 'vitest';
import { plotSvg, plotTable, type PlotData } from '../../src/figure/plot';
import { csvTable } from '../../src/measure/export';

const sine: PlotData = {
  id: 'profile', title: 'Line profile', xLabel: 'distance (nm)', yLabel: 'mean grey value',
  x: Array.from({ length: 101 }, (_, i) => i * 0.1),
  traces: [{ label: 'mean grey value', y: Array.from({ length: 101 }, (_, i) => Math.sin(i / 4)), style: 'data' }],
  rules: [{ x: 3, label: 'd 1.25 nm', lo: 2.9, hi: 3.1 }, { x: 3.05, label: 'd 1.26 nm' }, { x: 3.1, label: 'd 1.27 nm' }],
  description: 'a sine',
};

test('the SVG has its title, ticks of 12 px and every rule label apart from the others', () => {
  const svg = plotSvg(sine, { width: 640, height: 300 });
  expect(svg).toMatch(/^<svg [^>]*font-size="12"/);
  expect(svg).toContain('<title>Line profile</title>');
  // three rules 0.05 nm apart: labels stacked, none drawn over another
  const boxes = [...svg.matchAll(/<rect x="([\d.]+)" y="([\d.]+)" width="([\d.]+)" height="([\d.]+)" fill="white" fill-opacity/g)].map((m) => m.slice(1, 5).map(Number));
  expect(boxes.length).toBe(3);
  for (let i = 0; i < boxes.length; i++) for (let j = i + 1; j < boxes.length; j++) {
    const [a, b] = [boxes[i], boxes[j]];
    expect(a[0] < b[0] + b[2] && b[0] < a[0] + a[2] && a[1] < b[1] + b[3] && b[1] < a[1] + a[3]).toBe(false);
  }
  expect(() => plotSvg(sine, { fontPx: 6 })).toThrow(/at least 11 px/);
});

test('the data table has the axis and trace names (with units) and one row per sample', () => {
  const t = plotTable(sine);
  expect(t.header).toEqual(['distance (nm)', 'mean grey value']);
  expect(t.rows.length).toBe(101);
  expect(csvTable(t.header, t.rows).split('\r\n')[2]).toBe('0.1,0.247404');
});

test('a plot with no finite sample says so instead of drawing axes', () => {
  expect(plotSvg({ ...sine, traces: [{ label: 'y', y: new Array(101).fill(NaN), style: 'data' }] })).toContain('no data');
});
