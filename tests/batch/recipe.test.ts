import { describe, expect, test } from 'vitest';
import { canonicalRecipeJson, defaultRecipe, parseRecipe, RecipeError } from '../../src/batch/recipe';

function rejection(json: unknown): RecipeError {
  try {
    parseRecipe(json);
  } catch (e) {
    expect(e).toBeInstanceOf(RecipeError);
    return e as RecipeError;
  }
  throw new Error('the recipe was accepted');
}

describe('parseRecipe accepts and completes', () => {
  test('the minimal recipe gets every default', () => {
    expect(parseRecipe({ schemaVersion: 1 })).toEqual({ ...defaultRecipe(), name: 'unnamed', description: '' });
  });

  test('the default recipe survives a JSON round trip unchanged', () => {
    const d = defaultRecipe();
    expect(parseRecipe(JSON.stringify(d))).toEqual(d);
  });

  test('a full recipe is read as written', () => {
    const r = parseRecipe({
      schemaVersion: 1,
      name: 'clay tactoids, tiles',
      version: 3,
      calibration: { route: 'profile', profileId: 'scope-a-200kV-x400k', nmPerPx: 0.0213, relUncertainty: 0.02 },
      area: { kind: 'tiles', infoStripPx: 0, rows: 3, columns: 4 },
      measurements: [{ tool: 'spectrum', topK: 5 }, { tool: 'sheets' }],
      acceptance: { minStrength: 4, periodRangeNm: [0.9, 2.0], maxRelUncertainty: 0.1 },
      outputs: { figures: true, zip: true },
    });
    expect(r.calibration).toEqual({ route: 'profile', profileId: 'scope-a-200kV-x400k', nmPerPx: 0.0213, relUncertainty: 0.02 });
    expect(r.area).toEqual({ kind: 'tiles', infoStripPx: 0, rows: 3, columns: 4 });
    expect(r.measurements).toEqual([{ tool: 'spectrum', topK: 5 }, { tool: 'sheets' }]);
    expect(r.acceptance).toEqual({ minStrength: 4, periodRangeNm: [0.9, 2.0], maxRelUncertainty: 0.1 });
    expect(r.outputs).toEqual({ csv: true, json: true, figures: true, zip: true, coverageFactor: 2 });
  });

  test('lengths written with a unit are converted to nm', () => {
    // 1 Å = 0.1 nm, 1 µm = 1000 nm (SI definitions)
    const r = parseRecipe({ schemaVersion: 1, acceptance: { periodRangeNm: ['9.5 Å', '0.002 µm'] } });
    expect(r.acceptance.periodRangeNm![0]).toBeCloseTo(0.95, 12);
    expect(r.acceptance.periodRangeNm![1]).toBeCloseTo(2, 12);
  });

  test('a fixed calibration without an uncertainty gets 5 %', () => {
    // indicated TEM magnification ±5 %: EMSA abstract "Magnification determination for HREM"
    expect(parseRecipe({ schemaVersion: 1, calibration: { route: 'fixed', nmPerPx: 0.05 } }).calibration).toEqual({
      route: 'fixed',
      nmPerPx: 0.05,
      relUncertainty: 0.05,
    });
  });

  test('a centred crop defaults to half of each side', () => {
    expect(parseRecipe({ schemaVersion: 1, area: { kind: 'centre' } }).area).toEqual({ kind: 'centre', infoStripPx: 'auto', fraction: 0.5 });
  });

  test('the canonical JSON does not depend on key order', () => {
    const a = parseRecipe({ schemaVersion: 1, name: 'x', acceptance: { minStrength: 2, maxRelUncertainty: 0.2 } });
    const b = parseRecipe({ acceptance: { maxRelUncertainty: 0.2, minStrength: 2 }, name: 'x', schemaVersion: 1 });
    expect(canonicalRecipeJson(a)).toBe(canonicalRecipeJson(b));
    expect(canonicalRecipeJson(a)).not.toBe(canonicalRecipeJson(parseRecipe({ schemaVersion: 1, name: 'y' })));
  });
});

