/**
 * The measurement-tool registry: every way of measuring declared once, with its core function,
 * the record kind it writes, its own CSV columns (units in the names), its figure over the image,
 * the app panel that shows it and the batch recipe step that runs it. The compute worker, the
 * command line, batch recipes, the library and every export look tools up here.
 *
 * Adding a tool: write its core function (returning a `Measurement`), add its kind to `ToolKind`
 * (src/measure/measurement.ts) and one entry to `TOOLS`, show it in one panel, test it. See the developer guide,
 * docs/developers.md.
 */
import type { GreyImage } from '../image/grey-image';
import type { Workspace } from '../image/workspace';
import { periodLabel, type FigureShape } from '../figure/shapes';
import { expressLength, noUncertainty, type LengthGeometry, type Measurement, type Region, type ToolKind } from './measurement';
import type { ProfileEstimator } from './profile-measurement';
import type { RectPx } from './spectrum';

/** The record kind of every registered tool: defined with the record (add a kind there and its entry to TOOLS below). */
export type { ToolKind };

/** One CSV cell: text, a number, or empty (null). */
export type CsvCell = string | number | null | undefined;

/** What a tool's core function may be given besides the image, the target and the settings. */
export interface ToolContext {
  /** Buffers to reuse from call to call (batch workers). */
  workspace?: Workspace;
  /** File name recorded in the measurement. */
  fileName?: string;
}

/** One registered measurement tool. */
export interface MeasurementToolEntry {
  /** The record kind it writes (`Measurement.tool`); also its id. */
  kind: ToolKind;
  /** Its name in the user's words. */
  label: string;
  /** What it measures: a rectangle (null: the whole image) or a line with a width. */
  target: 'rect' | 'line';
  /** How its periods convert to nm (see nmPerPxAlong). */
  geometry: LengthGeometry;
  /**
   * The core function: measures the target of the image with the given settings (each tool's own;
   * unknown keys are ignored, absent ones take the tool's defaults) and returns the record, in
   * image pixels, with the image's calibration.
   */
  run(image: GreyImage, target: Region | null, settings?: Record<string, unknown>, context?: ToolContext): Promise<Measurement>;
  /** Its own CSV columns beside the common ones of every period row (units in the names). */
  columns: readonly string[];
  /** The cells of those columns for the period at `index` of a record. */
  cells(m: Measurement, index: number): CsvCell[];
  /** Its figure: shapes in image pixels to draw over the image for a record. */
  figure(m: Measurement): FigureShape[];
  /** The app panel that shows it: the id of `components/<panel>-panel.ts`. */
  panel: string;
  /** The batch recipe step that runs it (`measurements[].tool` of a recipe), when a recipe can. */
  recipeStep?: string;
}

function rectOf(target: Region | null, kind: string): RectPx | null {
  if (target === null) return null;
  if (target.kind !== 'rect') throw new RangeError(`the ${kind} tool measures a rectangle, got a ${target.kind}`);
  return { x: target.x, y: target.y, width: target.width, height: target.height };
}

function lineOf(target: Region | null, kind: string): Extract<Region, { kind: 'line' }> {
  if (!target || target.kind !== 'line') throw new RangeError(`the ${kind} tool measures along a line, got ${target ? `a ${target.kind}` : 'none'}`);
  return target;
}

/** The detail entry at `index` of a record's list `key` (or an empty object). */
function detailAt(m: Measurement, key: string, index: number): Record<string, unknown> {
  const list = m.detail?.[key];
  return Array.isArray(list) && list[index] && typeof list[index] === 'object' ? (list[index] as Record<string, unknown>) : {};
}

const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);

/** A length along a direction in nm under the record's calibration (null when uncalibrated). */
function lengthNm(m: Measurement, lengthPx: unknown, angleDeg: number): number | null {
  const v = num(lengthPx);
  if (v === null || !m.calibration) return null;
  return Number(expressLength(v, noUncertainty(), m.calibration, { geometry: 'line', angleDeg }).value.toPrecision(6));
}

