/**
 * Batch recipes: a saved, named, versioned set of steps that is applied to every image of a
 * batch — how to calibrate, which part of the image to analyse, what to measure, which results
 * to accept and what to write.
 *
 * A recipe is plain JSON with a `schemaVersion`. `parseRecipe` validates a recipe written by
 * hand (or stored by the app), names the path of any offending key, and fills in defaults.
 */
import { INDICATED_MAGNIFICATION_REL } from '../calibration/calibration';
import { RECIPE_STEPS } from '../measure/tools';

/** The recipe format this code reads and writes. */
export const RECIPE_SCHEMA_VERSION = 1;

/** How each image gets its pixel size. */
export type CalibrationRoute =
  /** The pixel size the file itself records (TIFF resolution, instrument tags). */
  | { route: 'metadata' }
  /** The scale bar burnt into the image, found and read automatically. */
  | { route: 'scale-bar' }
  /** A saved instrument profile, with its pixel size embedded so the recipe stands alone. */
  | { route: 'profile'; profileId: string; nmPerPx: number; relUncertainty: number }
  /** One value typed in by the user for every image. */
  | { route: 'fixed'; nmPerPx: number; relUncertainty: number };

/** Which part of each image is analysed. */
export type AnalysisArea =
  /** The whole image except the information strip. */
  | { kind: 'whole'; infoStripPx: 'auto' | number }
  /** A centred square or rectangle: `fraction` of each side, or `sizePx` pixels on a side. */
  | { kind: 'centre'; infoStripPx: 'auto' | number; fraction?: number; sizePx?: number }
  /** A grid of equal tiles over the image without the information strip. */
  | { kind: 'tiles'; infoStripPx: 'auto' | number; rows: number; columns: number };

/** One measurement step. */
export type MeasurementStep =
  /** The strongest periodicities of the 2D power spectrum. */
  | { tool: 'spectrum'; topK: number }
  /** Rings of the radial average of the power spectrum (powder-like, randomly oriented fringes). */
  | { tool: 'rings' }
  /** Automatic detection of sheets, their thickness and layer counts. */
  | { tool: 'sheets' }
  /** A map of domains of different fringe orientation and period. */
  | { tool: 'domains' };

/** Which periodicities count as results. */
export interface Acceptance {
  /** Smallest strength (the estimator's own scale, e.g. spot power over background) accepted. */
  minStrength: number;
  /** Accepted period range [low, high] in nm; null accepts every period. */
  periodRangeNm: [number, number] | null;
  /** Largest accepted relative standard uncertainty uncertaintyNm / periodNm; null accepts all. */
  maxRelUncertainty: number | null;
}

/** What the batch writes. */
export interface Outputs {
  /** A CSV table, one row per measured period. */
  csv: boolean;
  /** The full results as JSON. */
  json: boolean;
  /** An annotated PNG per image and SVG histograms for the batch. */
  figures: boolean;
  /** Every export file of the batch in one zip archive as well. */
  zip: boolean;
  /** Coverage factor k of every expanded uncertainty U = k·u in the exports (default 2, about 95 %). */
  coverageFactor: number;
}

/** A complete, validated recipe (every default filled in). */
export interface Recipe {
  schemaVersion: typeof RECIPE_SCHEMA_VERSION;
  /** Name shown to the user. */
  name: string;
  /** The recipe's own revision, counted up by the user when they change it (integer ≥ 1). */
  version: number;
  /** Free text. */
  description: string;
  calibration: CalibrationRoute;
  area: AnalysisArea;
  /** Measurement steps, run in this order; each tool at most once. */
  measurements: MeasurementStep[];
  acceptance: Acceptance;
  outputs: Outputs;
}

/** A recipe that is not valid; `path` names the offending key (e.g. `acceptance.periodRangeNm[1]`). */
export class RecipeError extends Error {
  override name = 'RecipeError';
  /** The problem alone, without the path. */
  readonly problem: string;
  /** The recipe file's name, when the recipe was read from a file (it then starts the message). */
  readonly fileName: string | null;
  constructor(
    readonly path: string,
    problem: string,
    fileName: string | null = null,
  ) {
    super(`${fileName ? `${fileName}: ` : ''}recipe ${path || '(top level)'}: ${problem}`);
    this.problem = problem;
    this.fileName = fileName;
  }
}

