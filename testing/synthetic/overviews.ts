/**
 * Seeded synthetic overviews of edge-on layer stacks with known truth, for the sheet benchmark
 * (bench/sheets.ts) and the sheet tests (test-only code).
 *
 * Scenario: stacks of silicate layers (tactoids) seen edge-on in a polymer film, as in a
 * bright-field overview. Each layer absorbs (mass-thickness contrast: a Gaussian line of
 * absorbance across it), some stacks add a phase-contrast fringe term, crossing stacks multiply
 * their transmissions. The film has a slow thickness variation and an amorphous granularity; the
 * image is formed through ./imaging (blur, dose, Poisson counts, detector).
 *
 * The families vary on purpose (period 2.5–14 px, 1–16 layers, straight or bent, any direction,
 * dense or sparse, dose 25–1000 e/px, blur, granularity, polarity of contrast), because every
 * target is checked again on held-out seeds (`--seed`) and on real images.
 */
import type { GreyImage } from '../../src/image/grey-image';
import {
  bandPassField,
  canvasFor,
  exposeSpecimen,
  IDEAL_DETECTOR,
  intIn,
  logUniform,
  makeRandom,
  pick,
  powerLawField,
  type Random,
  uniformIn,
} from './imaging';

/** The overview families, in the order the benchmark prints them. */
export const OVERVIEW_FAMILIES = [
  'sparse',
  'dense',
  'bent',
  'two-orientations',
  'low-dose',
  'thin',
  'two-periods',
  'touching',
  'fringes',
  'amorphous',
  'crossed-lattice',
] as const;

/** One family's name. */
export type OverviewFamily = (typeof OVERVIEW_FAMILIES)[number];

/** One stack truly in the image. */
export interface TrueStack {
  /** Centre of the stack's axis (midway along it, in the middle of its thickness), px (x, row). */
  cx: number;
  cy: number;
  /** Direction of the layers at the centre, degrees in [0, 180), counter-clockwise from +x as shown (y up). */
  directionDeg: number;
  /** Direction of the layer normal at the centre (directionDeg + 90 reduced to [0, 180)). */
  normalDeg: number;
  /** Number of layers. */
  layers: number;
  /** Layer period (normal spacing), px. */
  periodPx: number;
  /** Thickness by the n·d convention, px. */
  thicknessPx: number;
  /** Length along the axis, px. */
  lengthPx: number;
  /** Signed curvature of the axis, 1/px (0: straight). */
  curvaturePerPx: number;
  /** Absorbance of one layer at its centre line. */
  absorbance: number;
  /** Amplitude of the phase-contrast fringe term relative to the film (0: none). */
  phaseContrast: number;
}

/** The truth of one overview. */
export interface OverviewTruth {
  family: OverviewFamily;
  seed: number;
  stacks: TrueStack[];
  /** The layer periods present (one per phase), px. */
  periodsPx: number[];
  dosePerPx: number;
  blurPx: number;
  /** Readable description of the case. */
  notes: string[];
}

/** A generated overview with its truth. */
export interface Overview {
  image: GreyImage;
  truth: OverviewTruth;
}

/** What a family draws before rendering. */
interface Plan {
  width: number;
  height: number;
  stacks: TrueStack[];
  periodsPx: number[];
  dosePerPx: number;
  blurPx: number;
  psfPx: number;
  filmAmplitude: number;
  granularity: number;
  granularityRingPerPx: number;
  /** Crossed lattice regions (negatives): centre, radius, period, two normal directions, amplitude. */
  lattices: { cx: number; cy: number; radiusPx: number; periodPx: number; anglesDeg: [number, number]; amplitude: number }[];
  notes: string[];
}

const DEG = Math.PI / 180;

/** Unit tangent and normal of a direction given as a screen angle (y up) in image axes (y down). */
function frame(directionDeg: number): { tx: number; ty: number; nx: number; ny: number } {
  const a = directionDeg * DEG;
  const tx = Math.cos(a);
  const ty = -Math.sin(a);
  // normal at +90° as shown
  return { tx, ty, nx: -Math.sin(a), ny: -Math.cos(a) };
}

/**
 * Coordinates of an image point relative to a stack: s along the axis (arc length, 0 at the
 * centre, positive along the direction), u across it (0 on the axis, positive along the normal).
 */
