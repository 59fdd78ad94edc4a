/**
 * Families of synthetic lattice-fringe and lamellar images with known truth, for the coverage
 * benchmark (bench/coverage.ts) and the tests (test-only code).
 *
 * Each family draws its parameters from a seed (the project's generator, same numbers every run)
 * and renders the scene through the imaging chain of ./imaging: specimen → Gaussian blur → dose and
 * illumination → Poisson counts → detector. The truth is every periodicity that should be reported:
 * its period in px, the direction of its fringe normal as shown (counter-clockwise from +x, y up)
 * and its frequency vector along x and the row index (fy = −sin θ / d).
 *
 * The families vary widely on purpose (period 2.6–60 px log-uniform, any direction and phase,
 * regions 128–1024 px, square or not, dose, blur, profile, texture), because the results are checked
 * again on held-out seeds and real images.
 */
import type { GreyImage } from '../../src/image/grey-image';
import type { Detector, Random } from './imaging';
import { intIn, logUniform, makeRandom, pick, uniformIn } from './imaging';
import {
  bandLimited,
  darkLinesProfile,
  doubletProfile,
  type FringeProfile,
  harmonicAmplitude,
  mildProfile,
  sawtoothProfile,
  sineProfile,
} from './profiles';
import {
  axialAngleDeg,
  axialDifferenceDeg,
  blurGain,
  type FringeSet,
  frequencyOf,
  fundamentalContrast,
  type Illumination,
  type Mask,
  maskValue,
  NO_TEXTURE,
  renderScene,
  type Scene,
  type Texture,
  type Thickness,
} from './scene';

/** The families, in the order the benchmark prints them. */
export const FAMILIES = [
  'straight',
  'crossed',
  'curved',
  'small-crystal',
  'low-dose',
  'blur',
  'harmonics',
  'saturation',
  'uneven',
  'amorphous',
] as const;

/** One family's name. */
export type FamilyName = (typeof FAMILIES)[number];

/** Shortest and longest period drawn (px). */
export const PERIOD_RANGE_PX: readonly [number, number] = [2.6, 60];

/** One periodicity that is truly in the image. */
export interface TruePeriodicity {
  /** Normal spacing d in px. */
  periodPx: number;
  /** Direction of the fringe normal as shown, degrees in [0, 180). */
  angleDeg: number;
  /** Frequency vector, cycles/px, along x and along the row index. */
  fxPerPx: number;
  fyPerPx: number;
  /** Half-range of normal directions present (0 for straight fringes; 90 when all directions are). */
  angleSpreadDeg: number;
  /** Length of the periodic structure along its normal (px): the region, or the crystal's thickness. */
  extentPx: number;
  /** Amplitude of the fundamental relative to the mean intensity, after the blur. */
  fundamentalContrast: number;
  /**
   * SNR η = A²/(2σ²) per pixel of the fundamental (A its amplitude, σ² the white noise variance,
   * both in electrons) when the fringes fill the region and the noise is white; null otherwise
   * (then no Cramér–Rao bound applies).
   */
  whiteNoiseSnr: number | null;
  /** What it is (e.g. 'set 2 of 3', 'grain 1'). */
  label: string;
}

/** The truth of one generated image. */
export interface LatticeTruth {
  family: FamilyName;
  seed: number;
  /** The region to measure (null: the whole image). */
  region: { x: number; y: number; width: number; height: number } | null;
  /** What should be reported (empty for the amorphous family). */
  periodicities: TruePeriodicity[];
  /** Mean dose (electrons per pixel at transmission 1). */
  dosePerPx: number;
  /** Optical blur σ (px). */
  blurPx: number;
  /** Fraction of pixels clipped at the detector maximum. */
  saturatedFraction: number;
  /** Readable description of the case (style, profile, texture...). */
  notes: string[];
  /** The whole scene, so a case can be re-rendered or inspected. */
  scene: Scene;
}

/** A generated image with its truth. */
export interface LatticeImage {
  image: GreyImage;
  truth: LatticeTruth;
  /** Expected counts without noise (row-major, like the image). */
  expectedCounts: Float32Array;
}

/** Parameters a family drew, before rendering. */
interface Drawn {
  scene: Scene;
  periodicities: TruePeriodicity[];
  notes: string[];
}

/**
 * A region size: each side log-uniform in [max(128, minSide), 1024], square about a third of the time.
 * @param r generator; @param minSidePx smallest side allowed (e.g. 5 periods); @param maxSidePx largest side
 * @returns integer width and height
 */
function regionSize(r: Random, minSidePx: number, maxSidePx = 1024): { widthPx: number; heightPx: number } {
  const lo = Math.min(maxSidePx, Math.max(128, Math.ceil(minSidePx)));
  const w = Math.round(logUniform(r, lo, maxSidePx));
  if (r.uniform() < 0.35) return { widthPx: w, heightPx: w };
  return { widthPx: w, heightPx: Math.round(logUniform(r, lo, maxSidePx)) };
}

/** A period drawn log-uniformly in [lo, hi] px (default the whole range). */
function period(r: Random, lo = PERIOD_RANGE_PX[0], hi = PERIOD_RANGE_PX[1]): number {
  return logUniform(r, lo, hi);
}

/**
 * A profile drawn from the listed kinds and band-limited for the period.
 * @param r generator; @param kinds allowed kinds with weights; @param periodPx the period
 * @returns the profile
 */