/** Where JSON.parse stopped, as "line L, column C" of the text, from the position it reports (or null). */
function jsonPlace(text: string, message: string): string | null {
  const m = /position (\d+)/.exec(message);
  if (!m) return /end of (JSON )?input/i.test(message) ? 'the text ends in the middle of a value' : null;
  const pos = Math.min(Number(m[1]), text.length);
  const before = text.slice(0, pos);
  return `line ${before.split('\n').length}, column ${pos - before.lastIndexOf('\n')}`;
}

/**
 * Reads a recipe file: parseRecipe with the file's name at the start of every error.
 * @param text - the file's text.
 * @param fileName - its name.
 * @returns the recipe.
 * @throws RecipeError naming the file and the path of the offending key.
 */
export function readRecipeFile(text: string, fileName: string): Recipe {
  try {
    return parseRecipe(text);
  } catch (e) {
    if (e instanceof RecipeError) throw new RecipeError(e.path, e.problem, fileName);
    throw e;
  }
}

/** The recipe used when none is given: metadata calibration, whole image, top three spectrum periods. */
export function defaultRecipe(): Recipe {
  return {
    schemaVersion: RECIPE_SCHEMA_VERSION,
    name: 'default',
    version: 1,
    description: 'Pixel size from the file, whole image without the information strip, the three strongest spectrum periods.',
    calibration: { route: 'metadata' },
    area: { kind: 'whole', infoStripPx: 'auto' },
    measurements: [{ tool: 'spectrum', topK: 3 }],
    acceptance: { minStrength: 0, periodRangeNm: null, maxRelUncertainty: null },
    outputs: { csv: true, json: true, figures: false, zip: false, coverageFactor: 2 },
  };
}

type Json = unknown;

function describe(v: Json): string {
  if (v === null) return 'null';
  if (Array.isArray(v)) return 'an array';
  if (typeof v === 'string') return `the string ${JSON.stringify(v)}`;
  if (typeof v === 'object') return 'an object';
  return `${typeof v} ${String(v)}`;
}

function isObject(v: Json): v is Record<string, Json> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function objectAt(v: Json, path: string, allowed: string[]): Record<string, Json> {
  if (!isObject(v)) throw new RecipeError(path, `must be an object, got ${describe(v)}`);
  for (const key of Object.keys(v)) {
    if (!allowed.includes(key)) {
      const hint = unitHint(key, allowed);
      throw new RecipeError(join(path, key), `unknown key${hint}; allowed here: ${allowed.join(', ')}`);
    }
  }
  return v;
}

/** Suggests the right key when a key differs from an allowed one only by its unit suffix. */
function unitHint(key: string, allowed: string[]): string {
  const m = /^(.*?)(Px|Nm|Um|Angstrom|A|Pm|Mm|Deg|Rad)$/.exec(key);
  if (!m) return '';
  const stem = m[1];
  const match = allowed.find((a) => a !== key && a.startsWith(stem) && /(Px|Nm|Deg)$/.test(a) && a.length - stem.length <= 3);
  return match ? ` (this key takes its value in ${match.slice(stem.length).toLowerCase()}: write ${match})` : '';
}

function join(path: string, key: string | number): string {
  if (typeof key === 'number') return `${path}[${key}]`;
  return path ? `${path}.${key}` : key;
}

function numberAt(v: Json, path: string, check: { min?: number; max?: number; minExclusive?: boolean; integer?: boolean } = {}): number {
  if (typeof v !== 'number' || !Number.isFinite(v)) throw new RecipeError(path, `must be a finite number, got ${describe(v)}`);
  if (check.integer && !Number.isInteger(v)) throw new RecipeError(path, `must be an integer, got ${v}`);
  if (check.min !== undefined) {
    if (check.minExclusive ? !(v > check.min) : !(v >= check.min)) {
      throw new RecipeError(path, `must be ${check.minExclusive ? 'greater than' : 'at least'} ${check.min}, got ${v}`);
    }
  }
  if (check.max !== undefined && !(v <= check.max)) throw new RecipeError(path, `must be at most ${check.max}, got ${v}`);
  return v;
}

function stringAt(v: Json, path: string): string {
  if (typeof v !== 'string') throw new RecipeError(path, `must be a string, got ${describe(v)}`);
  return v;
}

