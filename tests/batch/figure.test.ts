import { decode } from 'fast-png';
import { describe, expect, test } from 'vitest';
import { lengthLabel } from '../../src/figure/ticks';
import { annotatedFigure, annotatedFigurePng, histogramPng, histogramSvg, roundScaleBar } from '../../src/figure/batch-figure';
import type { FileResult } from '../../src/batch/run';
import { makeGreyImage, type Calibration } from '../../src/image/grey-image';

const isOneTwoFive = (v: number) => {
  const m = v / 10 ** Math.floor(Math.log10(v) + 1e-12);
  return [1, 2, 5].some((k) => Math.abs(m - k) < 1e-9);
};

describe('roundScaleBar', () => {
  test('bar length in px is the round length divided by the pixel size', () => {
    // 2048 px × 0.05 nm/px = 102.4 nm wide; 20 % is 20.48 nm → 20 nm = 400 px
    expect(roundScaleBar(2048, 0.05)).toEqual({ lengthNm: 20, lengthPx: 400, label: '20 nm' });
    // 1024 px × 0.0213 nm/px = 21.81 nm; 20 % = 4.36 nm → 5 nm = 234.74 px
    const b = roundScaleBar(1024, 0.0213);
    expect(b.lengthNm).toBe(5);
    expect(b.lengthPx).toBeCloseTo(5 / 0.0213, 9);
  });

  test('over many pixel sizes the bar is a 1-2-5 value near a fifth of the width', () => {
    for (let i = 0; i < 400; i++) {
      const nmPerPx = 0.001 * 10 ** (i / 80); // 0.001 … 100 nm/px
      for (const width of [512, 1000, 4096]) {
        const b = roundScaleBar(width, nmPerPx);
        expect(isOneTwoFive(b.lengthNm)).toBe(true);
        expect(b.lengthPx).toBeCloseTo(b.lengthNm / nmPerPx, 9);
        const f = b.lengthPx / width;
        // nearest on a log scale with steps ×2 and ×2.5: within [0.2/√2.5, 0.2·√2.5]
        expect(f).toBeGreaterThanOrEqual(0.2 / Math.sqrt(2.5) - 1e-9);
        expect(f).toBeLessThanOrEqual(0.2 * Math.sqrt(2.5) + 1e-9);
      }
    }
  });

  test('labels switch to µm at 1000 nm and keep small values exact', () => {
    expect(lengthLabel(0.5)).toBe('0.5 nm');
    expect(lengthLabel(2000)).toBe('2 µm');
    expect(roundScaleBar(1000, 10).label).toBe('2 µm');
    expect(() => roundScaleBar(0, 1)).toThrow(/widthPx/);
    expect(() => roundScaleBar(10, -1)).toThrow(/nmPerPx/);
  });
});

function flatResult(cal: Calibration): FileResult {
  return {
    file: 'f.tif',
    status: 'ok',
    image: { widthPx: 1024, heightPx: 768, bitDepth: 16 },
    calibration: cal,
    measurements: [],
    summary: { topPeriods: [], sheetCount: null, meanThicknessNm: null, sdThicknessNm: null, sheetThicknessNm: [] },
    notes: [],
  };
}

describe('annotatedFigure', () => {
  const cal: Calibration = { nmPerPx: 0.0213, source: 'manual', relUncertainty: 0.02, detail: '' };
  const image = makeGreyImage(1024, 768, new Float32Array(1024 * 768).fill(100), { calibration: cal });
  test('the drawn bar is as long as the round length over the pixel size', () => {
    const r = annotatedFigure({ ...image, max: 200 }, flatResult(cal), [{ kind: 'rect', x: 0, y: 0, width: 1024, height: 768 }]);
    // the flat image maps to 0 (its 0.5 % quantile); the bar is white (255) with exact edge coverage
    let best = 0;
    for (let y = 0; y < r.height; y++) {
      let sum = 0;
      for (let x = 0; x < r.width / 2; x++) sum += r.data[y * r.width + x] / 255;
      best = Math.max(best, sum);
    }
    // 5 nm / 0.0213 nm/px = 234.74 px (a full row through the bar, nothing else in the left half)
    expect(best).toBeCloseTo(5 / 0.0213, 1);
  });

  test('the PNG is the full image size, 8-bit grey', () => {
    const png = decode(annotatedFigurePng(image, flatResult(cal), [{ kind: 'rect', x: 0, y: 0, width: 1024, height: 700 }]));
    expect([png.width, png.height, png.channels, png.depth]).toEqual([1024, 768, 1, 8]);
  });
});

