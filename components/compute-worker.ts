/// <reference lib="webworker" />
/**
 * The compute worker: heavy work off the page's thread. One handler per call in the table
 * below; results are sent back with their ArrayBuffers transferred, not copied.
 */
import type { CallArgs, CallName, CallResult, ComputeRequest, ComputeResponse } from './compute-protocol';
import { transferablesOf } from './compute-protocol';
import { buildPyramid, histogram } from './pyramid';
import { addSpotNear, filterSpots, profilePeriods, regionSpectrum } from './measure-worker-calls';

type Handlers = { [K in CallName]: (args: CallArgs<K>) => Promise<CallResult<K>> | CallResult<K> };

async function decode(args: CallArgs<'decode'>): Promise<CallResult<'decode'>> {
  const { decodeImage } = await import('../src/image/decode');
  return decodeImage(args.bytes, args.fileName);
}

function prepareView(args: CallArgs<'prepareView'>): CallResult<'prepareView'> {
  const levels = buildPyramid(args.image, { smallestSidePx: args.smallestSidePx });
  // The histogram of a level of about a million pixels shows the same distribution at a fraction of the cost.
  const forHistogram = [args.image, ...levels].find((l) => l.width * l.height <= 1 << 20) ?? levels[levels.length - 1] ?? args.image;
  return { levels, histogram: histogram(forHistogram) };
}

async function warmUp(): Promise<CallResult<'warmUp'>> {
  const { loadCv } = await import('../src/image/cv');
  const { cv } = await loadCv();
  const info = String(cv.getBuildInformation?.() ?? '');
  const version = /General configuration for OpenCV ([^\s=]+)/.exec(info)?.[1] ?? 'unknown';
  return { opencvVersion: version };
}

const handlers: Handlers = {
  decode,
  downsample: async ({ image, factor }) => (await import('../src/image/downsample')).downsample(image, factor),
  prepareView,
  warmUp,
  openImage: async (args) => {
    const image = await decode(args);
    return { image, ...prepareView({ image }) };
  },
  profilePeriods,
  regionSpectrum: async (args) => {
    // a region larger than opencv.js's heap can hold is refused with the size to draw instead
    const { checkSpectrumRegion } = await import('../src/image/size-limits');
    checkSpectrumRegion(args.image.width, args.image.height, { x: args.originX, y: args.originY }, 'app');
    return regionSpectrum(args);
  },
  addSpotNear,
  filterSpots,
  autoSheets: async ({ image, polarity }) => {
    const { findScaleBar } = await import('../src/calibration/scale-bar');
    const { detectSheets } = await import('../src/sheets/detect');
    const bar = findScaleBar(image);
    const excludedBox = bar ? bar.stripBox ?? bar.panelBox : null;
    return { sheets: detectSheets(image, { exclude: excludedBox, polarity }), excludedBox };
  },
  analysePattern: async ({ text, wavelength, fileName }) => {
    const { readPatternFile } = await import('../src/diffraction/read-pattern');
    const { analysePattern: analyse } = await import('../src/diffraction/analyse');
    const pattern = readPatternFile(text, fileName ?? 'the pattern', { wavelength });
    if (pattern.axis === 'twoTheta' && pattern.wavelengthNm === null) throw new Error('no wavelength in the file: choose one');
    return { pattern, analysis: analyse(pattern) };
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
};