export function stackCoordinates(st: TrueStack, x: number, y: number): { s: number; u: number } {
  const { tx, ty, nx, ny } = frame(st.directionDeg);
  const dx = x - st.cx;
  const dy = y - st.cy;
  const k = st.curvaturePerPx;
  if (Math.abs(k) < 1e-9) return { s: dx * tx + dy * ty, u: dx * nx + dy * ny };
  // concentric arcs about the centre of curvature C = c + R n
  const R = 1 / k;
  const vx = dx - R * nx;
  const vy = dy - R * ny;
  const rho = Math.hypot(vx, vy);
  const u = Math.sign(R) * (Math.abs(R) - rho);
  const v0x = -R * nx;
  const v0y = -R * ny;
  const alpha = Math.atan2(v0x * vy - v0y * vx, v0x * vx + v0y * vy);
  return { s: -Math.sign(R) * Math.abs(R) * alpha, u };
}

/** The point of a stack's axis at arc length s, image px. */
export function stackAxisPoint(st: TrueStack, s: number): [number, number] {
  const { tx, ty, nx, ny } = frame(st.directionDeg);
  const k = st.curvaturePerPx;
  if (Math.abs(k) < 1e-9) return [st.cx + s * tx, st.cy + s * ty];
  const R = 1 / k;
  const a = s / R;
  // rotate from the centre along the arc: c + R n (1 − cos a) + R t sin a
  return [st.cx + R * Math.sin(a) * tx + R * (1 - Math.cos(a)) * nx, st.cy + R * Math.sin(a) * ty + R * (1 - Math.cos(a)) * ny];
}

function makeStack(r: Random, o: { cx: number; cy: number; directionDeg: number; layers: number; periodPx: number; lengthPx: number; curvaturePerPx: number; phaseContrast?: number }): TrueStack {
  return {
    cx: o.cx,
    cy: o.cy,
    directionDeg: ((o.directionDeg % 180) + 180) % 180,
    normalDeg: (((o.directionDeg + 90) % 180) + 180) % 180,
    layers: o.layers,
    periodPx: o.periodPx,
    thicknessPx: o.layers * o.periodPx,
    lengthPx: o.lengthPx,
    curvaturePerPx: o.curvaturePerPx,
    absorbance: uniformIn(r, 0.18, 0.4),
    phaseContrast: o.phaseContrast ?? (r.uniform() < 0.3 ? uniformIn(r, 0.02, 0.06) : 0),
  };
}

/** Smallest distance between points of two stacks' axes (sampled every 4 px). */
function axisDistance(a: TrueStack, b: TrueStack): number {
  let best = Infinity;
  for (let s = -a.lengthPx / 2; s <= a.lengthPx / 2; s += 4) {
    const [x, y] = stackAxisPoint(a, s);
    const q = stackCoordinates(b, x, y);
    if (Math.abs(q.s) > b.lengthPx / 2) continue;
    best = Math.min(best, Math.abs(q.u));
  }
  return best;
}

function axialDiff(a: number, b: number): number {
  const d = Math.abs((((a - b) % 180) + 180) % 180);
  return Math.min(d, 180 - d);
}

/**
 * Whether a new stack may join the others: it stays inside the image, and no near-parallel
 * stack lies on it or closer than `gapPeriods` periods of background (two such stacks are one
 * to any observer); stacks at larger angles may cross.
 */
function fits(st: TrueStack, others: TrueStack[], w: number, h: number, gapPeriods: number): boolean {
  const margin = 16 + st.thicknessPx / 2;
  for (const s of [-st.lengthPx / 2, 0, st.lengthPx / 2]) {
    const [x, y] = stackAxisPoint(st, s);
    if (x < margin || y < margin || x > w - 1 - margin || y > h - 1 - margin) return false;
  }
  for (const o of others) {
    const parallel = axialDiff(st.directionDeg, o.directionDeg) < 25;
    const d = Math.min(axisDistance(st, o), axisDistance(o, st));
    const need = parallel ? (st.thicknessPx + o.thicknessPx) / 2 + gapPeriods * Math.max(st.periodPx, o.periodPx) + 4 : 0;
    if (parallel && d < need) return false;
    // crossings at a shallow angle make long overlaps: keep them above 25°
  }
  return true;
}