describe('histogramSvg', () => {
  test('one bar per non-empty bin, counts adding up to the sample', () => {
    const values = [1.0, 1.1, 1.1, 1.2, 1.2, 1.2, 1.3, 2.0];
    const svg = histogramSvg(values, { xLabel: 'period (nm)', title: 'strongest period <per image>', binWidth: 0.25 });
    expect(svg.startsWith('<svg xmlns="http://www.w3.org/2000/svg"')).toBe(true);
    const counts = [...svg.matchAll(/data-count="(\d+)"/g)].map((m) => Number(m[1]));
    // bins of 0.25 from 1.0: [1, 1.25) holds 6, [1.25, 1.5) 1, [1.75, 2.0] 1
    expect(counts).toEqual([6, 1, 1]);
    expect(svg).toContain('strongest period &lt;per image&gt;');
    expect(svg).toContain('period (nm)');
  });
});

describe('histogramPng', () => {
  // a skewed sample with one clear mode: bins of 0.1 nm from the smallest value, the 1.41–1.51 nm bin holds 9 of 20 values
  const values = [1.21, 1.28, 1.33, 1.35, 1.38, 1.42, 1.43, 1.44, 1.45, 1.46, 1.47, 1.48, 1.49, 1.5, 1.52, 1.55, 1.58, 1.63, 1.71, 1.84];
  const options = { xLabel: 'strongest period per image (nm)', title: '20 images', binWidth: 0.1 };

  test('PNG signature, 960 × 600 8-bit grey at the default scale 2, 480 × 300 at scale 1', () => {
    const bytes = histogramPng(values, options);
    // PNG signature: 137 80 78 71 13 10 26 10 (ISO/IEC 15948:2004 §5.2)
    expect([...bytes.subarray(0, 8)]).toEqual([137, 80, 78, 71, 13, 10, 26, 10]);
    const png = decode(bytes);
    expect([png.width, png.height, png.channels, png.depth]).toEqual([960, 600, 1, 8]);
    const one = decode(histogramPng(values, { ...options, scale: 1 }));
    expect([one.width, one.height]).toEqual([480, 300]);
  });

  test('the tallest bar of the SVG is dark in the PNG from its top to the axis, white above', () => {
    const svg = histogramSvg(values, options);
    const bars = [...svg.matchAll(/<rect class="bar" x="([\d.]+)" y="([\d.]+)" width="([\d.]+)" height="([\d.]+)"[^>]*data-count="(\d+)"/g)].map((m) => m.slice(1).map(Number));
    const [x, y, w, h, count] = bars.reduce((a, b) => (b[4] > a[4] ? b : a));
    expect(count).toBe(9);
    const png = decode(histogramPng(values, options));
    const at = (px: number, py: number) => png.data[py * png.width + px];
    const col = Math.round((x + w / 2) * 2);
    const topPx = Math.ceil(y * 2) + 1;
    const axisPx = Math.floor((y + h) * 2) - 1;
    for (let py = topPx; py <= axisPx; py++) expect(at(col, py), `row ${py}`).toBeLessThan(160);
    // the axis line itself is black, the plot area above the bar white
    expect(at(col, Math.round((y + h) * 2))).toBeLessThan(40);
    expect(at(col, topPx - 4)).toBe(255);
    // a column beside the plot, between the count labels, is background
    expect(at(960 - 4, 300)).toBe(255);
  });

  test('labels are drawn: ink under the plot (ticks, x label) and in the title band', () => {
    const png = decode(histogramPng(values, options));
    const inkIn = (y0: number, y1: number) => {
      let n = 0;
      for (let py = y0; py < y1; py++) for (let px = 0; px < png.width; px++) if (png.data[py * png.width + px] < 128) n++;
      return n;
    };
    // SVG layout: title baseline at 20, x axis at 250, ticks at 266, x label at 288 (× 2)
    expect(inkIn(10, 46)).toBeGreaterThan(100);
    expect(inkIn(512, 540)).toBeGreaterThan(100);
    expect(inkIn(550, 590)).toBeGreaterThan(300);
    const untitled = decode(histogramPng(values, { xLabel: 'period (nm)', binWidth: 0.1 }));
    let titleInk = 0;
    for (let i = 0; i < 20 * 960; i++) if (untitled.data[i] < 128) titleInk++;
    expect(titleInk).toBe(0);
  });

  test('bad scale and bad values are rejected by name', () => {
    expect(() => histogramPng(values, { ...options, scale: 0 })).toThrow(/scale/);
    expect(() => histogramPng(values, { ...options, scale: Number.NaN })).toThrow(/scale/);
    expect(() => histogramPng([], options)).toThrow(/value/);
  });
});
