/**
 * Small stand-ins for the decoder and measurement tools, for testing the batch core on its own:
 * synthetic data with known truth.
 */
import type { BatchDeps } from '../../src/batch/run';
import { makeGreyImage, type Calibration, type GreyImage } from '../../src/image/grey-image';
import { RECORD_VERSION, type Measurement, type Region } from '../../src/measure/measurement';

/**
 * A fake file format: "FAKE w h nmPerPx|none periodPx" as ASCII. The fake spectrum tool reports
 * that period (strength 10) and its second harmonic (strength 2) with 0.5 % statistical
 * uncertainty; the fake sheets tool finds one sheet of 2·periodPx per 100 px of region width.
 */
export function fakeFile(widthPx: number, heightPx: number, nmPerPx: number | null, periodPx: number): Uint8Array {
  return new TextEncoder().encode(`FAKE ${widthPx} ${heightPx} ${nmPerPx ?? 'none'} ${periodPx}`);
}

// the runner hands the tools a copy of the image with its calibration set: the pixel array is shared
const periodOfData = new WeakMap<GreyImage['data'], number>();
const periodOf = (image: GreyImage): number => {
  const p = periodOfData.get(image.data);
  if (p === undefined) throw new Error('unknown image');
  return p;
};

export function fakeDeps(over: Partial<BatchDeps> = {}): BatchDeps & { calls: { tool: string; region: Region; nmPerPx: number | null }[] } {
  const calls: { tool: string; region: Region; nmPerPx: number | null }[] = [];
  let n = 0;
  const meas = (tool: Measurement['tool'], image: GreyImage, region: Region, periods: [number, number][]): Measurement => ({
    recordVersion: RECORD_VERSION,
    id: `m${++n}`,
    imageId: null,
    fileName: 'x',
    createdIso: '2026-01-01T00:00:00.000Z',
    tool,
    region,
    calibration: image.calibration,
    settings: {},
    periodicities: periods.map(([periodPx, strength]) => ({
      periodPx,
      angleDeg: 30,
      geometry: 'normal' as const,
      u: { statisticalPx: periodPx * 0.005, localVariationPx: 0, methodPx: 0 },
      uAngleDeg: 0,
      strength,
      flags: [],
    })),
    notes: [],
  });
  return {
    calls,
    decodeImage(bytes: Uint8Array, fileName: string): GreyImage {
      const text = new TextDecoder().decode(bytes);
      // a file that takes its worker thread down with it (process.exit in a worker ends that thread only)
      if (text === 'CRASH') process.exit(7);
      // a file that never finishes, and one that fills the JavaScript heap: the per-file limits must stop them
      if (text === 'HANG') for (;;) { /* a decoder caught in a loop */ }
      if (text === 'HEAP') {
        const hog: number[][] = [];
        for (;;) hog.push(new Array(1 << 16).fill(hog.length));
      }
      const m = /^FAKE (\d+) (\d+) (\S+) (\S+)$/.exec(text);
      if (!m) throw new Error(`${fileName}: not a fake image`);
      const [w, h] = [Number(m[1]), Number(m[2])];
      const calibration: Calibration | null =
        m[3] === 'none' ? null : { nmPerPx: Number(m[3]), source: 'metadata', relUncertainty: 0.02, detail: 'fake tag' };
      const data = new Float32Array(w * h);
      for (let i = 0; i < data.length; i++) data[i] = (i % w) % 7;
      const img = makeGreyImage(w, h, data, { bitDepth: 16, sampleKind: 'uint', calibration });
      periodOfData.set(img.data, Number(m[4]));
      return img;
    },
    async spectrum(image, region, options) {
      calls.push({ tool: 'spectrum', region, nmPerPx: image.calibration?.nmPerPx ?? null });
      const p = periodOf(image);
      return meas('spectrum', image, region, ([[p, 10], [p / 2, 2]] as [number, number][]).slice(0, options.topK));
    },
    async rings(image, region) {
      calls.push({ tool: 'rings', region, nmPerPx: image.calibration?.nmPerPx ?? null });
      return meas('rings', image, region, [[periodOf(image), 5]]);
    },
    async sheets(image, region) {
      calls.push({ tool: 'sheets', region, nmPerPx: image.calibration?.nmPerPx ?? null });
      const p = periodOf(image);
      const count = Math.floor((region.kind === 'rect' ? region.width : 0) / 100);
      const t = 2 * p * (image.calibration?.nmPerPx ?? NaN);
      return { measurement: meas('sheets-auto', image, region, []), thicknessNm: Array.from({ length: count }, (_, i) => t + (i % 2 ? 0.1 : -0.1)) };
    },
    ...over,
  };

}

/** The deps-module contract of the batch command: the fakes, for worker threads in tests. */
export async function createBatchDeps(): Promise<BatchDeps> {
  return fakeDeps();
}