/** Draws stacks one by one (up to `tries` attempts each) until `count` fit. */
function placeStacks(
  r: Random,
  w: number,
  h: number,
  count: number,
  draw: (k: number) => Omit<Parameters<typeof makeStack>[1], 'cx' | 'cy'> & { cx?: number; cy?: number },
  existing: TrueStack[] = [],
  gapPeriods = 4,
): TrueStack[] {
  const out = [...existing];
  for (let k = 0; k < count; k++) {
    for (let t = 0; t < 200; t++) {
      const d = draw(k);
      const st = makeStack(r, { cx: d.cx ?? uniformIn(r, 0.1 * w, 0.9 * w), cy: d.cy ?? uniformIn(r, 0.1 * h, 0.9 * h), ...d });
      if (fits(st, out, w, h, gapPeriods)) {
        out.push(st);
        break;
      }
    }
  }
  return out;
}

function layersDrawn(r: Random, lo: number, hi: number): number {
  return intIn(r, lo, hi);
}

function curvatureDrawn(r: Random, bentShare: number, minRadiusPx: number, maxRadiusPx: number): number {
  if (r.uniform() >= bentShare) return 0;
  return (r.uniform() < 0.5 ? -1 : 1) / logUniform(r, minRadiusPx, maxRadiusPx);
}

function basePlan(r: Random, family: OverviewFamily, size: number): Plan {
  return {
    width: size,
    height: size,
    stacks: [],
    periodsPx: [],
    dosePerPx: logUniform(r, 150, 1000),
    blurPx: uniformIn(r, 0.4, 1.0),
    psfPx: r.uniform() < 0.3 ? uniformIn(r, 0.3, 0.7) : 0,
    filmAmplitude: uniformIn(r, 0.02, 0.07),
    granularity: uniformIn(r, 0.01, 0.04),
    granularityRingPerPx: uniformIn(r, 0.12, 0.3),
    lattices: [],
    notes: [family],
  };
}

