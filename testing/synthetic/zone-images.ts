/**
 * Seeded synthetic lattice images of a crystal seen along a zone axis, with known truth: the
 * zone's reflections as cosine fringes (the projected lattice a high-resolution image shows, no
 * contrast transfer), Poisson-like noise, at a pixel size that puts the finest reflection at a few
 * pixels. For the spot-indexing benchmark: the spots are then found in the image's power spectrum.
 */
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { zoneSpots, type ZonePhase } from '../../src/diffraction/zone-axis';
import { rng } from '../random';

/** A lattice image with its truth. */
export interface ZoneImage {
  image: GreyImage;
  /** Pixel size used, nm. */
  nmPerPx: number;
  /** The reflections drawn (one per Friedel pair), d and direction as shown. */
  drawn: Array<{ hkl: [number, number, number]; dNm: number; angleDeg: number }>;
}

/**
 * Draws a lattice image of `phase` along `uvw`.
 * @param phase the structure
 * @param uvw zone axis
 * @param seed noise, rotation and phase seed
 * @param options size (px, default 256), reflections drawn (largest d first, default 6), smallest
 *   period in px (default 3.2), mean counts per px (default 400)
 * @returns the image and its truth
 */
export function zoneImage(phase: ZonePhase, uvw: [number, number, number], seed: number, options: { sizePx?: number; maxReflections?: number; minPeriodPx?: number; dose?: number } = {}): ZoneImage {
  const r = rng(seed);
  const n = options.sizePx ?? 256;
  const rot = 360 * r();
  const all = zoneSpots(phase, uvw, rot, 0.05).filter((s) => s.intensity >= 0.5 && s.angleDeg < 180 - 1e-6);
  all.sort((a, b) => b.dNm - a.dNm || a.angleDeg - b.angleDeg);
  const drawn = all.slice(0, options.maxReflections ?? 6);
  const dMin = Math.min(...drawn.map((s) => s.dNm));
  const nmPerPx = dMin / (options.minPeriodPx ?? 3.2);
  const dose = options.dose ?? 400;
  const data = new Float32Array(n * n);
  const waves = drawn.map((s) => {
    const k = (2 * Math.PI * nmPerPx) / s.dNm; // radians per px
    const a = (s.angleDeg * Math.PI) / 180;
    // shown with y up: row index grows downwards
    return { kx: k * Math.cos(a), ky: -k * Math.sin(a), amp: 0.15 * (0.5 + 0.5 * Math.sqrt(s.intensity / 100)), ph: 2 * Math.PI * r() };
  });
  for (let y = 0; y < n; y++) {
    for (let x = 0; x < n; x++) {
      let v = 1;
      for (const w of waves) v += w.amp * Math.cos(w.kx * x + w.ky * y + w.ph);
      const mean = Math.max(0, dose * v);
      const g = Math.sqrt(-2 * Math.log(Math.max(r(), 1e-300))) * Math.cos(2 * Math.PI * r());
      data[y * n + x] = Math.max(0, mean + Math.sqrt(mean) * g);
    }
  }
  return { image: makeGreyImage(n, n, data), nmPerPx, drawn: drawn.map((s) => ({ hkl: s.hkl, dNm: s.dNm, angleDeg: s.angleDeg })) };
}
