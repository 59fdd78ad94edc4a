/**
 * A specimen scene — fringe sets with their geometry and extent, crystal mean-contrast steps, an
 * amorphous texture, thickness and illumination — and its rendering through the imaging chain
 * of ./imaging (test-only code). Plain data, so a case can be printed, stored and re-rendered.
 *
 * Coordinates: x = column, y = row index (downwards). Directions are counter-clockwise from +x as
 * shown on screen (y up), so a fringe normal at angle θ with period d has the frequency vector
 * fx = cos θ / d, fy = −sin θ / d along the row index.
 */
import type { GreyImage } from '../../src/image/grey-image';
import {
  bandPassField,
  canvasFor,
  type Detector,
  exposeSpecimen,
  gaussianKernel,
  kernelTransfer,
  makeRandom,
  powerLawField,
  renderField,
  smoothstep,
  whiteField,
} from './imaging';
import { type FringeProfile, harmonicAmplitude, lookupProfile, profileTable } from './profiles';

/** How the phase of a fringe set runs over the image. */
export type Geometry =
  /** Straight fringes: φ = f·(p − origin) + phase. */
  | { kind: 'plane'; angleDeg: number; phaseCycles: number; originXPx: number; originYPx: number }
  /** Concentric arcs of constant normal spacing: φ = |p − centre| / d + phase. */
  | { kind: 'arcs'; centreXPx: number; centreYPx: number; phaseCycles: number };

/** Where something is present (1 inside, 0 outside, a smooth step of edgePx across the edge). */
export type Mask =
  | { kind: 'all' }
  /** A rectangle: a stack of lamellae, extent 2·halfNormalPx along the normal angle, 2·halfAlongPx along the fringes. */
  | { kind: 'stack'; centreXPx: number; centreYPx: number; normalDeg: number; halfNormalPx: number; halfAlongPx: number; edgePx: number }
  /** An ellipse with semi-axes along rotationDeg and rotationDeg + 90°. */
  | { kind: 'ellipse'; centreXPx: number; centreYPx: number; semiAPx: number; semiBPx: number; rotationDeg: number; edgePx: number }
  /** The Voronoi cell of seeds[index] (a grain). */
  | { kind: 'cell'; seeds: [number, number][]; index: number; edgePx: number };

/** One fringe set. */
export interface FringeSet {
  /** Normal spacing d in px. */
  periodPx: number;
  profile: FringeProfile;
  /** Half the peak-to-peak modulation relative to the mean transmission. */
  contrast: number;
  geometry: Geometry;
  mask: Mask;
}

/** The amorphous texture of the specimen (film, support, disorder). */
export interface Texture {
  kind: 'none' | 'white' | 'power-law' | 'band-pass' | 'mixed';
  /** Standard deviation relative to the mean transmission. */
  contrast: number;
  /** Band-pass ring frequency (cycles/px), for 'band-pass' and 'mixed'. */
  ringPerPx: number;
  /** Band-pass σ₂/σ₁ (> 1), for 'band-pass' and 'mixed'. */
  ringWidthRatio: number;
  /** Largest octave σ (px), for 'power-law' and 'mixed'. */
  maxScalePx: number;
}

/** A smooth field from a few long waves, scaled to 0…1 over the region. */
export interface SmoothField {
  waves: { kxPerPx: number; kyPerPx: number; phaseRad: number; amplitude: number }[];
}

/** Slowly varying thickness: loses fringe contrast and absorbs. */
export interface Thickness {
  field: SmoothField;
  /** Fringe contrast falls by this fraction from the thinnest to the thickest place. */
  contrastLoss: number;
  /** Mean transmission exp(−absorption · t), t the field (0…1). */
  absorption: number;
}

/** Uneven illumination; amount is the relative variation across the region. */
export type Illumination =
  | { kind: 'gradient'; directionDeg: number; amount: number }
  | { kind: 'vignette'; centreXPx: number; centreYPx: number; amount: number };

/** Everything that makes one synthetic image. */
export interface Scene {
  widthPx: number;
  heightPx: number;
  sets: FringeSet[];
  /** Mean-contrast differences of crystals against their surroundings (added to the transmission). */
  meanSteps: { mask: Mask; delta: number }[];
  texture: Texture;
  thickness: Thickness | null;
  illumination: Illumination[];
  /** Gaussian σ of the optical blur (px). */
  blurPx: number;
  /** Electrons per pixel at transmission 1 and even illumination. */
  dosePerPx: number;
  detector: Detector;
}

/** No texture. */
export const NO_TEXTURE: Texture = { kind: 'none', contrast: 0, ringPerPx: 0.2, ringWidthRatio: 1.6, maxScalePx: 32 };

/**
 * Frequency vector of a fringe normal.
 * @param periodPx d; @param angleDeg normal direction as shown (counter-clockwise from +x, y up)
 * @returns fx, fy in cycles/px, fy along the row index (downwards)
 */
export function frequencyOf(periodPx: number, angleDeg: number): { fxPerPx: number; fyPerPx: number } {
  const a = (angleDeg * Math.PI) / 180;
  return { fxPerPx: Math.cos(a) / periodPx, fyPerPx: -Math.sin(a) / periodPx };
}