function booleanAt(v: Json, path: string): boolean {
  if (typeof v !== 'boolean') throw new RecipeError(path, `must be true or false, got ${describe(v)}`);
  return v;
}

/** Length units a recipe may write for an nm-valued key, as nm per unit. */
const NM_PER_UNIT: Record<string, number> = { nm: 1, 'Å': 0.1, A: 0.1, angstrom: 0.1, pm: 0.001, 'µm': 1000, um: 1000 };

/**
 * A length that must be in nm: a bare number (nm) or a string "<number> <unit>" with a length
 * unit (nm, Å, pm, µm), converted to nm. Pixels are refused: they are not a physical length.
 */
function lengthNmAt(v: Json, path: string): number {
  if (typeof v === 'number') return numberAt(v, path, { min: 0, minExclusive: true });
  if (typeof v === 'string') {
    // linear-time pattern: the fraction needs its dot (no nested optional digits to backtrack through)
    const m = v.length > 64 ? null : /^\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*([^\s\d]+)\s*$/.exec(v);
    if (!m) throw new RecipeError(path, `must be a length in nm (a number, or a string like "1.2 nm"), got ${describe(v)}`);
    const unit = m[2];
    if (unit === 'px' || unit === 'pixel' || unit === 'pixels') {
      throw new RecipeError(path, `is in pixels (${JSON.stringify(v)}); this key takes a physical length in nm`);
    }
    const factor = NM_PER_UNIT[unit];
    if (factor === undefined) throw new RecipeError(path, `unit ${JSON.stringify(unit)} is not a length unit (use nm, Å, pm or µm), got ${JSON.stringify(v)}`);
    return numberAt(Number(m[1]) * factor, path, { min: 0, minExclusive: true });
  }
  throw new RecipeError(path, `must be a length in nm (a number, or a string like "1.2 nm"), got ${describe(v)}`);
}

function parseCalibration(v: Json, path: string): CalibrationRoute {
  if (!isObject(v)) throw new RecipeError(path, `must be an object, got ${describe(v)}`);
  const route = v.route;
  switch (route) {
    case 'metadata':
    case 'scale-bar':
      objectAt(v, path, ['route']);
      return { route };
    case 'profile': {
      const o = objectAt(v, path, ['route', 'profileId', 'nmPerPx', 'relUncertainty']);
      for (const key of ['profileId', 'nmPerPx', 'relUncertainty']) {
        if (o[key] === undefined) throw new RecipeError(join(path, key), 'is required for the profile route');
      }
      const profileId = stringAt(o.profileId, join(path, 'profileId'));
      if (!profileId) throw new RecipeError(join(path, 'profileId'), 'must not be empty');
      return {
        route,
        profileId,
        nmPerPx: numberAt(o.nmPerPx, join(path, 'nmPerPx'), { min: 0, minExclusive: true }),
        relUncertainty: numberAt(o.relUncertainty, join(path, 'relUncertainty'), { min: 0, max: 1 }),
      };
    }
    case 'fixed': {
      const o = objectAt(v, path, ['route', 'nmPerPx', 'relUncertainty']);
      if (o.nmPerPx === undefined) throw new RecipeError(join(path, 'nmPerPx'), 'is required for the fixed route');
      return {
        route,
        nmPerPx: numberAt(o.nmPerPx, join(path, 'nmPerPx'), { min: 0, minExclusive: true }),
        // a typed-in value with no stated uncertainty: 5 % is the indicated-magnification tolerance (EMSA abstract)
        relUncertainty: o.relUncertainty === undefined ? INDICATED_MAGNIFICATION_REL : numberAt(o.relUncertainty, join(path, 'relUncertainty'), { min: 0, max: 1 }),
      };
    }
    default:
      throw new RecipeError(join(path, 'route'), `must be one of metadata, scale-bar, profile, fixed; got ${describe(route)}`);
  }
}

function parseInfoStrip(v: Json, path: string): 'auto' | number {
  if (v === undefined || v === 'auto') return 'auto';
  if (typeof v === 'string') throw new RecipeError(path, `must be "auto" or a height in pixels, got ${describe(v)}`);
  return numberAt(v, path, { min: 0, integer: true });
}