/** The rectangle a record was measured on, labelled with its strongest period. */
function regionFigure(m: Measurement, name: string): FigureShape[] {
  const r = m.region;
  if (!r || r.kind !== 'rect') return [];
  const top = m.periodicities[0];
  return [{ kind: 'rect', x: r.x, y: r.y, width: r.width, height: r.height, label: top ? `${name} · d ${periodLabel(top, m.calibration)}` : name, tone: 'info' }];
}

/** Every registered tool, in the order exports and menus list them. */
export const TOOLS: readonly MeasurementToolEntry[] = [
  {
    kind: 'profile',
    label: 'profile period',
    target: 'line',
    geometry: 'line',
    async run(image, target, settings = {}, context = {}) {
      const { analyseProfile } = await import('./profile-measurement');
      const line = lineOf(target, 'profile');
      return analyseProfile(image, line, { estimator: (settings.estimator as ProfileEstimator | undefined) ?? 'hann', fileName: context.fileName }).measurement;
    },
    columns: ['estimator', 'fringes'],
    cells: (m, i) => {
      const e = detailAt(m, 'estimators', i);
      return [typeof e.method === 'string' ? e.method : null, num(e.fringes)];
    },
    figure: (m) => {
      const r = m.region;
      if (!r || r.kind !== 'line') return [];
      const p = m.periodicities[0];
      return [{ kind: 'line', x0: r.x0, y0: r.y0, x1: r.x1, y1: r.y1, widthPx: r.widthPx, label: p ? `profile · d ${periodLabel(p, m.calibration)}` : 'profile', tone: 'accent' }];
    },
    panel: 'measure',
  },
  {
    kind: 'spectrum',
    label: 'spectrum spots',
    target: 'rect',
    geometry: 'normal',
    async run(image, target, settings = {}, context = {}) {
      const { measureRegion } = await import('./measure-region');
      return measureRegion(image, rectOf(target, 'spectrum'), { ...settings, workspace: context.workspace, fileName: context.fileName });
    },
    columns: ['fxPerPx', 'fyPerPx', 'snr'],
    cells: (m, i) => {
      const s = detailAt(m, 'spots', i);
      return [num(s.fxPerPx), num(s.fyPerPx), num(s.snr)];
    },
    figure: (m) => regionFigure(m, 'FFT region'),
    panel: 'measure',
    recipeStep: 'spectrum',
  },
  {
    kind: 'rings',
    label: 'spectrum rings',
    target: 'rect',
    geometry: 'ring',
    async run(image, target, settings = {}, context = {}) {
      const { ringsMeasurement } = await import('./rings');
      return ringsMeasurement(image, rectOf(target, 'rings'), { alpha: settings.alpha as number | undefined, workspace: context.workspace, fileName: context.fileName });
    },
    columns: [],
    cells: () => [],
    figure: (m) => regionFigure(m, 'rings'),
    panel: 'measure',
    recipeStep: 'rings',
  },
  {
    kind: 'sheets-line',
    label: 'sheets along a line',
    target: 'line',
    geometry: 'line',
    async run(image, target, settings = {}, context = {}) {
      const { sheetsAlongLine } = await import('../sheets/line');
      const { lineSheetsMeasurement } = await import('../sheets/record');
      const line = lineOf(target, 'sheets-line');
      const r = sheetsAlongLine(image, line.x0, line.y0, line.x1, line.y1, { ...settings, widthPx: line.widthPx });
      return lineSheetsMeasurement(r, line, { id: globalThis.crypto.randomUUID(), imageId: null, fileName: context.fileName ?? '', calibration: image.calibration, settings });
    },
    columns: ['layers', 'thicknessPx', 'thicknessNm', 'centerXPx', 'centerYPx'],
    cells: (m, i) => sheetCells(m, i),
    figure: (m) => {
      const r = m.region;
      if (!r || r.kind !== 'line') return [];
      return [{ kind: 'line', x0: r.x0, y0: r.y0, x1: r.x1, y1: r.y1, widthPx: r.widthPx, label: `${m.periodicities.length} sheet${m.periodicities.length === 1 ? '' : 's'}`, tone: 'accent' }];
    },
    panel: 'sheets',
  },
  {
    kind: 'sheets-auto',
    label: 'automatic sheets',
    target: 'rect',
    geometry: 'normal',
    async run(image, target, _settings = {}, context = {}) {
      const { sheetsInRegion } = await import('../sheets/regions');
      return (await sheetsInRegion(image, rectOf(target, 'sheets-auto'), { fileName: context.fileName })).measurement;
    },
    columns: ['layers', 'thicknessPx', 'thicknessNm', 'centerXPx', 'centerYPx'],
    cells: (m, i) => sheetCells(m, i),
    figure: (m) => ((m.detail?.sheets as { layers: number; centerPx: [number, number]; status?: string }[] | undefined) ?? []).map((s) => ({
      kind: 'point', x: s.centerPx[0], y: s.centerPx[1], label: `${s.layers} L`, tone: s.status === 'rejected' ? 'warn' : s.status === 'accepted' ? 'accent' : 'info',
    })),
    panel: 'sheets',
    recipeStep: 'sheets',
  },
  {
    kind: 'domains',
    label: 'domain map',
    target: 'rect',
    geometry: 'normal',
    async run(image, target, _settings = {}, context = {}) {
      const { domainsInRegion } = await import('../sheets/regions');
      return domainsInRegion(image, rectOf(target, 'domains'), { fileName: context.fileName });
    },
    columns: ['tiles', 'areaPx2', 'centerXPx', 'centerYPx'],
    cells: (m, i) => {
      const d = detailAt(m, 'domains', i);
      const c = Array.isArray(d.centerPx) ? (d.centerPx as number[]) : [];
      return [num(d.tiles), num(d.areaPx), num(c[0]), num(c[1])];
    },
    figure: (m) => m.periodicities.map((p, i) => {
      const c = detailAt(m, 'domains', i).centerPx as [number, number] | undefined;
      return c ? ({ kind: 'point', x: c[0], y: c[1], label: `d ${periodLabel(p, m.calibration)}`, tone: 'info' } as FigureShape) : null;
    }).filter((s): s is FigureShape => s !== null),
    panel: 'sheets',
    recipeStep: 'domains',
  },
];