/**
 * Direction as shown of a displacement in image coordinates.
 * @param dxPx along x; @param dyPx along the row index
 * @returns degrees in [0, 180) (axial: a direction and its opposite are one fringe normal)
 */
export function axialAngleDeg(dxPx: number, dyPx: number): number {
  const a = (Math.atan2(-dyPx, dxPx) * 180) / Math.PI;
  const m = ((a % 180) + 180) % 180;
  return m >= 180 - 1e-12 ? 0 : m;
}

/**
 * Difference of two axial directions.
 * @param a degrees; @param b degrees
 * @returns |a − b| modulo 180, folded into [0, 90]
 */
export function axialDifferenceDeg(a: number, b: number): number {
  let d = Math.abs(a - b) % 180;
  if (d > 90) d = 180 - d;
  return d;
}

/**
 * Value of a mask at a point.
 * @param m the mask; @param x column; @param y row
 * @returns 0…1
 */
export function maskValue(m: Mask, x: number, y: number): number {
  const soft = (signedDistance: number, edge: number) => (edge > 0 ? smoothstep(signedDistance / edge + 0.5) : signedDistance >= 0 ? 1 : 0);
  switch (m.kind) {
    case 'all':
      return 1;
    case 'stack': {
      const a = (m.normalDeg * Math.PI) / 180;
      const dx = x - m.centreXPx;
      const dy = y - m.centreYPx;
      const u = dx * Math.cos(a) - dy * Math.sin(a);
      const v = dx * Math.sin(a) + dy * Math.cos(a);
      return soft(m.halfNormalPx - Math.abs(u), m.edgePx) * soft(m.halfAlongPx - Math.abs(v), m.edgePx);
    }
    case 'ellipse': {
      const a = (m.rotationDeg * Math.PI) / 180;
      const dx = x - m.centreXPx;
      const dy = y - m.centreYPx;
      const u = dx * Math.cos(a) - dy * Math.sin(a);
      const v = dx * Math.sin(a) + dy * Math.cos(a);
      const rho = Math.hypot(u / m.semiAPx, v / m.semiBPx);
      return soft((1 - rho) * Math.min(m.semiAPx, m.semiBPx), m.edgePx);
    }
    case 'cell': {
      const [sx, sy] = m.seeds[m.index];
      let dist = Infinity;
      for (let j = 0; j < m.seeds.length; j++) {
        if (j === m.index) continue;
        const [tx, ty] = m.seeds[j];
        const sep = Math.hypot(tx - sx, ty - sy);
        // signed distance to the perpendicular bisector, positive on this seed's side
        const s = ((x - tx) ** 2 + (y - ty) ** 2 - (x - sx) ** 2 - (y - sy) ** 2) / (2 * sep);
        if (s < dist) dist = s;
      }
      return soft(dist, m.edgePx);
    }
  }
}

/**
 * Phase (in periods) of a fringe set at a point.
 * @param s the set; @param x column; @param y row
 * @returns φ
 */
export function phaseOf(s: FringeSet, x: number, y: number): number {
  const g = s.geometry;
  if (g.kind === 'plane') {
    const { fxPerPx, fyPerPx } = frequencyOf(s.periodPx, g.angleDeg);
    return fxPerPx * (x - g.originXPx) + fyPerPx * (y - g.originYPx) + g.phaseCycles;
  }
  return Math.hypot(x - g.centreXPx, y - g.centreYPx) / s.periodPx + g.phaseCycles;
}

/**
 * A smooth field's raw value (before scaling to 0…1).
 * @param f the field; @param x column; @param y row
 * @returns Σ a cos(2π(kx x + ky y) + φ)
 */
function smoothRaw(f: SmoothField, x: number, y: number): number {
  let v = 0;
  for (const w of f.waves) v += w.amplitude * Math.cos(2 * Math.PI * (w.kxPerPx * x + w.kyPerPx * y) + w.phaseRad);
  return v;
}

/**
 * A smooth field's range over a region (sampled on a 65 × 65 grid).
 * @param f the field; @param widthPx region width; @param heightPx region height
 * @returns [min, max]
 */
function smoothRange(f: SmoothField, widthPx: number, heightPx: number): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (let j = 0; j <= 64; j++) {
    for (let i = 0; i <= 64; i++) {
      const v = smoothRaw(f, (i / 64) * (widthPx - 1), (j / 64) * (heightPx - 1));
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
  }
  return [lo, hi > lo ? hi : lo + 1];
}

/**
 * Relative illumination at a point (product of all terms).
 * @param list the terms; @param widthPx region width; @param heightPx region height
 * @returns a function of (x, row), 1 on average for a gradient, ≤ 1 for a vignette
 */