function parseArea(v: Json, path: string): AnalysisArea {
  if (!isObject(v)) throw new RecipeError(path, `must be an object, got ${describe(v)}`);
  const kind = v.kind;
  switch (kind) {
    case 'whole': {
      const o = objectAt(v, path, ['kind', 'infoStripPx']);
      return { kind, infoStripPx: parseInfoStrip(o.infoStripPx, join(path, 'infoStripPx')) };
    }
    case 'centre': {
      const o = objectAt(v, path, ['kind', 'infoStripPx', 'fraction', 'sizePx']);
      const infoStripPx = parseInfoStrip(o.infoStripPx, join(path, 'infoStripPx'));
      if (o.fraction !== undefined && o.sizePx !== undefined) {
        throw new RecipeError(path, 'give either fraction or sizePx for a centred crop, not both');
      }
      if (o.sizePx !== undefined) return { kind, infoStripPx, sizePx: numberAt(o.sizePx, join(path, 'sizePx'), { min: 8, integer: true }) };
      const fraction = o.fraction === undefined ? 0.5 : numberAt(o.fraction, join(path, 'fraction'), { min: 0, minExclusive: true, max: 1 });
      return { kind, infoStripPx, fraction };
    }
    case 'tiles': {
      const o = objectAt(v, path, ['kind', 'infoStripPx', 'rows', 'columns']);
      return {
        kind,
        infoStripPx: parseInfoStrip(o.infoStripPx, join(path, 'infoStripPx')),
        rows: o.rows === undefined ? 2 : numberAt(o.rows, join(path, 'rows'), { min: 1, max: 32, integer: true }),
        columns: o.columns === undefined ? 2 : numberAt(o.columns, join(path, 'columns'), { min: 1, max: 32, integer: true }),
      };
    }
    default:
      throw new RecipeError(join(path, 'kind'), `must be one of whole, centre, tiles; got ${describe(kind)}`);
  }
}

function parseMeasurements(v: Json, path: string): MeasurementStep[] {
  if (!Array.isArray(v)) throw new RecipeError(path, `must be an array of steps, got ${describe(v)}`);
  if (v.length === 0) throw new RecipeError(path, 'must hold at least one step');
  const seen = new Set<string>();
  return v.map((step, i) => {
    const p = join(path, i);
    if (!isObject(step)) throw new RecipeError(p, `must be an object, got ${describe(step)}`);
    const tool = step.tool;
    if (typeof tool === 'string' && seen.has(tool)) throw new RecipeError(join(p, 'tool'), `${tool} appears twice`);
    if (typeof tool === 'string') seen.add(tool);
    switch (tool) {
      case 'spectrum': {
        const o = objectAt(step, p, ['tool', 'topK']);
        return { tool, topK: o.topK === undefined ? 3 : numberAt(o.topK, join(p, 'topK'), { min: 1, max: 20, integer: true }) };
      }
      case 'rings':
      case 'sheets':
      case 'domains':
        objectAt(step, p, ['tool']);
        return { tool };
      default:
        throw new RecipeError(join(p, 'tool'), `must be one of ${RECIPE_STEPS.join(', ')}; got ${describe(tool)}`);
    }
  });
}

function parseAcceptance(v: Json, path: string): Acceptance {
  const o = objectAt(v, path, ['minStrength', 'periodRangeNm', 'maxRelUncertainty']);
  let periodRangeNm: [number, number] | null = null;
  if (o.periodRangeNm !== undefined && o.periodRangeNm !== null) {
    const p = join(path, 'periodRangeNm');
    if (!Array.isArray(o.periodRangeNm) || o.periodRangeNm.length !== 2) {
      throw new RecipeError(p, `must be [low, high] in nm, got ${describe(o.periodRangeNm)}`);
    }
    const low = lengthNmAt(o.periodRangeNm[0], join(p, 0));
    const high = lengthNmAt(o.periodRangeNm[1], join(p, 1));
    if (!(low < high)) throw new RecipeError(p, `low (${low} nm) must be below high (${high} nm)`);
    periodRangeNm = [low, high];
  }
  return {
    minStrength: o.minStrength === undefined ? 0 : numberAt(o.minStrength, join(path, 'minStrength'), { min: 0 }),
    periodRangeNm,
    maxRelUncertainty:
      o.maxRelUncertainty === undefined || o.maxRelUncertainty === null
        ? null
        : numberAt(o.maxRelUncertainty, join(path, 'maxRelUncertainty'), { min: 0, minExclusive: true, max: 1 }),
  };
}