function drawProfile(r: Random, kinds: [FringeProfile['kind'], number][], periodPx: number): FringeProfile {
  const kind = pick(
    r,
    kinds.map((k) => k[0]),
    kinds.map((k) => k[1]),
  );
  let p: FringeProfile;
  if (kind === 'sine') p = sineProfile();
  else if (kind === 'mild') p = mildProfile(uniformIn(r, 0.1, 0.45), uniformIn(r, 0, 2 * Math.PI));
  else if (kind === 'dark-lines') p = darkLinesProfile(uniformIn(r, 0.04, 0.14));
  else if (kind === 'doublet') p = doubletProfile(uniformIn(r, 0.04, 0.1), uniformIn(r, 0.4, 0.85), uniformIn(r, -0.08, 0.08));
  else p = sawtoothProfile(uniformIn(r, 0.02, 0.06));
  return bandLimited(p, periodPx);
}

/** A common detector: gain, offset, read noise; optional point-spread (correlated noise). */
function drawDetector(r: Random, psfOdds: number): Detector {
  return {
    gainAduPerE: logUniform(r, 0.5, 8),
    offsetAdu: Math.round(uniformIn(r, 0, 500)),
    readNoiseE: uniformIn(r, 0, 3),
    psfPx: r.uniform() < psfOdds ? uniformIn(r, 0.3, 0.9) : 0,
    saturatedFraction: 0,
    eightBitRangeFactor: 0,
  };
}

/** An amorphous texture of a random kind (or none with the given odds). */
function drawTexture(r: Random, noneOdds: number, contrastRange: [number, number]): Texture {
  if (r.uniform() < noneOdds) return NO_TEXTURE;
  const kind = pick(r, ['white', 'power-law', 'band-pass', 'mixed'] as const, [1, 2, 2, 1]);
  return {
    kind,
    contrast: uniformIn(r, contrastRange[0], contrastRange[1]),
    ringPerPx: logUniform(r, 0.04, 0.35),
    ringWidthRatio: uniformIn(r, 1.3, 2.5),
    maxScalePx: pick(r, [16, 32, 64]),
  };
}

/** A plane fringe set over the whole region at a random phase. */
function planeSet(r: Random, periodPx: number, angleDeg: number, contrast: number, profile: FringeProfile): FringeSet {
  return {
    periodPx,
    profile,
    contrast,
    geometry: { kind: 'plane', angleDeg, phaseCycles: r.uniform(), originXPx: 0, originYPx: 0 },
    mask: { kind: 'all' },
  };
}

/** Length of a w × h region along a direction (its projection). */
function extentAlong(widthPx: number, heightPx: number, angleDeg: number): number {
  const a = (angleDeg * Math.PI) / 180;
  return Math.abs(widthPx * Math.cos(a)) + Math.abs(heightPx * Math.sin(a));
}

/**
 * Truth of a plane set (direction exact, spread 0).
 * @param s the set; @param blurPx optical σ; @param extentPx its extent along the normal; @param label text
 * @returns the true periodicity without an SNR (set whiteNoiseSnr where the bound applies)
 */
function planeTruth(s: FringeSet, blurPx: number, extentPx: number, label: string): TruePeriodicity {
  if (s.geometry.kind !== 'plane') throw new RangeError('planeTruth needs a plane set');
  const angleDeg = ((s.geometry.angleDeg % 180) + 180) % 180;
  return {
    periodPx: s.periodPx,
    angleDeg,
    ...frequencyOf(s.periodPx, angleDeg),
    angleSpreadDeg: 0,
    extentPx,
    fundamentalContrast: fundamentalContrast(s, blurPx),
    whiteNoiseSnr: null,
    label,
  };
}

/**
 * White-noise SNR of a set's fundamental, in electrons: A = dose · contrast₁, σ² = dose (Poisson at
 * transmission 1) + read² + 1/(12 g²) (rounding to integer ADU, when the values before rounding spread).
 * @param contrast1 the fundamental's relative amplitude after blur; @param dosePerPx; @param d the detector
 * @returns η = A²/(2σ²)
 */
function whiteSnr(contrast1: number, dosePerPx: number, d: Detector): number {
  const a = dosePerPx * contrast1;
  // rounding to integer ADU adds 1/12 ADU² only when the values before rounding are spread out
  const spread = d.readNoiseE * d.gainAduPerE >= 0.3 || !Number.isInteger(d.gainAduPerE);
  const variance = dosePerPx + d.readNoiseE * d.readNoiseE + (spread ? 1 / (12 * d.gainAduPerE * d.gainAduPerE) : 0);
  return (a * a) / (2 * variance);
}

/** Profile description for notes. */
function profileNote(p: FringeProfile): string {
  const h2 = harmonicAmplitude(p, 2) / harmonicAmplitude(p, 1);
  const h3 = harmonicAmplitude(p, 3) / harmonicAmplitude(p, 1);
  return `${p.kind}${p.re.length > 1 ? ` (c2/c1 ${h2.toFixed(2)}, c3/c1 ${h3.toFixed(2)})` : ''}`;
}

/** Short description of a texture for notes. */
function textureNote(t: Texture): string {
  if (t.kind === 'none') return 'no texture';
  const ring = t.kind === 'band-pass' || t.kind === 'mixed' ? ` ring ${t.ringPerPx.toFixed(3)}/px` : '';
  return `texture ${t.kind} ${(t.contrast * 100).toFixed(1)}%${ring}`;
}

