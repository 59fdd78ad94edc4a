/// <reference lib="webworker" />
/**
 * The compute worker: heavy work off the page's thread, and the owner of the image sessions. One
 * handler per call in the table below, each a thin call into the core; results are sent back
 * with their ArrayBuffers transferred, not copied (a session's own arrays are never in a result).
 */
import type { CallArgs, CallName, CallResult, ComputeRequest, ComputeResponse } from './compute-protocol';
import { transferablesOf, VIEW_PICTURE_MAX_PX } from './compute-protocol';
import type { GreyImage } from '../src/image/grey-image';
import { buildPyramid } from '../src/image/pyramid';
import { displayLimits, greyHistogram, stretchToGrey, type DisplayLimits, type GreyHistogram } from '../src/image/display';
import * as session from '../src/measure/session';
import type { ImageSession } from '../src/measure/session';
import { toolOf } from '../src/measure/tools';
import { makeThumbnail } from '../src/store/thumbnail';
import { spectrumPicture } from '../src/figure/spectrum-picture';
import { sha256Hex } from '../src/store/bytes';

type Handlers = { [K in CallName]: (args: CallArgs<K>) => Promise<CallResult<K>> | CallResult<K> };

/** The open sessions by id (this worker's only state, with their view pyramids). */
const sessions = new Map<string, ImageSession>();
/** Each session's view pyramid, level 0 (the image itself) first, for viewPicture. */
const pyramids = new Map<string, GreyImage[]>();

/** Each session's last spectrum picture (a copy: the reply's arrays are transferred), for spectrumPicture. */
const spectrumPictures = new Map<string, { pictureId: number; picture: { width: number; height: number; logPower: Float32Array } }>();
let lastPictureId = 0;

/** Work to do once the current reply is sent (a prefetch the next request will want). */
let afterReply: (() => Promise<void>) | null = null;

function sessionOf(id: string): ImageSession {
  const s = sessions.get(id);
  if (!s) throw new Error(`the image is no longer open in the compute worker (session ${JSON.stringify(id)}): open it again`);
  return s;
}

/**
 * Decodes a file (openImage's first step). A Blob is read where its parts lie (decodeImageSource:
 * a TIFF a strip or tile at a time, other formats whole), so the worker never holds the whole
 * file beside its pixels; bytes are decoded as they are.
 */
async function decode(args: { file: Blob | Uint8Array; fileName: string }): Promise<GreyImage> {
  const { decodeImage, decodeImageSource } = await import('../src/image/decode');
  const { file, fileName } = args;
  if (file instanceof Uint8Array) return decodeImage(file, fileName);
  if (!(file instanceof Blob)) throw new TypeError(`openImage: file must be a Blob or a Uint8Array, got ${Object.prototype.toString.call(file)}`);
  const reader = new FileReaderSync();
  return decodeImageSource({ length: file.size, read: (offset, n) => new Uint8Array(reader.readAsArrayBuffer(file.slice(offset, offset + n))) }, fileName);
}

/**
 * The viewer's pyramid, the image's histogram and its display limits at two percentiles
 * (openImage's second step): all the pixel work the viewer needs before it shows the image.
 */
function prepareView(args: { image: GreyImage; lowPercent?: number; highPercent?: number }): { levels: GreyImage[]; histogram: GreyHistogram; limits: DisplayLimits } {
  const levels = buildPyramid(args.image);
  // The histogram and percentiles of a level of about a million pixels show the same distribution
  // at a fraction of the cost (the viewer takes them from the same level).
  const forStats = [args.image, ...levels].find((l) => l.width * l.height <= 1 << 20) ?? levels[levels.length - 1] ?? args.image;
  const limits = displayLimits(forStats.data, { lowPercent: args.lowPercent ?? 0.5, highPercent: args.highPercent ?? 99.5, step: 1 });
  return { levels, histogram: greyHistogram(forStats), limits };
}

/**
 * A pyramid level stretched between black and white to opaque grey RGBA, as an ImageBitmap.
 *
 * @param level the level's image
 * @param black grey value shown black
 * @param white grey value shown white (a white at or below black is taken as black + 1)
 * @param invert swap black and white
 * @returns the bitmap, level.width × level.height
 * Notes: the app's one display stretch (src/image/display.ts), so the page's fallback draw and this picture agree.
 * Reference: linear display stretch between two limits (common practice).
 */
async function levelBitmap(level: GreyImage, black: number, white: number, invert: boolean): Promise<ImageBitmap> {
  const n = level.width * level.height;
  const grey = stretchToGrey(level.data, { black, white: white > black ? white : black + 1 }, new Uint8ClampedArray(n), { invert });
  const rgba = new Uint8ClampedArray(n * 4);
  const out = new Uint32Array(rgba.buffer);
  for (let i = 0; i < n; i++) {
    const g = grey[i];
    out[i] = 0xff000000 | (g << 16) | (g << 8) | g;
  }
  return createImageBitmap(new ImageData(rgba, level.width, level.height));
}