export function illuminationOf(list: Illumination[], widthPx: number, heightPx: number): ((x: number, y: number) => number) | null {
  if (list.length === 0) return null;
  const terms = list.map((t) => {
    if (t.kind === 'gradient') {
      const a = (t.directionDeg * Math.PI) / 180;
      const ux = Math.cos(a);
      const uy = -Math.sin(a);
      const proj = [0, widthPx - 1].flatMap((x) => [0, heightPx - 1].map((y) => ux * x + uy * y));
      const lo = Math.min(...proj);
      const span = Math.max(...proj) - lo || 1;
      return (x: number, y: number) => 1 + t.amount * ((ux * x + uy * y - lo) / span - 0.5);
    }
    const rMax = Math.max(
      ...[0, widthPx - 1].flatMap((x) => [0, heightPx - 1].map((y) => Math.hypot(x - t.centreXPx, y - t.centreYPx))),
    );
    return (x: number, y: number) => 1 - t.amount * (Math.hypot(x - t.centreXPx, y - t.centreYPx) / rMax) ** 2;
  });
  return (x, y) => terms.reduce((p, f) => p * f(x, y), 1);
}

/** A rendered scene. */
export interface RenderedScene {
  image: GreyImage;
  /** Expected electron counts per pixel (no noise), for checking a generator's truth. */
  expectedCounts: Float32Array;
  /** Fraction of pixels at the clipping level. */
  saturatedFraction: number;
}

/**
 * Renders a scene: specimen transmission, then the imaging chain (blur, dose, Poisson, detector).
 * @param scene the scene; @param seed seeds the texture and the noise
 * @returns the image and its expected counts
 * Notes: transmission = A · (1 + Σ contrast·mask·(1 − loss·t)·p(φ) + Σ δ·mask + texture), A = e^(−absorption·t),
 * t the thickness field (0…1), clamped at 0.
 */
export function renderScene(scene: Scene, seed: number): RenderedScene {
  const r = makeRandom(seed);
  const c = canvasFor(scene.widthPx, scene.heightPx, scene.blurPx, scene.detector.psfPx);
  const cw = c.width + 2 * c.marginPx;
  const ch = c.height + 2 * c.marginPx;
  let texture: Float64Array | null = null;
  const t = scene.texture;
  if (t.kind !== 'none' && t.contrast > 0) {
    if (t.kind === 'white') texture = whiteField(cw, ch, r);
    else if (t.kind === 'power-law') texture = powerLawField(cw, ch, r, t.maxScalePx);
    else if (t.kind === 'band-pass') texture = bandPassField(cw, ch, r, t.ringPerPx, t.ringWidthRatio);
    else {
      const a = bandPassField(cw, ch, r, t.ringPerPx, t.ringWidthRatio);
      const b = powerLawField(cw, ch, r, t.maxScalePx);
      texture = a.map((v, i) => (v + b[i]) / Math.SQRT2);
    }
  }
  const tables = scene.sets.map((s) => profileTable(s.profile));
  const th = scene.thickness;
  const [tlo, thi] = th ? smoothRange(th.field, scene.widthPx, scene.heightPx) : [0, 1];
  const m = c.marginPx;
  const specimen = renderField(c, (x, y) => {
    const tk = th ? Math.min(1, Math.max(0, (smoothRaw(th.field, x, y) - tlo) / (thi - tlo))) : 0;
    let v = 1;
    for (let i = 0; i < scene.sets.length; i++) {
      const s = scene.sets[i];
      const w = maskValue(s.mask, x, y);
      if (w === 0) continue;
      v += s.contrast * w * (th ? 1 - th.contrastLoss * tk : 1) * lookupProfile(tables[i], phaseOf(s, x, y));
    }
    for (const st of scene.meanSteps) v += st.delta * maskValue(st.mask, x, y);
    if (texture) v += t.contrast * texture[(y + m) * cw + x + m];
    if (th) v *= Math.exp(-th.absorption * tk);
    return Math.max(0, v);
  });
  const exposed = exposeSpecimen(
    c,
    specimen,
    {
      blurPx: scene.blurPx,
      dosePerPx: scene.dosePerPx,
      illumination: illuminationOf(scene.illumination, scene.widthPx, scene.heightPx),
      detector: scene.detector,
    },
    r,
  );
  return exposed;
}

/**
 * Gain of the optical blur at a frequency vector (the separable sampled kernel, exact).
 * @param blurPx σ; @param fxPerPx; @param fyPerPx
 * @returns H(fx)·H(fy)
 */
export function blurGain(blurPx: number, fxPerPx: number, fyPerPx: number): number {
  const k = gaussianKernel(blurPx);
  return kernelTransfer(k, fxPerPx) * kernelTransfer(k, fyPerPx);
}

/**
 * Relative amplitude of a set's fundamental in the blurred image (before noise).
 * @param s the set; @param blurPx optical σ
 * @returns contrast · |c₁| · blur gain at the fundamental (for arcs, at |f| along x, an isotropic stand-in)
 */
export function fundamentalContrast(s: FringeSet, blurPx: number): number {
  const g = s.geometry;
  const { fxPerPx, fyPerPx } = g.kind === 'plane' ? frequencyOf(s.periodPx, g.angleDeg) : { fxPerPx: 1 / s.periodPx, fyPerPx: 0 };
  return s.contrast * harmonicAmplitude(s.profile, 1) * blurGain(blurPx, fxPerPx, fyPerPx);
}
