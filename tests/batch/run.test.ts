import { describe, expect, test } from 'vitest';
import { parseRecipe } from '../../src/batch/recipe';
import { analysisRegions, processOne, rejectionReason } from '../../src/batch/run';
import { fakeDeps, fakeFile } from './fakes';
import { expressPeriod } from '../../src/measure/measurement';

const recipe = (extra: Record<string, unknown> = {}) => parseRecipe({ schemaVersion: 1, ...extra });

describe('analysisRegions', () => {
  test('the whole image leaves out the information strip', () => {
    expect(analysisRegions(1024, 1100, { kind: 'whole', infoStripPx: 'auto' }, 76)).toEqual([{ kind: 'rect', x: 0, y: 0, width: 1024, height: 1024 }]);
  });

  test('a centred fraction is centred on the image above the strip', () => {
    expect(analysisRegions(1000, 600, { kind: 'centre', infoStripPx: 0, fraction: 0.5 }, 0)).toEqual([{ kind: 'rect', x: 250, y: 150, width: 500, height: 300 }]);
  });

  test('a centred crop larger than the image is clipped, with a note', () => {
    const notes: string[] = [];
    expect(analysisRegions(300, 200, { kind: 'centre', infoStripPx: 0, sizePx: 256 }, 0, notes)).toEqual([{ kind: 'rect', x: 22, y: 0, width: 256, height: 200 }]);
    expect(notes[0]).toMatch(/clipped to 256 × 200/);
  });

  test('tiles cover the area exactly once', () => {
    const tiles = analysisRegions(1001, 515, { kind: 'tiles', infoStripPx: 0, rows: 3, columns: 4 }, 14);
    expect(tiles).toHaveLength(12);
    const cover = new Uint8Array(1001 * 501);
    for (const t of tiles) {
      if (t.kind !== 'rect') throw new Error('rect expected');
      for (let y = t.y; y < t.y + t.height; y++) for (let x = t.x; x < t.x + t.width; x++) cover[y * 1001 + x]++;
    }
    expect(cover.every((c) => c === 1)).toBe(true);
  });

  test('a strip that leaves no image is a failure of that file', () => {
    expect(() => analysisRegions(512, 512, { kind: 'whole', infoStripPx: 510 }, 510)).toThrow(/too little image/);
  });
});

describe('rejectionReason', () => {
  // 20 px at 0.05 nm/px = 1.0 nm; u = hypot(0.1 px · 0.05, 0.02 · 1.0) = 0.0206 nm, 2.06 % (GUM quadrature)
  const p = { periodPx: 20, angleDeg: 0, geometry: 'normal' as const, u: { statisticalPx: 0.1, localVariationPx: 0, methodPx: 0 }, uAngleDeg: 0, strength: 5, flags: [] };
  const cal = { nmPerPx: 0.05, source: 'manual' as const, relUncertainty: 0.02, detail: '' };
  const all = { minStrength: 0, periodRangeNm: null, maxRelUncertainty: null };
  test('each threshold rejects on its own', () => {
    expect(rejectionReason(p, all, cal)).toBeNull();
    expect(rejectionReason(p, { ...all, minStrength: 6 }, cal)).toMatch(/strength/);
    expect(rejectionReason(p, { ...all, periodRangeNm: [1.2, 2] }, cal)).toMatch(/outside/);
    expect(rejectionReason(p, { ...all, periodRangeNm: [0.5, 1.0] }, cal)).toBeNull(); // the range is closed
    expect(rejectionReason(p, { ...all, maxRelUncertainty: 0.02 }, cal)).toMatch(/relative standard uncertainty/);
    expect(rejectionReason(p, { ...all, maxRelUncertainty: 0.021 }, cal)).toBeNull();
    expect(rejectionReason(p, { ...all, periodRangeNm: [0.5, 2] }, null)).toMatch(/uncalibrated/);
  });
});