/** The base scene: size, no sets yet, even illumination. */
function baseScene(size: { widthPx: number; heightPx: number }, blurPx: number, dosePerPx: number, detector: Detector, texture: Texture): Scene {
  return { ...size, sets: [], meanSteps: [], texture, thickness: null, illumination: [], blurPx, dosePerPx, detector };
}

/**
 * `straight`: one set of straight fringes filling the region, white shot noise (plus read noise
 * and ADU rounding), varied dose, contrast and blur. The Cramér–Rao bound applies.
 */
function drawStraight(r: Random): Drawn {
  const d = period(r);
  const size = regionSize(r, 5 * d);
  const angleDeg = r.uniform() * 180;
  const profile = drawProfile(r, [['sine', 0.7], ['mild', 0.3]], d);
  const contrast = logUniform(r, 0.02, 0.3);
  const dose = logUniform(r, 20, 2000);
  const blurPx = uniformIn(r, 0, 0.2) * d;
  const detector = drawDetector(r, 0);
  const scene = baseScene(size, blurPx, dose, detector, NO_TEXTURE);
  const set = planeSet(r, d, angleDeg, contrast, profile);
  scene.sets.push(set);
  const t = planeTruth(set, blurPx, extentAlong(size.widthPx, size.heightPx, angleDeg), 'fringes');
  t.whiteNoiseSnr = whiteSnr(t.fundamentalContrast, dose, detector);
  return { scene, periodicities: [t], notes: [profileNote(profile), `contrast ${(contrast * 100).toFixed(1)}%`] };
}

/**
 * True if no harmonic (2g, 3g) or sum/difference of two listed vectors falls within 12 % of another
 * listed vector, unless that combination is itself listed (a 2D lattice's own spots).
 */
function wellSeparated(vs: { fx: number; fy: number }[]): boolean {
  const near = (a: { fx: number; fy: number }, b: { fx: number; fy: number }) => {
    const n = Math.hypot(b.fx, b.fy);
    return Math.min(Math.hypot(a.fx - b.fx, a.fy - b.fy), Math.hypot(a.fx + b.fx, a.fy + b.fy)) < 0.12 * n;
  };
  const spurious: { fx: number; fy: number }[] = [];
  for (const v of vs) for (const m of [2, 3]) spurious.push({ fx: m * v.fx, fy: m * v.fy });
  for (let i = 0; i < vs.length; i++) {
    for (let j = i + 1; j < vs.length; j++) {
      for (const s of [1, -1]) {
        const c = { fx: vs[i].fx + s * vs[j].fx, fy: vs[i].fy + s * vs[j].fy };
        if (!vs.some((v) => near(c, v) && near(v, c))) spurious.push(c);
      }
      if (near(vs[i], vs[j])) return false;
    }
  }
  return !spurious.some((c) => vs.some((v) => near(c, v)));
}

/**
 * `crossed`: two or three non-parallel fringe sets of different amplitudes: a hexagonal lattice
 * (three sets 60° apart, one period), an oblique 2D lattice (two periods 35–90° apart) or an
 * oblique lattice with its third spot g₁ ± g₂. Truth: each set.
 */
function drawCrossed(r: Random): Drawn {
  for (let attempt = 0; ; attempt++) {
    const style = pick(r, ['hexagonal', 'oblique', 'oblique-3'] as const, [0.4, 0.35, 0.25]);
    const theta0 = r.uniform() * 180;
    let sets: { d: number; a: number; rel: number }[];
    if (style === 'hexagonal') {
      const d = period(r, 2.6, 40);
      sets = [
        { d, a: theta0, rel: 1 },
        { d, a: theta0 + 60, rel: uniformIn(r, 0.3, 1) },
        { d, a: theta0 + 120, rel: uniformIn(r, 0.15, 0.8) },
      ];
    } else {
      const d1 = period(r, 2.6, 45);
      const d2 = Math.min(60, Math.max(2.6, d1 * logUniform(r, 0.6, 1.6)));
      const gamma = uniformIn(r, 35, 90) * (r.uniform() < 0.5 ? 1 : -1);
      sets = [
        { d: d1, a: theta0, rel: 1 },
        { d: d2, a: theta0 + gamma, rel: uniformIn(r, 0.25, 1) },
      ];
      if (style === 'oblique-3') {
        const g1 = frequencyOf(d1, theta0);
        const g2 = frequencyOf(d2, theta0 + gamma);
        const s = r.uniform() < 0.5 ? 1 : -1;
        const fx = g1.fxPerPx + s * g2.fxPerPx;
        const fy = g1.fyPerPx + s * g2.fyPerPx;
        sets.push({ d: 1 / Math.hypot(fx, fy), a: axialAngleDeg(fx, fy), rel: uniformIn(r, 0.15, 0.6) });
      }
    }
    const vs = sets.map((s) => {
      const f = frequencyOf(s.d, s.a);
      return { fx: f.fxPerPx, fy: f.fyPerPx };
    });
    if (attempt < 200 && (!wellSeparated(vs) || sets.some((s) => s.d < 2.6 || s.d > 60))) continue;
    const dMax = Math.max(...sets.map((s) => s.d));
    const dMin = Math.min(...sets.map((s) => s.d));
    const size = regionSize(r, 5 * dMax);
    const contrast = logUniform(r, 0.03, 0.2);
    const dose = logUniform(r, 30, 1000);
    const blurPx = uniformIn(r, 0, 0.15) * dMin;
    const texture = drawTexture(r, 0.5, [0.02, 0.1]);
    const scene = baseScene(size, blurPx, dose, drawDetector(r, 0.5), texture);
    const notes = [style, textureNote(texture)];
    const periodicities: TruePeriodicity[] = [];
    sets.forEach((s, i) => {
      const profile = drawProfile(r, [['sine', 0.6], ['mild', 0.3], ['dark-lines', 0.1]], s.d);
      const set = planeSet(r, s.d, ((s.a % 180) + 180) % 180, contrast * s.rel, profile);
      scene.sets.push(set);
      periodicities.push(planeTruth(set, blurPx, extentAlong(size.widthPx, size.heightPx, s.a), `set ${i + 1} of ${sets.length} (rel. amp. ${s.rel.toFixed(2)})`));
    });
    return { scene, periodicities, notes };
  }
}