/** Cells of a sheet row: layers, thickness in px and nm (along the layer normal), centre. */
function sheetCells(m: Measurement, i: number): CsvCell[] {
  const s = detailAt(m, 'sheets', i);
  const c = Array.isArray(s.centerPx) ? (s.centerPx as number[]) : [];
  const angle = num(s.angleDeg) ?? m.periodicities[i]?.angleDeg ?? 0;
  return [num(s.layers), num(s.thicknessPx), lengthNm(m, s.thicknessPx, angle), num(c[0]), num(c[1])];
}

/**
 * The registered tool of a record kind.
 * @param kind a record kind (`Measurement.tool`)
 * @returns its entry
 * @throws RangeError naming the kind and the known ones when none is registered
 */
export function toolOf(kind: string): MeasurementToolEntry {
  const t = TOOLS.find((e) => e.kind === kind);
  if (!t) throw new RangeError(`no measurement tool '${kind}': the tools are ${TOOLS.map((e) => e.kind).join(', ')}`);
  return t;
}

/**
 * The registered tool a batch recipe step runs.
 * @param step a recipe's `measurements[].tool`
 * @returns its entry, or undefined when no tool runs that step
 */
export function toolOfRecipeStep(step: string): MeasurementToolEntry | undefined {
  return TOOLS.find((e) => e.recipeStep === step);
}

/** The recipe steps the registry can run, in registry order. */
export const RECIPE_STEPS: readonly string[] = TOOLS.flatMap((t) => (t.recipeStep ? [t.recipeStep] : []));