function planFamily(family: OverviewFamily, seed: number, sizePx?: number): Plan {
  const r = makeRandom(seed * 7919 + OVERVIEW_FAMILIES.indexOf(family) * 104729 + 17);
  const drawn = pick(r, [512, 640, 768]);
  const size = sizePx ?? drawn;
  // a larger field holds proportionally more stacks
  const many = (lo: number, hi: number) => Math.round(intIn(r, lo, hi) * (size / drawn) ** 2);
  const p = basePlan(r, family, size);
  const period = () => logUniform(r, 2.5, 12);
  const len = (lo: number, hi: number) => uniformIn(r, lo, hi);
  switch (family) {
    case 'sparse': {
      const d = period();
      p.periodsPx = [d];
      p.stacks = placeStacks(r, size, size, intIn(r, 4, 7), () => ({ directionDeg: 180 * r.uniform(), layers: layersDrawn(r, 2, 12), periodPx: d, lengthPx: len(Math.max(70, 8 * d), 260), curvaturePerPx: curvatureDrawn(r, 0.3, 400, 2000) }));
      break;
    }
    case 'dense': {
      const d = logUniform(r, 2.5, 6);
      p.periodsPx = [d];
      p.stacks = placeStacks(r, size, size, many(14, 22), () => ({ directionDeg: 180 * r.uniform(), layers: layersDrawn(r, 2, 10), periodPx: d, lengthPx: len(80, 240), curvaturePerPx: curvatureDrawn(r, 0.4, 300, 2000) }), [], 2.5);
      break;
    }
    case 'bent': {
      const d = period();
      p.periodsPx = [d];
      p.stacks = placeStacks(r, size, size, intIn(r, 4, 7), () => {
        const lengthPx = len(150, 320);
        return { directionDeg: 180 * r.uniform(), layers: layersDrawn(r, 2, 10), periodPx: d, lengthPx, curvaturePerPx: (r.uniform() < 0.5 ? -1 : 1) / uniformIn(r, Math.max(150, lengthPx / 1.6), 600) };
      });
      break;
    }
    case 'two-orientations': {
      const d = period();
      p.periodsPx = [d];
      const a = 180 * r.uniform();
      const b = a + uniformIn(r, 50, 90);
      p.stacks = placeStacks(r, size, size, intIn(r, 6, 10), (k) => ({ directionDeg: (k % 2 ? b : a) + uniformIn(r, -6, 6), layers: layersDrawn(r, 2, 10), periodPx: d, lengthPx: len(160, 400), curvaturePerPx: curvatureDrawn(r, 0.2, 800, 3000) }), [], 2);
      p.notes.push(`directions near ${a.toFixed(0)}° and ${(b % 180).toFixed(0)}°, stacks crossing`);
      break;
    }
    case 'low-dose': {
      const d = logUniform(r, 3, 12);
      p.periodsPx = [d];
      p.dosePerPx = logUniform(r, 25, 80);
      p.stacks = placeStacks(r, size, size, intIn(r, 4, 7), () => ({ directionDeg: 180 * r.uniform(), layers: layersDrawn(r, 2, 12), periodPx: d, lengthPx: len(Math.max(90, 10 * d), 300), curvaturePerPx: curvatureDrawn(r, 0.3, 400, 2000) }));
      break;
    }
    case 'thin': {
      const d = logUniform(r, 3, 10);
      p.periodsPx = [d];
      // mono- and bilayers, with a few thicker stacks that show the period
      p.stacks = placeStacks(r, size, size, intIn(r, 6, 9), (k) => ({ directionDeg: 180 * r.uniform(), layers: k < 2 ? layersDrawn(r, 4, 9) : k % 2 ? 1 : 2, periodPx: d, lengthPx: len(100, 300), curvaturePerPx: curvatureDrawn(r, 0.3, 400, 2000) }));
      break;
    }
    case 'two-periods': {
      const d1 = logUniform(r, 2.6, 6);
      const d2 = d1 * uniformIn(r, 1.4, 2.2);
      p.periodsPx = [d1, d2];
      p.stacks = placeStacks(r, size, size, intIn(r, 6, 9), (k) => {
        const d = k % 2 ? d2 : d1;
        return { directionDeg: 180 * r.uniform(), layers: layersDrawn(r, 3, 10), periodPx: d, lengthPx: len(Math.max(90, 10 * d), 280), curvaturePerPx: curvatureDrawn(r, 0.25, 500, 2000) };
      });
      p.notes.push(`periods ${d1.toFixed(2)} and ${d2.toFixed(2)} px`);
      break;
    }
    case 'touching': {
      const d = period();
      p.periodsPx = [d];
      const pairs = intIn(r, 2, 4);
      const stacks: TrueStack[] = [];
      for (let k = 0; k < pairs; k++) {
        for (let t = 0; t < 200; t++) {
          const dir = 180 * r.uniform();
          const n1 = layersDrawn(r, 2, 9);
          const n2 = layersDrawn(r, 2, 9);
          const lengthPx = len(Math.max(120, 12 * d), 300);
          const a = makeStack(r, { cx: uniformIn(r, 0.2 * size, 0.8 * size), cy: uniformIn(r, 0.2 * size, 0.8 * size), directionDeg: dir, layers: n1, periodPx: d, lengthPx, curvaturePerPx: 0 });
          // the partner: parallel, a gap of 1.5–4 periods of background between their outer layers
          const gap = uniformIn(r, 1.5, 4) * d;
          const sep = (n1 * d + n2 * d) / 2 + gap - d;
          const { nx, ny, tx, ty } = frame(dir);
          const shift = uniformIn(r, -0.3, 0.3) * lengthPx;
          const b = makeStack(r, { cx: a.cx + sep * nx + shift * tx, cy: a.cy + sep * ny + shift * ty, directionDeg: dir + uniformIn(r, -2, 2), layers: n2, periodPx: d, lengthPx: lengthPx * uniformIn(r, 0.7, 1.1), curvaturePerPx: 0 });
          if (fits(a, stacks, size, size, 4) && fits(b, stacks, size, size, 4)) {
            stacks.push(a, b);
            break;
          }
        }
      }
      p.stacks = stacks;
      p.notes.push('pairs of parallel stacks 1.5–4 periods apart');
      break;
    }
    case 'fringes': {
      // stacks seen mostly by phase contrast: fringes with little mean darkening
      const d = logUniform(r, 4, 14);
      p.periodsPx = [d];
      p.stacks = placeStacks(r, size, size, intIn(r, 3, 6), () => ({ directionDeg: 180 * r.uniform(), layers: layersDrawn(r, 3, 12), periodPx: d, lengthPx: len(Math.max(120, 10 * d), 320), curvaturePerPx: curvatureDrawn(r, 0.3, 500, 2000), phaseContrast: uniformIn(r, 0.06, 0.12) }));
      for (const s of p.stacks) s.absorbance = uniformIn(r, 0.03, 0.08);
      break;
    }
    case 'amorphous': {
      p.granularity = uniformIn(r, 0.03, 0.08);
      p.filmAmplitude = uniformIn(r, 0.04, 0.1);
      p.notes.push('no stacks');
      break;
    }
    case 'crossed-lattice': {
      const d = logUniform(r, 3, 12);
      const a = 180 * r.uniform();
      const count = intIn(r, 1, 3);
      for (let k = 0; k < count; k++) {
        p.lattices.push({ cx: uniformIn(r, 0.3 * size, 0.7 * size), cy: uniformIn(r, 0.3 * size, 0.7 * size), radiusPx: uniformIn(r, 0.12 * size, 0.3 * size), periodPx: d, anglesDeg: [a + 40 * k, a + 40 * k + pick(r, [60, 90, 120])], amplitude: uniformIn(r, 0.06, 0.15) });
      }
      p.notes.push('crossed lattice fringes, no stacks');
      for (const L of p.lattices) p.notes.push(`lattice d ${L.periodPx.toFixed(2)} px at ${L.cx.toFixed(0)},${L.cy.toFixed(0)} r ${L.radiusPx.toFixed(0)} normals ${L.anglesDeg.map((x) => x.toFixed(0)).join('/')}° amplitude ${L.amplitude.toFixed(3)}`);
      break;
    }
  }
  return p;
}