/**
 * Largest angle between the radial direction about a centre and a reference direction, over the
 * points of a mask (sampled on a 41 × 41 grid); 90 when the centre lies inside the masked area.
 */
function arcSpreadDeg(cx: number, cy: number, refDeg: number, mask: Mask, widthPx: number, heightPx: number): number {
  let spread = 0;
  for (let j = 0; j <= 40; j++) {
    for (let i = 0; i <= 40; i++) {
      const x = (i / 40) * (widthPx - 1);
      const y = (j / 40) * (heightPx - 1);
      if (maskValue(mask, x, y) < 0.5) continue;
      spread = Math.max(spread, axialDifferenceDeg(axialAngleDeg(x - cx, y - cy), refDeg));
    }
  }
  const inside = cx >= 0 && cy >= 0 && cx <= widthPx - 1 && cy <= heightPx - 1 && maskValue(mask, cx, cy) >= 0.5;
  return inside ? 90 : spread;
}

/**
 * `curved`: lamellae of constant normal spacing d bent into concentric arcs, radius of curvature
 * R = 5–50 d at the region centre: 'bent' (the centre of curvature outside the region: an arc of
 * directions, region sides ≤ 1.4 R), or 'whorl' (any region size, the centre often inside:
 * fingerprint-like rings); or 3–6 grains of bent lamellae (Voronoi cells), each with its own
 * direction and curvature (R ≥ 1.2 × the grain size where 50 d allows). Truth: d, with the direction
 * at the region centre (or at each large grain's seed) and the spread of directions present.
 */
function drawCurved(r: Random): Drawn {
  const style = pick(r, ['bent', 'whorl', 'grains'] as const, [0.4, 0.25, 0.35]);
  const d = period(r, 2.6, 40);
  let size: { widthPx: number; heightPx: number };
  let k = 0;
  const n = style === 'grains' ? intIn(r, 3, 6) : 0;
  if (style === 'bent') {
    // sides ≤ 1.4 R keep the centre of curvature outside whatever the direction; sides ≥ 128 need R ≥ 92 px
    k = logUniform(r, Math.max(5, Math.max(128, 6 * d) / (1.4 * d)), 50);
    size = regionSize(r, 6 * d, Math.max(Math.max(128, Math.ceil(6 * d)), Math.min(1024, Math.floor(1.4 * k * d))));
  } else if (style === 'whorl') {
    k = logUniform(r, 5, 50);
    size = regionSize(r, 6 * d);
  } else {
    // grains about 60 d across at most, so a radius of curvature ≤ 50 d can exceed their size
    size = regionSize(r, 6 * d, Math.max(Math.max(128, Math.ceil(6 * d)), Math.min(1024, Math.floor(60 * d * Math.sqrt(n)))));
  }
  const { widthPx: w, heightPx: h } = size;
  const contrast = logUniform(r, 0.04, 0.25);
  const dose = logUniform(r, 30, 1000);
  const blurPx = uniformIn(r, 0, 0.15) * d;
  const texture = drawTexture(r, 0.5, [0.02, 0.08]);
  const scene = baseScene(size, blurPx, dose, drawDetector(r, 0.5), texture);
  const kinds: [FringeProfile['kind'], number][] = [['sine', 0.5], ['mild', 0.3], ['dark-lines', 0.2]];
  const periodicities: TruePeriodicity[] = [];
  const notes: string[] = [style, textureNote(texture)];
  if (style !== 'grains') {
    const psi = r.uniform() * 360;
    const radius = k * d;
    const a = (psi * Math.PI) / 180;
    // the centre of curvature lies at distance R from the region centre, against the normal ψ
    const cx = (w - 1) / 2 - radius * Math.cos(a);
    const cy = (h - 1) / 2 + radius * Math.sin(a);
    const profile = drawProfile(r, kinds, d);
    const set: FringeSet = { periodPx: d, profile, contrast, geometry: { kind: 'arcs', centreXPx: cx, centreYPx: cy, phaseCycles: r.uniform() }, mask: { kind: 'all' } };
    scene.sets.push(set);
    const angleDeg = ((psi % 180) + 180) % 180;
    const spread = arcSpreadDeg(cx, cy, angleDeg, set.mask, w, h);
    periodicities.push({
      periodPx: d,
      angleDeg,
      ...frequencyOf(d, angleDeg),
      angleSpreadDeg: spread,
      extentPx: extentAlong(w, h, angleDeg),
      fundamentalContrast: fundamentalContrast(set, blurPx),
      whiteNoiseSnr: null,
      label: `${style} R ${k.toFixed(1)} d`,
    });
    notes.push(profileNote(profile), `R/d ${k.toFixed(1)}`, `directions ±${spread.toFixed(0)}°`);
    return { scene, periodicities, notes };
  }
  let seeds: [number, number][] = [];
  let angles: number[] = [];
  for (let attempt = 0; attempt < 500; attempt++) {
    seeds = Array.from({ length: n }, () => [uniformIn(r, 0.05, 0.95) * w, uniformIn(r, 0.05, 0.95) * h] as [number, number]);
    angles = Array.from({ length: n }, () => r.uniform() * 180);
    const apart = angles.every((a, i) => angles.every((b, j) => i === j || axialDifferenceDeg(a, b) >= 20));
    if (apart) break;
  }
  const edgePx = uniformIn(r, 0.5, 2);
  const grainPx = Math.sqrt((w * h) / n);
  for (let g = 0; g < n; g++) {
    const kLo = Math.min(50, Math.max(5, (1.2 * grainPx) / d));
    const radius = logUniform(r, kLo, 50) * d * (r.uniform() < 0.5 ? 1 : -1);
    const a = (angles[g] * Math.PI) / 180;
    const cx = seeds[g][0] - radius * Math.cos(a);
    const cy = seeds[g][1] + radius * Math.sin(a);
    const mask: Mask = { kind: 'cell', seeds, index: g, edgePx };
    const profile = drawProfile(r, kinds, d);
    const set: FringeSet = { periodPx: d, profile, contrast: contrast * uniformIn(r, 0.6, 1), geometry: { kind: 'arcs', centreXPx: cx, centreYPx: cy, phaseCycles: r.uniform() }, mask };
    scene.sets.push(set);
    let inside = 0;
    for (let j = 0; j < 64; j++) for (let i = 0; i < 64; i++) if (maskValue(mask, ((i + 0.5) / 64) * w, ((j + 0.5) / 64) * h) >= 0.5) inside++;
    const fraction = inside / 4096;
    if (fraction < 0.15) continue;
    periodicities.push({
      periodPx: d,
      angleDeg: angles[g],
      ...frequencyOf(d, angles[g]),
      angleSpreadDeg: arcSpreadDeg(cx, cy, angles[g], mask, w, h),
      extentPx: Math.sqrt(fraction * w * h),
      fundamentalContrast: fundamentalContrast(set, blurPx),
      whiteNoiseSnr: null,
      label: `grain ${g + 1} of ${n} (${(fraction * 100).toFixed(0)}% area, R ${(Math.abs(radius) / d).toFixed(1)} d)`,
    });
  }
  notes.push(`${n} grains`);
  return { scene, periodicities, notes };
}