async function warmUp(): Promise<CallResult<'warmUp'>> {
  const { loadCv } = await import('../src/image/cv');
  const { cv } = await loadCv();
  const info = String(cv.getBuildInformation?.() ?? '');
  const version = /General configuration for OpenCV ([^\s=]+)/.exec(info)?.[1] ?? 'unknown';
  return { opencvVersion: version };
}

/** Refuses a region larger than opencv.js's heap can hold, with the size to draw instead. */
async function guardRegion(width: number, height: number, origin: { x: number; y: number }): Promise<void> {
  const { checkSpectrumRegion } = await import('../src/image/size-limits');
  checkSpectrumRegion(width, height, origin, 'app');
}

const handlers: Handlers = {
  warmUp,
  openImage: async (args) => {
    const image = await decode(args);
    const sessionId = globalThis.crypto.randomUUID();
    sessions.set(sessionId, session.createImageSession(sessionId, image));
    const view = prepareView({ image, lowPercent: args.lowPercent, highPercent: args.highPercent });
    pyramids.set(sessionId, [image, ...view.levels]);
    // The page gets copies for its viewer (transferred); the session keeps the originals.
    const copy = (g: GreyImage): GreyImage => ({ ...g, data: g.data.slice(), warnings: [...g.warnings] });
    // the library's thumbnail, from the smallest level (the page only stores it)
    const thumbnail = makeThumbnail(view.levels[view.levels.length - 1] ?? image);
    // the library's content hash, here rather than on the page (a 128 MB file hashed there stalled it for most of a second)
    const bytes = args.file instanceof Uint8Array ? args.file : new Uint8Array(new FileReaderSync().readAsArrayBuffer(args.file));
    const sha = await sha256Hex(bytes);
    return { sessionId, image: copy(image), levels: view.levels.map(copy), histogram: view.histogram, limits: view.limits, thumbnail, sha256Hex: sha };
  },
  closeImage: ({ sessionId }) => {
    pyramids.delete(sessionId);
    spectrumPictures.delete(sessionId);
    return { closed: sessions.delete(sessionId) };
  },
  viewPicture: async ({ sessionId, level, black, white, invert }) => {
    sessionOf(sessionId);
    const levels = pyramids.get(sessionId) ?? [];
    const l = levels[level];
    if (!l) throw new RangeError(`viewPicture: level ${level} does not exist (the image has levels 0 to ${levels.length - 1})`);
    if (l.width * l.height > VIEW_PICTURE_MAX_PX) throw new RangeError(`viewPicture: level ${level} has ${l.width} × ${l.height} px, more than ${VIEW_PICTURE_MAX_PX} px`);
    if (!Number.isFinite(black) || !Number.isFinite(white)) throw new RangeError(`viewPicture: black ${black} and white ${white} must be finite`);
    return { level, black, white, invert, bitmap: await levelBitmap(l, black, white, invert) };
  },
  recalibrate: ({ sessionId, calibration }) => {
    session.recalibrateSession(sessionOf(sessionId), calibration);
    return { sessionId };
  },
  runTool: async ({ sessionId, tool, target, settings }) => {
    const s = sessionOf(sessionId);
    const entry = toolOf(tool);
    if (target?.kind === 'rect' && (entry.kind === 'spectrum' || entry.kind === 'rings')) await guardRegion(target.width, target.height, target);
    return entry.run(s.image, target, settings);
  },
  profile: ({ sessionId, line, estimator }) => session.profileIn(sessionOf(sessionId), line, estimator),
  spectrum: async ({ sessionId, rect, settings, displayPx, prepareSpots }) => {
    const s = sessionOf(sessionId);
    await guardRegion(rect.width, rect.height, rect);
    const view = session.spectrumView(await session.regionAnalysis(s, rect, settings), displayPx, settings.alpha);
    // after the reply: what a click on the spectrum will need, so that a click runs no transform
    if (prepareSpots !== false) afterReply = () => session.prepareRegionSpots(s, rect, settings);
    const pictureId = ++lastPictureId;
    spectrumPictures.set(sessionId, { pictureId, picture: { ...view.picture, logPower: view.picture.logPower.slice() } });
    return { ...view, pictureId };
  },
  spectrumPicture: async ({ sessionId, pictureId, zoom }) => {
    sessionOf(sessionId);
    const kept = spectrumPictures.get(sessionId);
    if (!kept || kept.pictureId !== pictureId) throw new Error(`spectrumPicture: spectrum ${pictureId} is no longer kept (the last is ${kept?.pictureId ?? 'none'}): compute the spectrum again`);
    const pic = spectrumPicture(kept.picture, zoom);
    return { pictureId, zoom, bitmap: await createImageBitmap(new ImageData(new Uint8ClampedArray(pic.rgba.buffer as ArrayBuffer, pic.rgba.byteOffset, pic.rgba.byteLength), pic.width, pic.height)) };
  },
  spotNear: ({ sessionId, rect, settings, fx, fy, radiusBins }) => ({ spot: session.spotNearIn(sessionOf(sessionId), rect, settings, fx, fy, radiusBins) }),
  spotBudget: async ({ sessionId, rect, settings, spot }) => ({ spot: await session.spotBudgetIn(sessionOf(sessionId), rect, settings, spot) }),
  filter: ({ sessionId, rect, spots, displayPx }) => session.filterIn(sessionOf(sessionId), rect, spots, displayPx),
  sessionStats: ({ sessionId }) => ({ ...sessionOf(sessionId).stats }),
  imageReport: async ({ sessionId, form, fileName, records, plots, k, software }) => {
    const { imageReportHtml, imageFigureSvg, recordShapes } = await import('../src/figure/report');
    const { image } = sessionOf(sessionId);
    if (form === 'svg') return { text: imageFigureSvg(image, recordShapes(records, k), image.calibration, 2048) };
    return { text: imageReportHtml({ image, fileName, records, plots, k, software }) };
  },
  sheetsFind: async ({ sessionId, polarity, periodPx }) => {
    const { image } = sessionOf(sessionId);
    const { findScaleBar } = await import('../src/calibration/scale-bar');
    const { detectSheets } = await import('../src/sheets/detect');
    const bar = findScaleBar(image);
    const excludedBox = bar ? bar.stripBox ?? bar.panelBox : null;
    return { result: detectSheets(image, { exclude: excludedBox, polarity, periodPx }), excludedBox };
  },
  sheetsLine: async ({ sessionId, line, polarity, periodPx, periods }) => {
    const { image } = sessionOf(sessionId);
    const { sheetsAlongLine } = await import('../src/sheets/line');
    return sheetsAlongLine(image, line.x0, line.y0, line.x1, line.y1, { widthPx: line.widthPx, polarity, periodPx, periods });
  },
  cameraConstant: async ({ sessionId, standard, voltageKv, detectorPixelUm }) => {
    const { image } = sessionOf(sessionId);
    const { calibrateCameraConstant } = await import('../src/diffraction/electron/camera-constant');
    const { ringStandard, userRingStandard } = await import('../src/diffraction/electron/standards');
    const s = 'id' in standard ? ringStandard(standard.id) : userRingStandard(standard.aNm, standard.uANm, standard.centring);
    return calibrateCameraConstant(image, s, { voltageKv, detectorPixelUm });
  },
  electronPattern: async ({ sessionId, camera, what }) => {
    const { image } = sessionOf(sessionId);
    const { measureElectronPattern } = await import('../src/diffraction/electron/measure');
    return measureElectronPattern(image, camera, { what });
  },
  analysePattern: async ({ text, wavelength, columns, fileName, internalStandard, lp }) => {
    const { readPatternFile } = await import('../src/diffraction/read-pattern');
    const { analysePattern: analyse } = await import('../src/diffraction/analyse');
    const { internalStandardFrom } = await import('../src/diffraction/internal-standard');
    const pattern = readPatternFile(text, fileName ?? 'the pattern', { wavelength, columns });
    if (pattern.axis === 'twoTheta' && pattern.wavelengthNm === null) throw new Error('no wavelength in the file: choose one');
    const standard = internalStandard === undefined ? undefined
      : 'id' in internalStandard ? internalStandardFrom(internalStandard.id)
        : internalStandardFrom(`cubic:${internalStandard.aNm}±${internalStandard.uANm}:${internalStandard.centring}`);
    return { pattern, analysis: analyse(pattern, { internalStandard: standard, lp }) };
  },
  indexSpots: async ({ spots, cifText, cifName, builtIn }) => {
    const z = await import('../src/diffraction/zone-axis');
    if (cifText !== undefined) {
      const { parseCif } = await import('../src/diffraction/cif');
      const phase = z.zonePhaseFromStructure(parseCif(cifText, { fileName: cifName ?? 'the structure file' }), 0.08);
      return { ...z.indexSpots(spots, phase), source: cifName ?? 'structure file' };
    }
    const b = z.BUILT_IN_PHASES.find((p) => p.name === builtIn);
    if (!b) throw new Error(`no built-in phase '${builtIn}'`);
    return { ...z.indexSpots(spots, z.zonePhaseFromLattice(b.name, b.cell, 0.06, b.allows)), source: `built-in ${b.name} (${b.source})` };
  },
};

const scope = self as unknown as DedicatedWorkerGlobalScope;
scope.onmessage = async (event: MessageEvent<ComputeRequest>) => {
  const { id, name, args } = event.data;
  let reply: ComputeResponse;
  try {
    const handler = handlers[name] as (a: unknown) => unknown;
    if (!handler) throw new Error(`the compute worker has no call named ${JSON.stringify(name)}`);
    reply = { id, ok: true, result: await handler(args) };
  } catch (e) {
    const err = e instanceof Error ? e : new Error(String(e));
    reply = { id, ok: false, error: { name: err.name, message: err.message } };
  }
  scope.postMessage(reply, reply.ok ? transferablesOf(reply.result) : []);
  const next = afterReply;
  afterReply = null;
  if (next) await next().catch(() => undefined); // a failed prefetch is redone (and reported) by the request that needs it
};