/**
 * Renders a plan: film × transmission of the stacks + phase fringes + lattices, then the imaging chain.
 */
function render(p: Plan, r: Random): GreyImage {
  const canvas = canvasFor(p.width, p.height, p.blurPx, p.psfPx);
  const m = canvas.marginPx;
  const cw = p.width + 2 * m;
  const ch = p.height + 2 * m;
  const film = powerLawField(cw, ch, r, 64);
  const gran = bandPassField(cw, ch, r, p.granularityRingPerPx, 1.8);
  const absorb = new Float64Array(cw * ch);
  const phase = new Float64Array(cw * ch);
  const sub = [0.25, 0.75];
  for (const st of p.stacks) {
    const half = (st.layers * st.periodPx) / 2;
    const sg = Math.max(0.45, uniformInFixed(st) * st.periodPx);
    const reach = st.lengthPx / 2 + half + 3 * st.periodPx + Math.abs(st.curvaturePerPx) * st.lengthPx * st.lengthPx / 8 + 4;
    const x0 = Math.max(0, Math.floor(st.cx - reach) + m);
    const x1 = Math.min(cw - 1, Math.ceil(st.cx + reach) + m);
    const y0 = Math.max(0, Math.floor(st.cy - reach) + m);
    const y1 = Math.min(ch - 1, Math.ceil(st.cy + reach) + m);
    const first = -half + st.periodPx / 2;
    for (let j = y0; j <= y1; j++) {
      for (let i = x0; i <= x1; i++) {
        let a = 0;
        let ph = 0;
        for (const sy of sub) {
          for (const sx of sub) {
            const { s, u } = stackCoordinates(st, i - m + sx - 0.5, j - m + sy - 0.5);
            const end = Math.min(1, Math.max(0, (st.lengthPx / 2 - Math.abs(s)) / st.periodPx + 0.5));
            if (end <= 0 || Math.abs(u) > half + 4 * st.periodPx) continue;
            let v = 0;
            for (let k = 0; k < st.layers; k++) {
              const dd = u - (first + k * st.periodPx);
              if (Math.abs(dd) < 5 * sg) v += Math.exp((-0.5 * dd * dd) / (sg * sg));
            }
            a += 0.25 * end * st.absorbance * v;
            if (st.phaseContrast > 0) {
              const band = Math.min(1, Math.max(0, (half - Math.abs(u)) / (0.5 * st.periodPx) + 0.5));
              ph -= 0.25 * end * band * st.phaseContrast * Math.cos((2 * Math.PI * (u - first)) / st.periodPx);
            }
          }
        }
        absorb[j * cw + i] += a;
        phase[j * cw + i] += ph;
      }
    }
  }
  const specimen = new Float64Array(cw * ch);
  for (let j = 0; j < ch; j++) {
    for (let i = 0; i < cw; i++) {
      const k = j * cw + i;
      let v = (1 + p.filmAmplitude * film[k] + p.granularity * gran[k]) * Math.exp(-absorb[k]) + phase[k];
      for (const L of p.lattices) {
        const dx = i - m - L.cx;
        const dy = j - m - L.cy;
        const rr = Math.hypot(dx, dy);
        const w = Math.min(1, Math.max(0, (L.radiusPx - rr) / 8));
        if (w <= 0) continue;
        let f = 0;
        for (const ang of L.anglesDeg) {
          const nx = Math.cos(ang * DEG);
          const ny = -Math.sin(ang * DEG);
          f += Math.cos((2 * Math.PI * (dx * nx + dy * ny)) / L.periodPx);
        }
        v -= w * L.amplitude * 0.5 * f;
      }
      specimen[k] = Math.max(0, v);
    }
  }
  const detector = { ...IDEAL_DETECTOR, gainAduPerE: 4, offsetAdu: 500, readNoiseE: 1, psfPx: p.psfPx };
  return exposeSpecimen(canvas, specimen, { blurPx: p.blurPx, dosePerPx: p.dosePerPx, illumination: null, detector }, r).image;
}