/** Axis-aligned half-extents of a w_n × w_t rectangle whose normal points at angleDeg. */
function rotatedHalfBox(halfNormal: number, halfAlong: number, angleDeg: number): [number, number] {
  const a = (angleDeg * Math.PI) / 180;
  const c = Math.abs(Math.cos(a));
  const s = Math.abs(Math.sin(a));
  return [halfNormal * c + halfAlong * s, halfNormal * s + halfAlong * c];
}

/**
 * `small-crystal`: a finite crystal filling 5–40 % of a larger amorphous region, off-centre, at any
 * angle, darker or brighter on average than its surroundings: a stack (tactoid) of N = 4–20
 * lamellae, or an elliptical crystal patch with one or two fringe sets. Truth: each set.
 */
function drawSmallCrystal(r: Random): Drawn {
  const style = pick(r, ['stack', 'patch'] as const, [0.65, 0.35]);
  for (let attempt = 0; ; attempt++) {
    const d = period(r, 2.6, style === 'stack' ? 30 : 45);
    const size = regionSize(r, Math.max(192, 5 * d));
    const { widthPx: w, heightPx: h } = size;
    const fraction = uniformIn(r, 0.05, 0.4);
    const angleDeg = r.uniform() * 180;
    const edgePx = uniformIn(r, 0.5, 2);
    let mask: Mask;
    let extentPx: number;
    let halfBox: [number, number];
    let detail: string;
    const layers = intIn(r, 4, 20);
    if (style === 'stack') {
      const halfNormal = (layers * d) / 2;
      const halfAlong = (fraction * w * h) / (layers * d) / 2;
      halfBox = rotatedHalfBox(halfNormal, halfAlong, angleDeg);
      mask = { kind: 'stack', centreXPx: 0, centreYPx: 0, normalDeg: angleDeg, halfNormalPx: halfNormal, halfAlongPx: halfAlong, edgePx };
      extentPx = layers * d;
      detail = `stack of ${layers} layers, ${(2 * halfAlong).toFixed(0)} px long`;
      if (halfAlong < d && attempt < 2000) continue;
    } else {
      const ratio = logUniform(r, 1, 3);
      const semiB = Math.sqrt((fraction * w * h) / (Math.PI * ratio));
      const semiA = ratio * semiB;
      const rot = r.uniform() * 180;
      const rr = ((rot - angleDeg) * Math.PI) / 180;
      halfBox = rotatedHalfBox(semiA, semiB, rot);
      mask = { kind: 'ellipse', centreXPx: 0, centreYPx: 0, semiAPx: semiA, semiBPx: semiB, rotationDeg: rot, edgePx };
      extentPx = 2 * Math.hypot(semiA * Math.cos(rr), semiB * Math.sin(rr));
      detail = `elliptical patch ${(2 * semiA).toFixed(0)} × ${(2 * semiB).toFixed(0)} px`;
      if (extentPx < 4 * d && attempt < 2000) continue;
    }
    // inside the central 80 % of each side, so the transform's trim never cuts it
    const freeX = 0.4 * w - halfBox[0];
    const freeY = 0.4 * h - halfBox[1];
    if ((freeX < 0 || freeY < 0) && attempt < 2000) continue;
    let cx = (w - 1) / 2;
    let cy = (h - 1) / 2;
    for (let k = 0; k < 20; k++) {
      cx = (w - 1) / 2 + uniformIn(r, -1, 1) * Math.max(0, freeX);
      cy = (h - 1) / 2 + uniformIn(r, -1, 1) * Math.max(0, freeY);
      if (Math.hypot(cx - (w - 1) / 2, cy - (h - 1) / 2) >= 0.08 * Math.min(w, h)) break;
    }
    mask = { ...mask, centreXPx: cx, centreYPx: cy };
    const contrast = uniformIn(r, 0.08, 0.35);
    const dose = logUniform(r, 30, 1000);
    const blurPx = uniformIn(r, 0, 0.12) * d;
    const texture = drawTexture(r, 0, [0.03, 0.15]);
    const scene = baseScene(size, blurPx, dose, drawDetector(r, 0.5), texture);
    const delta = r.uniform() < 0.7 ? -uniformIn(r, 0.03, 0.25) : uniformIn(r, 0.03, 0.2);
    scene.meanSteps.push({ mask, delta });
    const profile = drawProfile(r, [['dark-lines', 0.5], ['sine', 0.3], ['mild', 0.2]], d);
    // a stack's N dark lines sit inside it: φ = u/d + N/2 − 1/2 is an integer at each line
    const phase = style === 'stack' ? layers / 2 - 0.5 : r.uniform();
    const set: FringeSet = { periodPx: d, profile, contrast, geometry: { kind: 'plane', angleDeg, phaseCycles: phase, originXPx: cx, originYPx: cy }, mask };
    scene.sets.push(set);
    const periodicities = [planeTruth(set, blurPx, extentPx, style === 'stack' ? `stack of ${layers}` : 'patch set 1')];
    const notes = [detail, `${(fraction * 100).toFixed(0)}% of region`, `mean step ${(delta * 100).toFixed(0)}%`, profileNote(profile), textureNote(texture)];
    if (style === 'patch' && r.uniform() < 0.3) {
      const d2 = Math.min(45, Math.max(2.6, d * logUniform(r, 0.7, 1.4)));
      const a2 = angleDeg + uniformIn(r, 35, 90) * (r.uniform() < 0.5 ? 1 : -1);
      const f1 = frequencyOf(d, angleDeg);
      const f2 = frequencyOf(d2, a2);
      if (wellSeparated([{ fx: f1.fxPerPx, fy: f1.fyPerPx }, { fx: f2.fxPerPx, fy: f2.fyPerPx }])) {
        const a2n = ((a2 % 180) + 180) % 180;
        const set2: FringeSet = {
          periodPx: d2,
          profile: drawProfile(r, [['sine', 0.6], ['mild', 0.4]], d2),
          contrast: contrast * uniformIn(r, 0.4, 1),
          geometry: { kind: 'plane', angleDeg: a2n, phaseCycles: r.uniform(), originXPx: cx, originYPx: cy },
          mask,
        };
        scene.sets.push(set2);
        const rr = ((mask.kind === 'ellipse' ? mask.rotationDeg : 0) - a2n) * (Math.PI / 180);
        const ext2 = mask.kind === 'ellipse' ? 2 * Math.hypot(mask.semiAPx * Math.cos(rr), mask.semiBPx * Math.sin(rr)) : extentPx;
        periodicities.push(planeTruth(set2, blurPx, ext2, 'patch set 2'));
        notes.push('two sets');
      }
    }
    return { scene, periodicities, notes };
  }
}