describe('processOne', () => {
  test('a good file: calibration from metadata, periods in nm, summary strongest first', async () => {
    const deps = fakeDeps();
    // d = periodPx · nmPerPx (definition of the pixel size): 28 px × 0.05 nm/px = 1.4 nm
    const { result } = await processOne(fakeFile(256, 256, 0.05, 28), 'a.tif', recipe({ area: { kind: 'whole', infoStripPx: 0 } }), deps);
    expect(result.status).toBe('ok');
    expect(result.calibration?.source).toBe('metadata');
    const nm = result.summary.topPeriods.map((t) => expressPeriod(t, result.calibration, 1));
    expect(nm.map((b) => b.value)).toEqual([expect.closeTo(1.4, 12), expect.closeTo(0.7, 12)]);
    // combined standard uncertainty: hypot(0.005 · 1.4, 0.02 · 1.4) nm (GUM quadrature sum)
    expect(nm[0].combined).toBeCloseTo(Math.hypot(0.007, 0.028), 12);
    expect(result.summary.sheetCount).toBeNull();
    expect(deps.calls).toEqual([{ tool: 'spectrum', region: { kind: 'rect', x: 0, y: 0, width: 256, height: 256 }, nmPerPx: 0.05 }]);
  });

  test('a corrupt file becomes a failed record with the reason', async () => {
    const { result } = await processOne(new Uint8Array([0, 1, 2, 3]), 'broken.tif', recipe(), fakeDeps());
    expect(result).toMatchObject({ file: 'broken.tif', status: 'failed', image: null, calibration: null, measurements: [] });
    expect(result.reason).toMatch(/cannot read the file: broken.tif: not a fake image/);
  });

  test('no metadata calibration fails the metadata route, and only that route', async () => {
    const bytes = fakeFile(128, 128, null, 20);
    const a = (await processOne(bytes, 'u.tif', recipe(), fakeDeps())).result;
    expect(a.status).toBe('failed');
    expect(a.reason).toMatch(/no pixel size in the file metadata/);
    expect(a.image).toEqual({ widthPx: 128, heightPx: 128, bitDepth: 16 });
    const b = (await processOne(bytes, 'u.tif', recipe({ calibration: { route: 'fixed', nmPerPx: 0.1, relUncertainty: 0.03 } }), fakeDeps())).result;
    expect(b.status).toBe('ok');
    expect(b.calibration).toMatchObject({ nmPerPx: 0.1, source: 'manual', relUncertainty: 0.03, detail: 'fixed pixel size from the batch recipe' });
    expect(expressPeriod(b.summary.topPeriods[0], b.calibration).value).toBeCloseTo(2.0, 12);
  });

  test('an instrument profile overrides the metadata and carries its id', async () => {
    const r = recipe({ calibration: { route: 'profile', profileId: 'scope-b-x250k', nmPerPx: 0.04, relUncertainty: 0.015 } });
    const { result } = await processOne(fakeFile(128, 128, 0.05, 25), 'p.tif', r, fakeDeps());
    expect(result.calibration).toMatchObject({ nmPerPx: 0.04, source: 'profile', relUncertainty: 0.015 });
    expect(result.calibration?.detail).toContain('scope-b-x250k');
    expect(expressPeriod(result.summary.topPeriods[0], result.calibration).value).toBeCloseTo(1.0, 12);
  });

  test('the scale-bar route fails the file when no bar is found, and uses the bar when one is', async () => {
    const none = fakeDeps({ findScaleBar: async () => null });
    expect((await processOne(fakeFile(128, 128, null, 20), 's.tif', recipe({ calibration: { route: 'scale-bar' } }), none)).result.reason).toMatch(/no readable scale bar/);
    const found = fakeDeps({ findScaleBar: async () => ({ nmPerPx: 0.2, source: 'scale-bar', relUncertainty: 0.01, detail: 'bar 50 nm' }) });
    const { result } = await processOne(fakeFile(128, 128, null, 20), 's.tif', recipe({ calibration: { route: 'scale-bar' } }), found);
    expect(result.calibration?.source).toBe('scale-bar');
    expect(expressPeriod(result.summary.topPeriods[0], result.calibration).value).toBeCloseTo(4.0, 12);
  });

  test('the automatic information strip is left out of every tool', async () => {
    const deps = fakeDeps({ findInfoStripPx: () => 64 });
    const { result } = await processOne(fakeFile(512, 576, 0.05, 20), 'i.tif', recipe({ measurements: [{ tool: 'spectrum' }, { tool: 'sheets' }] }), deps);
    expect(deps.calls.map((c) => c.region)).toEqual([
      { kind: 'rect', x: 0, y: 0, width: 512, height: 512 },
      { kind: 'rect', x: 0, y: 0, width: 512, height: 512 },
    ]);
    expect(result.notes).toContain('information strip of 64 px along the bottom left out');
  });

  test('acceptance keeps the passing periods and records the rejected ones', async () => {
    const r = recipe({ acceptance: { periodRangeNm: [1.0, 2.0] } });
    const { result } = await processOne(fakeFile(128, 128, 0.05, 28), 'a.tif', r, fakeDeps());
    const m = result.measurements[0];
    expect(m.periodicities.map((p) => expressPeriod(p, m.calibration).value)).toEqual([expect.closeTo(1.4, 12)]);
    expect((m.detail?.rejected as { reason: string }[])[0].reason).toMatch(/0\.7.* nm outside \[1, 2\] nm/);
    expect(result.summary.topPeriods).toHaveLength(1);
  });

  test('tiles and sheets: per-tile measurements, sheets pooled per file with mean and sample SD', async () => {
    const r = recipe({ area: { kind: 'tiles', infoStripPx: 0, rows: 2, columns: 2 }, measurements: [{ tool: 'spectrum', topK: 1 }, { tool: 'sheets' }] });
    const { result } = await processOne(fakeFile(400, 400, 0.05, 20), 't.tif', r, fakeDeps());
    expect(result.measurements).toHaveLength(8);
    // 4 tiles of 200 px → 2 sheets each of 2 nm ± 0.1 nm (fake tool): mean 2, SD of 4×1.9 and 4×2.1 = 0.1·√(8/7)
    expect(result.summary.sheetCount).toBe(8);
    expect(result.summary.meanThicknessNm).toBeCloseTo(2.0, 12);
    expect(result.summary.sdThicknessNm).toBeCloseTo(0.1 * Math.sqrt(8 / 7), 12);
    expect(result.summary.topPeriods).toHaveLength(1);
  });

  test('the summary takes its periods from the first period step only (strength scales differ)', async () => {
    const r = recipe({ measurements: [{ tool: 'rings' }, { tool: 'spectrum', topK: 2 }] });
    const { result } = await processOne(fakeFile(128, 128, 0.05, 20), 'r.tif', r, fakeDeps());
    expect(result.summary.topPeriods.map((t) => t.tool)).toEqual(['rings']);
    expect(result.measurements.map((m) => m.tool)).toEqual(['rings', 'spectrum']);
  });

  test('a tool that throws fails the file with the tool named', async () => {
    const deps = fakeDeps({ spectrum: async () => { throw new Error('out of memory'); } });
    const { result } = await processOne(fakeFile(128, 128, 0.05, 20), 'x.tif', recipe(), deps);
    expect(result.status).toBe('failed');
    expect(result.reason).toBe('spectrum failed: out of memory');
  });

  test('a scale-bar reader that throws fails the file, naming the route', async () => {
    const deps = fakeDeps({ findScaleBar: async () => { throw new Error('OCR engine did not start'); } });
    const { result } = await processOne(fakeFile(128, 128, null, 20), 'x.tif', recipe({ calibration: { route: 'scale-bar' } }), deps);
    expect(result.status).toBe('failed');
    expect(result.reason).toBe('calibration (scale-bar) failed: OCR engine did not start');
  });

  test('a figure is rendered when asked for', async () => {
    let seen = 0;
    const out = await processOne(fakeFile(128, 128, 0.05, 20), 'f.tif', recipe(), fakeDeps(), {
      figure: true,
      renderFigure: (_image, _result, regions) => {
        seen = regions.length;
        return new Uint8Array([137, 80, 78, 71]);
      },
    });
    expect(seen).toBe(1);
    expect(out.figurePng).toEqual(new Uint8Array([137, 80, 78, 71]));
  });

  test('bad arguments are rejected up front', async () => {
    await expect(processOne('abc' as unknown as Uint8Array, 'a', recipe(), fakeDeps())).rejects.toThrow(/fileBytes must be a Uint8Array/);
    await expect(processOne(new Uint8Array(1), '', recipe(), fakeDeps())).rejects.toThrow(/fileName/);
    await expect(processOne(new Uint8Array(1), 'a', recipe({ measurements: [{ tool: 'domains' }] }), fakeDeps())).rejects.toThrow(/deps.domains/);
  });
});