function parseOutputs(v: Json, path: string): Outputs {
  const o = objectAt(v, path, ['csv', 'json', 'figures', 'zip', 'coverageFactor']);
  const d = defaultRecipe().outputs;
  const pick = (key: 'csv' | 'json' | 'figures' | 'zip') => (o[key] === undefined ? d[key] : booleanAt(o[key], join(path, key)));
  const coverageFactor = o.coverageFactor === undefined ? d.coverageFactor : numberAt(o.coverageFactor, join(path, 'coverageFactor'), { min: 0, minExclusive: true, max: 10 });
  return { csv: pick('csv'), json: pick('json'), figures: pick('figures'), zip: pick('zip'), coverageFactor };
}

/**
 * Validates a recipe and fills in defaults.
 *
 * @param json the recipe as JSON text or as an already parsed value
 * @returns a complete Recipe
 * @throws RecipeError naming the path of the first offending key: unknown keys, wrong types,
 *   out-of-range values, lengths not in nm (pixels are refused where nm is expected), a missing
 *   or unsupported schemaVersion
 * Notes: lengths for nm-valued keys may be numbers (nm) or strings with a length unit ("12 Å"),
 * converted to nm. Only `schemaVersion` is required; every other key has a default.
 */
export function parseRecipe(json: string | unknown): Recipe {
  let v: Json = json;
  if (typeof json === 'string') {
    try {
      v = JSON.parse(json);
    } catch (e) {
      const place = jsonPlace(json, (e as Error).message);
      throw new RecipeError('', `is not valid JSON${place ? ` (${place})` : ''}`);
    }
  }
  const o = objectAt(v, '', ['schemaVersion', 'name', 'version', 'description', 'calibration', 'area', 'measurements', 'acceptance', 'outputs']);
  if (o.schemaVersion === undefined) throw new RecipeError('schemaVersion', `is required (this program reads version ${RECIPE_SCHEMA_VERSION})`);
  if (o.schemaVersion !== RECIPE_SCHEMA_VERSION) {
    throw new RecipeError('schemaVersion', `${describe(o.schemaVersion)} is not supported (this program reads version ${RECIPE_SCHEMA_VERSION})`);
  }
  const d = defaultRecipe();
  const name = o.name === undefined ? 'unnamed' : stringAt(o.name, 'name');
  if (!name.trim()) throw new RecipeError('name', 'must not be empty');
  return {
    schemaVersion: RECIPE_SCHEMA_VERSION,
    name,
    version: o.version === undefined ? 1 : numberAt(o.version, 'version', { min: 1, integer: true }),
    description: o.description === undefined ? '' : stringAt(o.description, 'description'),
    calibration: o.calibration === undefined ? d.calibration : parseCalibration(o.calibration, 'calibration'),
    area: o.area === undefined ? d.area : parseArea(o.area, 'area'),
    measurements: o.measurements === undefined ? d.measurements : parseMeasurements(o.measurements, 'measurements'),
    acceptance: o.acceptance === undefined ? d.acceptance : parseAcceptance(o.acceptance, 'acceptance'),
    outputs: o.outputs === undefined ? d.outputs : parseOutputs(o.outputs, 'outputs'),
  };
}

/**
 * The recipe as canonical JSON (keys sorted, no spaces), so equal recipes give equal text and
 * equal hashes whatever order the user wrote the keys in.
 */
export function canonicalRecipeJson(recipe: Recipe): string {
  return canonicalJson(recipe);
}

/** JSON with object keys sorted at every level; undefined members are left out. */
export function canonicalJson(value: unknown): string {
  if (value === null || typeof value !== 'object') return JSON.stringify(value) ?? 'null';
  if (Array.isArray(value)) return `[${value.map((x) => canonicalJson(x ?? null)).join(',')}]`;
  const o = value as Record<string, unknown>;
  const keys = Object.keys(o)
    .filter((k) => o[k] !== undefined)
    .sort();
  return `{${keys.map((k) => `${JSON.stringify(k)}:${canonicalJson(o[k])}`).join(',')}}`;
}