/**
 * `low-dose`: straight fringes at 0.5–20 electrons per pixel, counted by an electron-counting
 * detector or read out with gain and a little read noise; spots from invisible to clear, for
 * detection statistics. White noise: the Cramér–Rao bound applies.
 */
function drawLowDose(r: Random): Drawn {
  const d = period(r, 2.6, 40);
  const size = regionSize(r, 5 * d, 512);
  const angleDeg = r.uniform() * 180;
  const profile = drawProfile(r, [['sine', 0.8], ['mild', 0.2]], d);
  const contrast = logUniform(r, 0.02, 0.3);
  const dose = logUniform(r, 0.5, 20);
  const blurPx = uniformIn(r, 0, 0.15) * d;
  const counting = r.uniform() < 0.5;
  const detector: Detector = counting
    ? { gainAduPerE: 1, offsetAdu: 0, readNoiseE: 0, psfPx: 0, saturatedFraction: 0, eightBitRangeFactor: 0 }
    : { gainAduPerE: logUniform(r, 1, 20), offsetAdu: Math.round(uniformIn(r, 0, 200)), readNoiseE: uniformIn(r, 0, 1.5), psfPx: 0, saturatedFraction: 0, eightBitRangeFactor: 0 };
  const scene = baseScene(size, blurPx, dose, detector, NO_TEXTURE);
  const set = planeSet(r, d, angleDeg, contrast, profile);
  scene.sets.push(set);
  const t = planeTruth(set, blurPx, extentAlong(size.widthPx, size.heightPx, angleDeg), 'fringes');
  t.whiteNoiseSnr = whiteSnr(t.fundamentalContrast, dose, detector);
  return { scene, periodicities: [t], notes: [counting ? 'counting detector' : 'integrating detector', `contrast ${(contrast * 100).toFixed(1)}%`] };
}