describe('parseRecipe rejects, naming the path', () => {
  const cases: [string, unknown, string, RegExp][] = [
    ['text that is not JSON', '{ schemaVersion: 1', '', /not valid JSON/],
    ['a top level that is not an object', [1, 2], '', /must be an object/],
    ['a missing schemaVersion', { name: 'x' }, 'schemaVersion', /is required/],
    ['an unsupported schemaVersion', { schemaVersion: 2 }, 'schemaVersion', /not supported/],
    ['an unknown top-level key', { schemaVersion: 1, colour: 'red' }, 'colour', /unknown key/],
    ['a name that is not a string', { schemaVersion: 1, name: 7 }, 'name', /must be a string/],
    ['an empty name', { schemaVersion: 1, name: '  ' }, 'name', /must not be empty/],
    ['a fractional version', { schemaVersion: 1, version: 1.5 }, 'version', /integer/],
    ['an unknown calibration route', { schemaVersion: 1, calibration: { route: 'guess' } }, 'calibration.route', /must be one of/],
    ['a profile without its pixel size', { schemaVersion: 1, calibration: { route: 'profile', profileId: 'p', relUncertainty: 0.02 } }, 'calibration.nmPerPx', /required/],
    ['a negative pixel size', { schemaVersion: 1, calibration: { route: 'fixed', nmPerPx: -0.1 } }, 'calibration.nmPerPx', /greater than 0/],
    ['a relative uncertainty above 1', { schemaVersion: 1, calibration: { route: 'fixed', nmPerPx: 0.1, relUncertainty: 5 } }, 'calibration.relUncertainty', /at most 1/],
    ['a pixel size as a string', { schemaVersion: 1, calibration: { route: 'fixed', nmPerPx: '0.1' } }, 'calibration.nmPerPx', /finite number/],
    ['an extra key on the metadata route', { schemaVersion: 1, calibration: { route: 'metadata', nmPerPx: 0.1 } }, 'calibration.nmPerPx', /unknown key/],
    ['a pixel size in µm under an nm key', { schemaVersion: 1, calibration: { route: 'fixed', umPerPx: 0.1 } }, 'calibration.umPerPx', /unknown key/],
    ['an unknown area kind', { schemaVersion: 1, area: { kind: 'circle' } }, 'area.kind', /must be one of/],
    ['a crop fraction above 1', { schemaVersion: 1, area: { kind: 'centre', fraction: 1.5 } }, 'area.fraction', /at most 1/],
    ['a crop with fraction and size', { schemaVersion: 1, area: { kind: 'centre', fraction: 0.5, sizePx: 256 } }, 'area', /not both/],
    ['a fractional crop size', { schemaVersion: 1, area: { kind: 'centre', sizePx: 255.5 } }, 'area.sizePx', /integer/],
    ['zero tile rows', { schemaVersion: 1, area: { kind: 'tiles', rows: 0 } }, 'area.rows', /at least 1/],
    ['an information strip in words', { schemaVersion: 1, area: { kind: 'whole', infoStripPx: 'bottom' } }, 'area.infoStripPx', /"auto" or a height/],
    ['a negative information strip', { schemaVersion: 1, area: { kind: 'whole', infoStripPx: -4 } }, 'area.infoStripPx', /at least 0/],
    ['measurements that are not a list', { schemaVersion: 1, measurements: { tool: 'spectrum' } }, 'measurements', /array/],
    ['no measurement step', { schemaVersion: 1, measurements: [] }, 'measurements', /at least one/],
    ['an unknown tool', { schemaVersion: 1, measurements: [{ tool: 'spectrum' }, { tool: 'ruler' }] }, 'measurements[1].tool', /must be one of/],
    ['a tool listed twice', { schemaVersion: 1, measurements: [{ tool: 'rings' }, { tool: 'rings' }] }, 'measurements[1].tool', /twice/],
    ['topK of zero', { schemaVersion: 1, measurements: [{ tool: 'spectrum', topK: 0 }] }, 'measurements[0].topK', /at least 1/],
    ['an option the tool does not take', { schemaVersion: 1, measurements: [{ tool: 'sheets', topK: 2 }] }, 'measurements[0].topK', /unknown key/],
    ['a period range in px', { schemaVersion: 1, acceptance: { periodRangeNm: ['20 px', '40 px'] } }, 'acceptance.periodRangeNm[0]', /pixels.*nm/],
    ['a period range with a unit that is no length', { schemaVersion: 1, acceptance: { periodRangeNm: [1, '2 s'] } }, 'acceptance.periodRangeNm[1]', /not a length unit/],
    ['a period range key in px', { schemaVersion: 1, acceptance: { periodRangePx: [20, 40] } }, 'acceptance.periodRangePx', /write periodRangeNm/],
    ['a period range of one value', { schemaVersion: 1, acceptance: { periodRangeNm: [1] } }, 'acceptance.periodRangeNm', /\[low, high\]/],
    ['a period range upside down', { schemaVersion: 1, acceptance: { periodRangeNm: [2, 1] } }, 'acceptance.periodRangeNm', /must be below/],
    ['a zero period', { schemaVersion: 1, acceptance: { periodRangeNm: [0, 1] } }, 'acceptance.periodRangeNm[0]', /greater than 0/],
    ['a negative minimum strength', { schemaVersion: 1, acceptance: { minStrength: -1 } }, 'acceptance.minStrength', /at least 0/],
    ['a relative uncertainty limit in percent', { schemaVersion: 1, acceptance: { maxRelUncertainty: 10 } }, 'acceptance.maxRelUncertainty', /at most 1/],
    ['an output flag as text', { schemaVersion: 1, outputs: { csv: 'yes' } }, 'outputs.csv', /true or false/],
    ['an unknown output', { schemaVersion: 1, outputs: { pdf: true } }, 'outputs.pdf', /unknown key/],
    ['a coverage factor of zero', { schemaVersion: 1, outputs: { coverageFactor: 0 } }, 'outputs.coverageFactor', /coverageFactor/],
  ];
  test.each(cases)('%s', (_what, json, path, message) => {
    const e = rejection(json);
    expect(e.path).toBe(path);
    expect(e.message).toMatch(message);
    expect(e.message).toContain(path || '(top level)');
  });
});