/** The layer line's σ as a fraction of the period, fixed per stack by its own numbers (0.15–0.3). */
function uniformInFixed(st: TrueStack): number {
  const h = Math.abs(Math.sin(st.cx * 12.9898 + st.cy * 78.233) * 43758.5453) % 1;
  return 0.15 + 0.15 * h;
}

/**
 * One seeded overview of a family.
 * @param family which family
 * @param seed any non-negative integer (the benchmark's held-out sets shift it)
 * @param options sizePx: a square field of this side instead of the drawn one (the dense family
 *   then holds proportionally more stacks; used to time large overviews)
 * @returns the image (16-bit counts, uncalibrated) and its truth
 */
export function generateOverview(family: OverviewFamily, seed: number, options: { sizePx?: number } = {}): Overview {
  if (!OVERVIEW_FAMILIES.includes(family)) throw new RangeError(`unknown overview family ${JSON.stringify(family)}`);
  if (!(Number.isInteger(seed) && seed >= 0)) throw new RangeError(`seed must be a non-negative integer, got ${seed}`);
  if (options.sizePx !== undefined && !(Number.isInteger(options.sizePx) && options.sizePx >= 128)) throw new RangeError(`sizePx must be an integer ≥ 128, got ${options.sizePx}`);
  const plan = planFamily(family, seed, options.sizePx);
  const r = makeRandom(seed * 31 + 5 + OVERVIEW_FAMILIES.indexOf(family));
  const image = render(plan, r);
  const notes = [...plan.notes, `${plan.width} × ${plan.height} px`, `dose ${plan.dosePerPx.toFixed(0)} e/px`, `blur ${plan.blurPx.toFixed(2)} px`, `${plan.stacks.length} stacks`];
  return {
    image,
    truth: { family, seed, stacks: plan.stacks, periodsPx: plan.periodsPx, dosePerPx: plan.dosePerPx, blurPx: plan.blurPx, notes },
  };
}

/** A found sheet as the scorer needs it. */
export interface FoundSheet {
  layers: number;
  thicknessPx: number;
  centerPx: [number, number];
  /** Direction of the layer normal, degrees. */
  angleDeg: number;
}

/** How a set of found sheets compares with the truth. */
export interface OverviewScore {
  /** For each true stack, the index of the found sheet matched to it, or −1. */
  matchOf: number[];
  /** Found sheets matched to no true stack (spurious, duplicates included). */
  spurious: number;
}

/**
 * Matches found sheets to true stacks one to one.
 * @param truth the true stacks
 * @param found the sheets found
 * @returns the match of every true stack and the number of spurious sheets
 * Notes: a sheet matches a stack when its centre lies on the stack (within half the thickness
 * plus two periods across, inside its length along) and its normal is within 15° of the stack's
 * normal there; the closest pairs are taken first.
 */
export function scoreOverview(truth: TrueStack[], found: FoundSheet[]): OverviewScore {
  const pairs: { t: number; f: number; d: number }[] = [];
  truth.forEach((st, t) => {
    found.forEach((f, i) => {
      const { s, u } = stackCoordinates(st, f.centerPx[0], f.centerPx[1]);
      if (Math.abs(s) > st.lengthPx / 2 + 4) return;
      if (Math.abs(u) > st.thicknessPx / 2 + 2 * st.periodPx + 2) return;
      // the normal turns along a bent stack by s·κ radians
      const localNormal = st.normalDeg + (s * st.curvaturePerPx * 180) / Math.PI;
      if (axialDiff(f.angleDeg, localNormal) > 15) return;
      pairs.push({ t, f: i, d: Math.abs(u) + 0.05 * Math.abs(s) });
    });
  });
  pairs.sort((a, b) => a.d - b.d);
  const matchOf = truth.map(() => -1);
  const used = new Set<number>();
  for (const p of pairs) {
    if (matchOf[p.t] >= 0 || used.has(p.f)) continue;
    matchOf[p.t] = p.f;
    used.add(p.f);
  }
  return { matchOf, spurious: found.length - used.size };
}