/** `blur`: strong blur, σ = 0.15–0.35 d (the fundamental keeps 9–64 % of its contrast, harmonics vanish). */
function drawBlur(r: Random): Drawn {
  const d = period(r);
  const size = regionSize(r, 5 * d);
  const angleDeg = r.uniform() * 180;
  const sigmaRel = uniformIn(r, 0.15, 0.35);
  const blurPx = sigmaRel * d;
  const profile = drawProfile(r, [['sine', 0.4], ['mild', 0.3], ['dark-lines', 0.3]], d);
  const contrast = uniformIn(r, 0.1, 0.4);
  const dose = logUniform(r, 100, 3000);
  const texture = drawTexture(r, 0.5, [0.02, 0.08]);
  const scene = baseScene(size, blurPx, dose, drawDetector(r, 0.3), texture);
  const set = planeSet(r, d, angleDeg, contrast, profile);
  scene.sets.push(set);
  const t = planeTruth(set, blurPx, extentAlong(size.widthPx, size.heightPx, angleDeg), 'fringes');
  return { scene, periodicities: [t], notes: [`σ ${sigmaRel.toFixed(2)} d`, profileNote(profile), textureNote(texture)] };
}

/**
 * `harmonics`: strongly non-sinusoidal fringes (narrow dark lines, two lines per period of
 * different depth, softened sawtooth), second and third harmonics below the sampling limit
 * (d ≥ 6.5 px). The fundamental is the truth even when a harmonic is stronger.
 */
function drawHarmonics(r: Random): Drawn {
  const d = period(r, 6.5, 60);
  const size = regionSize(r, 5 * d);
  const angleDeg = r.uniform() * 180;
  const profile = drawProfile(r, [['dark-lines', 0.45], ['doublet', 0.25], ['sawtooth', 0.3]], d);
  const contrast = uniformIn(r, 0.08, 0.35);
  const dose = logUniform(r, 50, 2000);
  const blurPx = uniformIn(r, 0, 0.06) * d;
  const texture = drawTexture(r, 0.6, [0.02, 0.08]);
  const scene = baseScene(size, blurPx, dose, drawDetector(r, 0.3), texture);
  const set = planeSet(r, d, angleDeg, contrast, profile);
  scene.sets.push(set);
  const t = planeTruth(set, blurPx, extentAlong(size.widthPx, size.heightPx, angleDeg), 'fringes');
  return { scene, periodicities: [t], notes: [profileNote(profile), textureNote(texture)] };
}

/**
 * `saturation`: the top 10–40 % of pixels clipped at one detector maximum, and/or an 8-bit export
 * whose scale spans 1–12 times the data's range (21–255 grey levels used).
 */
function drawSaturation(r: Random): Drawn {
  const d = period(r);
  const size = regionSize(r, 5 * d);
  const angleDeg = r.uniform() * 180;
  const style = pick(r, ['clip', '8-bit', 'clip + 8-bit'] as const, [0.45, 0.25, 0.3]);
  const profile = drawProfile(r, [['sine', 0.5], ['mild', 0.3], ['dark-lines', 0.2]], d);
  const contrast = uniformIn(r, 0.05, 0.4);
  const dose = logUniform(r, 50, 3000);
  const blurPx = uniformIn(r, 0, 0.15) * d;
  const texture = drawTexture(r, 0.6, [0.02, 0.1]);
  const detector = drawDetector(r, 0.3);
  if (style !== '8-bit') detector.saturatedFraction = uniformIn(r, 0.1, 0.4);
  if (style !== 'clip') detector.eightBitRangeFactor = logUniform(r, 1, 12);
  const scene = baseScene(size, blurPx, dose, detector, texture);
  const set = planeSet(r, d, angleDeg, contrast, profile);
  scene.sets.push(set);
  const t = planeTruth(set, blurPx, extentAlong(size.widthPx, size.heightPx, angleDeg), 'fringes');
  const notes = [style, profileNote(profile), textureNote(texture)];
  if (detector.eightBitRangeFactor > 0) notes.push(`8-bit scale ×${detector.eightBitRangeFactor.toFixed(1)}`);
  return { scene, periodicities: [t], notes };
}

/**
 * `uneven`: illumination falling 10–60 % across the region (a gradient, a vignette, or both) and a
 * slowly varying thickness that absorbs (mean transmission) and loses fringe contrast.
 */
