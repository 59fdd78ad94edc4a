/**
 * Electron-diffraction patterns with known truth, for the camera-constant and d-spacing tests
 * and bench:electron: polycrystalline rings of a cubic standard, or a single-crystal spot
 * pattern, with a known camera constant, centre and elliptical distortion, a strong direct beam
 * with its diffuse halo, an optional beam stop (a dark rod from an edge, off the centre line) and
 * Poisson noise. Seeded; test-only code.
 */
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { correctedVector, distortionOf, imagePoint, type PatternGeometry } from '../../src/diffraction/electron/geometry';
import { gaussian, rng } from '../random';

export interface PatternSpec {
  width: number;
  height: number;
  /** Centre, px. */
  cx: number;
  cy: number;
  /** Camera constant: nm⁻¹ of reciprocal space per px. */
  kInvNmPerPx: number;
  /** Ellipticity ε = a/b − 1 and the major axis, degrees from +x (y up). */
  ellipticity: number;
  majorAxisDeg: number;
  /** Rings: 1/d (nm⁻¹) and relative intensity. */
  rings?: { gInvNm: number; intensity: number }[];
  /** Ring width (Gaussian σ), px. */
  ringWidthPx?: number;
  /** Spots: reciprocal vectors (nm⁻¹, specimen frame, y up) and intensities; Friedel mates are added. */
  spots?: { g: [number, number]; intensity: number }[];
  /** Spot size (Gaussian σ), px. */
  spotWidthPx?: number;
  /** Peak counts of the direct beam (default 20000) and of its diffuse halo (default 400). */
  directBeam?: number;
  halo?: number;
  /** Beam stop: a rod of this width from the top edge, its axis this far from the centre (px), or null. */
  beamStop?: { widthPx: number; offsetPx: number } | null;
  /** Counts scale of the rings and spots (default 300). */
  counts?: number;
  seed: number;
}

/** The geometry a spec records with. */
export function specGeometry(s: PatternSpec): PatternGeometry {
  return { cx: s.cx, cy: s.cy, ...distortionOf(s.ellipticity, s.majorAxisDeg) };
}

/** Renders the pattern (Poisson counts as floats). */
export function electronPattern(s: PatternSpec): GreyImage {
  const geo = specGeometry(s);
  const r = rng(s.seed);
  const g = gaussian(r);
  const ringW = s.ringWidthPx ?? 1.6;
  const spotW = s.spotWidthPx ?? 1.5;
  const counts = s.counts ?? 300;
  const direct = s.directBeam ?? 20000;
  const halo = s.halo ?? 400;
  const data = new Float32Array(s.width * s.height);
  // spot positions in the image (each with its Friedel mate)
  const spots: { x: number; y: number; a: number }[] = [];
  for (const sp of s.spots ?? []) {
    for (const sign of [1, -1]) {
      // specimen frame y up → corrected image vector (y down), in px
      const v: [number, number] = [(sign * sp.g[0]) / s.kInvNmPerPx, (-sign * sp.g[1]) / s.kInvNmPerPx];
      const [x, y] = imagePoint(geo, v);
      spots.push({ x, y, a: sp.intensity });
    }
  }
  for (let y = 0; y < s.height; y++) {
    for (let x = 0; x < s.width; x++) {
      const [vx, vy] = correctedVector(geo, x, y);
      const rr = Math.hypot(vx, vy);
      let v = 20 + direct * Math.exp(-(rr * rr) / (2 * 3 * 3)) + halo / (1 + (rr / 25) ** 2) + 0.2 * halo * Math.exp(-rr / 150);
      for (const ring of s.rings ?? []) {
        const R = ring.gInvNm / s.kInvNmPerPx;
        const d = rr - R;
        if (Math.abs(d) < 6 * ringW) v += counts * ring.intensity * Math.exp(-(d * d) / (2 * ringW * ringW));
      }
      for (const sp of spots) {
        const dx = x - sp.x;
        const dy = y - sp.y;
        if (Math.abs(dx) < 6 * spotW && Math.abs(dy) < 6 * spotW) v += counts * sp.a * Math.exp(-(dx * dx + dy * dy) / (2 * spotW * spotW));
      }
      if (s.beamStop && Math.abs(x - (s.cx + s.beamStop.offsetPx)) < s.beamStop.widthPx / 2 && y < s.cy + s.beamStop.widthPx) v = 3;
      // Poisson counts: normal approximation above 30, product method below
      let c: number;
      if (v > 30) c = Math.max(0, Math.round(v + Math.sqrt(v) * g()));
      else {
        const L = Math.exp(-v);
        let k = 0;
        let p = 1;
        do {
          k++;
          p *= r();
        } while (p > L);
        c = k - 1;
      }
      data[y * s.width + x] = c;
    }
  }
  return makeGreyImage(s.width, s.height, data, { bitDepth: 32, sampleKind: 'float' });
}
