/**
 * Lattice images seen through a distorted pixel grid (scan stretch and shear), with known truth,
 * for the two-axis calibration tests and bench:affine. Test-only code.
 *
 * Pixel (i, j) (column, row down) sits on the specimen at r = A·(i, j), A = [[sx, sy·sin γ],
 * [0, sy·cos γ]] nm, so the pixel metric is AᵀA = [[sx², sx·sy·sin γ], [sx·sy·sin γ, sy²]], the
 * convention of nmPerPxAlong (src/measure/measurement.ts).
 */
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { gaussian, rng } from '../random';

export interface DistortedLatticeSpec {
  width: number;
  height: number;
  /** nm per px along x. */
  sxNm: number;
  /** Stretch of y against x: sy = sx·(1 + stretch). */
  stretch: number;
  /** Shear γ, degrees. */
  shearDeg: number;
  /** The lattice: reciprocal basis in the specimen, as two spacings and the angle between their normals. */
  d1Nm: number;
  d2Nm: number;
  angleDeg: number;
  /** Rotation of the lattice on the specimen, degrees. */
  rotationDeg: number;
  /** Reflections drawn: h·g₁ + k·g₂ with their amplitudes. */
  reflections: { h: number; k: number; amplitude: number }[];
  /** Noise standard deviation relative to the mean. */
  noise: number;
  seed: number;
}

/** Renders the lattice image (mean 1000, 16-bit range). */
export function distortedLattice(s: DistortedLatticeSpec): GreyImage {
  const sy = s.sxNm * (1 + s.stretch);
  const gam = (s.shearDeg * Math.PI) / 180;
  const A = [[s.sxNm, sy * Math.sin(gam)], [0, sy * Math.cos(gam)]];
  const rot = (s.rotationDeg * Math.PI) / 180;
  const phi = (s.angleDeg * Math.PI) / 180;
  const b1 = [Math.cos(rot) / s.d1Nm, Math.sin(rot) / s.d1Nm];
  const b2 = [Math.cos(rot + phi) / s.d2Nm, Math.sin(rot + phi) / s.d2Nm];
  const r = rng(s.seed);
  const g = gaussian(r);
  const waves = s.reflections.map((q) => {
    const gx = q.h * b1[0] + q.k * b2[0];
    const gy = q.h * b1[1] + q.k * b2[1];
    // frequency in pixel space: k_pix = Aᵀ g (cycles/px)
    return { kx: A[0][0] * gx + A[1][0] * gy, ky: A[0][1] * gx + A[1][1] * gy, a: q.amplitude, p: 2 * Math.PI * r() };
  });
  const data = new Float32Array(s.width * s.height);
  for (let j = 0; j < s.height; j++) {
    for (let i = 0; i < s.width; i++) {
      let v = 1;
      for (const w of waves) v += w.a * Math.cos(2 * Math.PI * (w.kx * i + w.ky * j) + w.p);
      data[j * s.width + i] = Math.max(0, Math.round(1000 * (v + s.noise * g())));
    }
  }
  return makeGreyImage(s.width, s.height, data, { bitDepth: 16, sampleKind: 'uint' });
}