function drawUneven(r: Random): Drawn {
  const d = period(r);
  const size = regionSize(r, 5 * d);
  const { widthPx: w, heightPx: h } = size;
  const angleDeg = r.uniform() * 180;
  const profile = drawProfile(r, [['sine', 0.6], ['mild', 0.25], ['dark-lines', 0.15]], d);
  const contrast = uniformIn(r, 0.04, 0.25);
  const dose = logUniform(r, 50, 2000);
  const blurPx = uniformIn(r, 0, 0.15) * d;
  const texture = drawTexture(r, 0.7, [0.02, 0.08]);
  const scene = baseScene(size, blurPx, dose, drawDetector(r, 0.3), texture);
  const style = pick(r, ['gradient', 'vignette', 'both'] as const, [0.5, 0.3, 0.2]);
  const illumination: Illumination[] = [];
  if (style !== 'vignette') illumination.push({ kind: 'gradient', directionDeg: r.uniform() * 360, amount: uniformIn(r, 0.1, 0.6) });
  if (style !== 'gradient') illumination.push({ kind: 'vignette', centreXPx: uniformIn(r, 0, w), centreYPx: uniformIn(r, 0, h), amount: uniformIn(r, 0.1, 0.6) });
  scene.illumination = illumination;
  const waves = Array.from({ length: intIn(r, 2, 3) }, () => {
    const lambda = logUniform(r, 1, 4) * Math.max(w, h);
    const a = r.uniform() * 2 * Math.PI;
    return { kxPerPx: Math.cos(a) / lambda, kyPerPx: Math.sin(a) / lambda, phaseRad: r.uniform() * 2 * Math.PI, amplitude: uniformIn(r, 0.5, 1) };
  });
  const thickness: Thickness = { field: { waves }, contrastLoss: uniformIn(r, 0.2, 0.7), absorption: uniformIn(r, 0.05, 0.5) };
  scene.thickness = thickness;
  const set = planeSet(r, d, angleDeg, contrast, profile);
  scene.sets.push(set);
  const t = planeTruth(set, blurPx, extentAlong(w, h, angleDeg), 'fringes');
  const notes = [
    illumination.map((i) => `${i.kind} ${(i.amount * 100).toFixed(0)}%`).join(' + '),
    `contrast loss ${(thickness.contrastLoss * 100).toFixed(0)}%, absorption ${thickness.absorption.toFixed(2)}`,
    profileNote(profile),
    textureNote(texture),
  ];
  return { scene, periodicities: [t], notes };
}

/**
 * `amorphous`: no periodicity at all: shot noise only, white, power-law (1/f²), band-passed
 * (a broad ring) or mixed textures, sometimes with a weak illumination gradient. Any reported
 * period is a false alarm.
 */
function drawAmorphous(r: Random): Drawn {
  const size = regionSize(r, 128);
  const kind = pick(r, ['shot-only', 'white', 'power-law', 'band-pass', 'mixed'] as const);
  const texture: Texture =
    kind === 'shot-only'
      ? NO_TEXTURE
      : {
          kind,
          contrast: uniformIn(r, 0.05, 0.3),
          ringPerPx: logUniform(r, 0.04, 0.35),
          ringWidthRatio: uniformIn(r, 1.3, 2.5),
          maxScalePx: pick(r, [16, 32, 64]),
        };
  const dose = logUniform(r, 5, 2000);
  const blurPx = uniformIn(r, 0, 1.5);
  const scene = baseScene(size, blurPx, dose, drawDetector(r, 0.4), texture);
  const notes = [kind === 'shot-only' ? 'shot noise only' : textureNote(texture)];
  if (r.uniform() < 0.25) {
    const g: Illumination = { kind: 'gradient', directionDeg: r.uniform() * 360, amount: uniformIn(r, 0.05, 0.3) };
    scene.illumination.push(g);
    notes.push(`gradient ${(g.amount * 100).toFixed(0)}%`);
  }
  return { scene, periodicities: [], notes };
}

const DRAW: Record<FamilyName, (r: Random) => Drawn> = {
  straight: drawStraight,
  crossed: drawCrossed,
  curved: drawCurved,
  'small-crystal': drawSmallCrystal,
  'low-dose': drawLowDose,
  blur: drawBlur,
  harmonics: drawHarmonics,
  saturation: drawSaturation,
  uneven: drawUneven,
  amorphous: drawAmorphous,
};

/**
 * One synthetic image of a family with its truth.
 * @param family one of {@link FAMILIES}
 * @param seed any integer: the parameters and the noise follow from it (same image every run)
 * @returns the image (integer ADU or 8-bit grey levels, uncalibrated), its truth and expected counts
 */
export function generateCase(family: FamilyName, seed: number): LatticeImage {
  const draw = DRAW[family];
  if (!draw) throw new RangeError(`unknown family '${String(family)}' (use ${FAMILIES.join(', ')})`);
  if (!Number.isInteger(seed)) throw new RangeError(`seed must be an integer, got ${seed}`);
  // the family enters the parameter stream, so one seed gives unrelated cases in different families
  const { scene, periodicities, notes } = draw(makeRandom(Math.imul(seed, 0x9e3779b1) ^ Math.imul(FAMILIES.indexOf(family) + 1, 0x85ebca6b)));
  return renderCase(family, seed, scene, periodicities, notes);
}

/**
 * Renders a scene with a given truth (for tests that set the parameters themselves).
 * @param family the family label; @param seed noise seed; @param scene the scene
 * @param periodicities its truth; @param notes description
 * @returns the image, truth and expected counts
 */
export function renderCase(family: FamilyName, seed: number, scene: Scene, periodicities: TruePeriodicity[], notes: string[] = []): LatticeImage {
  // the noise stream is separate from the parameter stream, so a parameter change moves no noise
  const { image, expectedCounts, saturatedFraction } = renderScene(scene, (seed ^ 0x5bd1e995) >>> 0);
  const truth: LatticeTruth = {
    family,
    seed,
    region: null,
    periodicities,
    dosePerPx: scene.dosePerPx,
    blurPx: scene.blurPx,
    saturatedFraction,
    notes: [`${scene.widthPx}×${scene.heightPx}`, `dose ${scene.dosePerPx.toPrecision(3)}/px`, `blur ${scene.blurPx.toFixed(2)} px`, ...notes],
    scene,
  };
  return { image, truth, expectedCounts };
}

/** Re-exported for tests: the white-noise SNR and the blur gain used in the truth. */
export { blurGain, whiteSnr };
