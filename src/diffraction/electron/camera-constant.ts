/**
 * The camera constant of an electron-diffraction setting from a polycrystalline standard's rings:
 * the rings indexed against the standard, the constant fitted with its uncertainty, and L·λ for a
 * stated voltage. Pure: typed arrays only.
 */
import type { GreyImage } from '../../image/grey-image';
import { analyseRings, type MeasuredRing, type RingAnalysis, type RingAnalysisOptions } from './rings';
import { standardRings, type RingStandard } from './standards';
import { electronWavelengthForKv } from './wavelength';

/** A ring of the calibration pattern matched to a reflection of the standard. */
export interface IndexedRing {
  ring: MeasuredRing;
  hkl: [number, number, number];
  dNm: number;
  /** The ring's camera constant alone, nm⁻¹ per px. */
  kInvNmPerPx: number;
  /** Relative departure of the ring from the fitted constant. */
  relResidual: number;
}

/** A camera constant with what it rests on. */
export interface CameraConstant {
  /** Reciprocal nm per px of (corrected) radius: 1/d = K·R. */
  kInvNmPerPx: number;
  /** Relative standard uncertainty of K (k = 1), the root-sum-square of `parts`. */
  relUncertainty: number;
  /** Its named parts (relative, k = 1). */
  parts: { name: string; rel: number; type: 'A' | 'B' }[];
  /** λ·L = 1/K = R·d, nm·px. */
  lambdaLNmPx: number;
  /** The stated voltage, kV, and the electron wavelength, nm (null when no voltage was given). */
  voltageKv: number | null;
  wavelengthNm: number | null;
  /** Camera length in px of the detector (λL/λ), or null without a voltage. */
  cameraLengthPx: number | null;
  /** Camera length in mm for the stated detector pixel size, or null. */
  cameraLengthMm: number | null;
  /** The distortion it was measured with (to be applied to the setting's other patterns). */
  distortion: { e1: number; e2: number };
  /** Ellipticity ε = a/b − 1 with its standard uncertainty, and the major axis (degrees from +x, y up). */
  ellipticity: number;
  uEllipticity: number;
  majorAxisDeg: number;
  /** The standard and what was indexed. */
  standard: { id: string; name: string; aNm: number; uANm: number; source: string };
  rings: IndexedRing[];
  /** Rings found but not indexed (their radii, px). */
  unindexedRadiiPx: number[];
  /** Birge ratio of the rings about the fitted constant. */
  birgeRatio: number;
  /** Readable provenance. */
  detail: string;
}

/** Options of {@link calibrateCameraConstant}. */
export interface CameraConstantOptions extends RingAnalysisOptions {
  /** Accelerating voltage, kV (1–3000), for λ and the camera length; optional. */
  voltageKv?: number;
  /** Detector pixel size, µm, for the camera length in mm; optional. */
  detectorPixelUm?: number;
  /** Largest relative departure of a ring from the constant to be indexed (default 0.006). */
  relTolerance?: number;
}

/**
 * Indexes measured rings against a standard's reflections.
 * @param rings measured rings (any order)
 * @param standard the ring standard
 * @param relTolerance largest relative departure of an indexed ring (default 0.006)
 * @returns the indexed rings and the constant's first estimate, or an error saying why none fits
 * Notes: every pairing of one of the three innermost measured rings with one of the five
 * innermost reflections proposes K = g/R; the proposal indexing the most rings (then with the
 * smallest spread) wins; at least three rings must be indexed, each to its own reflection, no
 * ring half as strong as the strongest may be left unindexed, the standard's first ring must be
 * among them (unless inside the innermost ring found), and at least two thirds of the standard's
 * rings inside the outermost indexed one must be found.
 * Ratio indexing of ring patterns (common practice; fcc ratios √3 : √4 : √8 : √11 …, reference-values §6).
 */
export function indexRings(rings: readonly MeasuredRing[], standard: RingStandard, relTolerance = 0.006): { indexed: IndexedRing[]; unindexed: MeasuredRing[]; k: number } | { error: string } {
  if (!(relTolerance > 0 && relTolerance < 0.1)) throw new RangeError(`relTolerance must be in (0, 0.1), got ${relTolerance}`);
  const sorted = [...rings].sort((a, b) => a.radiusPx - b.radiusPx);
  const refl = standardRings(standard, 16);
  if (sorted.length < 3) return { error: `${sorted.length} ring${sorted.length === 1 ? '' : 's'} found: indexing against ${standard.name} needs at least three` };
  let best: { k: number; pairs: { ring: MeasuredRing; r: (typeof refl)[number] }[]; spread: number } | null = null;
  for (const m of sorted.slice(0, 3)) {
    for (const r of refl.slice(0, 5)) {
      const k = r.gInvNm / m.radiusPx;
      const pairs: { ring: MeasuredRing; r: (typeof refl)[number] }[] = [];
      const used = new Set<number>();
      for (const ring of sorted) {
        const g = k * ring.radiusPx;
        let nearest = -1;
        for (let i = 0; i < refl.length; i++) if (nearest < 0 || Math.abs(refl[i].gInvNm - g) < Math.abs(refl[nearest].gInvNm - g)) nearest = i;
        if (Math.abs(refl[nearest].gInvNm / g - 1) <= relTolerance && !used.has(nearest)) {
          used.add(nearest);
          pairs.push({ ring, r: refl[nearest] });
        }
      }
      // a strong ring left unindexed means the wrong lattice or scale (bcc rings 200, 220, 222, 400
      // fit fcc ratios, but the strong bcc 110 then stays unexplained)
      const strongest = Math.max(...sorted.map((q) => q.height));
      if (sorted.some((q) => q.height >= 0.5 * strongest && !pairs.some((p) => p.ring === q))) continue;
      // and the standard's rings inside the outermost indexed one must mostly be there, its first
      // (strongest in fcc metals) always when it falls outside the innermost radius searched:
      // bcc rings 110, 200, 211, 220, 310 have exactly the ratios of fcc 200, 220, 222, 400, 420
      if (pairs.length) {
        const gMax = Math.max(...pairs.map((p) => p.r.gInvNm));
        const expected = refl.filter((r) => r.gInvNm <= gMax * (1 + relTolerance));
        const innermost = sorted[0].radiusPx;
        const first = refl[0];
        if (first.gInvNm / k > 0.9 * innermost && !pairs.some((p) => p.r === first)) continue;
        if (pairs.length < (2 / 3) * expected.length) continue;
      }
      const ks = pairs.map((p) => p.r.gInvNm / p.ring.radiusPx);
      const mean = ks.reduce((s, v) => s + v, 0) / ks.length;
      const spread = Math.sqrt(ks.reduce((s, v) => s + (v / mean - 1) ** 2, 0) / ks.length);
      if (!best || pairs.length > best.pairs.length || (pairs.length === best.pairs.length && spread < best.spread)) best = { k: mean, pairs, spread };
    }
  }
  if (!best || best.pairs.length < 3) {
    return { error: `${sorted.length} rings found (radii ${sorted.map((r) => r.radiusPx.toFixed(1)).join(', ')} px), but no camera constant makes three or more of them fit the ${standard.name} reflections within ${(100 * relTolerance).toFixed(1)} % while explaining every strong ring and missing none of the standard's main rings: check the standard, or that this is a ring pattern of it` };
  }
  const indexed = best.pairs.map((p) => ({ ring: p.ring, hkl: p.r.hkl, dNm: p.r.dNm, kInvNmPerPx: p.r.gInvNm / p.ring.radiusPx, relResidual: 0 }));
  const unindexed = sorted.filter((r) => !indexed.some((i) => i.ring === r));
  return { indexed, unindexed, k: best.k };
}

/**
 * The camera constant from a ring pattern of a standard.
 * @param image the calibration pattern
 * @param standard the ring standard (built-in or userRingStandard)
 * @param options voltage and detector pixel size for L, ring-analysis options, indexing tolerance
 * @returns the constant with its uncertainty parts, L·λ and L, the ellipticity, the indexed rings
 * @throws RangeError saying what is missing (no rings, rings that cannot be indexed, a voltage outside 1–3000 kV)
 * Notes: K = Σwᵢgᵢ/Rᵢ / Σwᵢ, wᵢ = 1/u²(gᵢ/Rᵢ) from each ring's radius uncertainty (a weighted mean);
 * parts: the rings' radii (type A, the weighted mean's standard error, scaled by the Birge ratio when
 * above 1, Birge, Phys. Rev. 40, 207 (1932)) and the standard's lattice parameter (type B, u_a/a).
 * R·d = λL (camera equation, reference-values §4, Williams & Carter (from memory)).
 */
export function calibrateCameraConstant(image: GreyImage, standard: RingStandard, options: CameraConstantOptions = {}): CameraConstant & { analysis: RingAnalysis } {
  const lambda = options.voltageKv !== undefined ? electronWavelengthForKv(options.voltageKv) : null;
  if (options.detectorPixelUm !== undefined && !(options.detectorPixelUm > 0 && Number.isFinite(options.detectorPixelUm))) {
    throw new RangeError(`the detector pixel size must be a positive number of µm, got ${options.detectorPixelUm}`);
  }
  const analysis = analyseRings(image, options);
  const ix = indexRings(analysis.rings, standard, options.relTolerance ?? 0.006);
  if ('error' in ix) throw new RangeError(ix.error);
  const ks = ix.indexed.map((i) => ({ k: i.kInvNmPerPx, u: i.kInvNmPerPx * (i.ring.uRadiusPx / i.ring.radiusPx) }));
  let sw = 0;
  let swk = 0;
  for (const q of ks) {
    const w = 1 / Math.max(q.u, 1e-12 * q.k) ** 2;
    sw += w;
    swk += w * q.k;
  }
  const k = swk / sw;
  let chi2 = 0;
  for (const q of ks) chi2 += ((q.k - k) / Math.max(q.u, 1e-12 * q.k)) ** 2;
  const birge = ks.length > 1 ? Math.sqrt(chi2 / (ks.length - 1)) : 1;
  const relRadii = (Math.sqrt(1 / sw) * Math.max(1, birge)) / k;
  const relStd = standard.uANm / standard.aNm;
  const parts = [
    { name: `ring radii (${ks.length} rings, weighted mean${birge > 1 ? `, scaled by the Birge ratio ${birge.toFixed(2)}` : ''})`, rel: relRadii, type: 'A' as const },
    { name: `${standard.name}: lattice parameter`, rel: relStd, type: 'B' as const },
  ];
  const relU = Math.hypot(relRadii, relStd);
  const rings = ix.indexed.map((i) => ({ ...i, relResidual: i.kInvNmPerPx / k - 1 }));
  const lambdaL = 1 / k;
  const lengthPx = lambda !== null ? lambdaL / lambda : null;
  const lengthMm = lengthPx !== null && options.detectorPixelUm !== undefined ? (lengthPx * options.detectorPixelUm) / 1000 : null;
  const pct = (v: number) => `${(100 * v).toPrecision(2)} %`;
  return {
    kInvNmPerPx: k,
    relUncertainty: relU,
    parts,
    lambdaLNmPx: lambdaL,
    voltageKv: options.voltageKv ?? null,
    wavelengthNm: lambda,
    cameraLengthPx: lengthPx,
    cameraLengthMm: lengthMm,
    distortion: { e1: analysis.geometry.e1, e2: analysis.geometry.e2 },
    ellipticity: analysis.ellipticity,
    uEllipticity: analysis.uEllipticity,
    majorAxisDeg: analysis.majorAxisDeg,
    standard: { id: standard.id, name: standard.name, aNm: standard.aNm, uANm: standard.uANm, source: standard.source },
    rings,
    unindexedRadiiPx: ix.unindexed.map((r) => r.radiusPx),
    birgeRatio: birge,
    detail: `${standard.name} rings ${rings.map((r) => r.hkl.join(' ')).join(', ')}: K = ${sig(k)} nm⁻¹/px ± ${pct(relU)} (k = 1; radii ${pct(relRadii)}, lattice parameter ${pct(relStd)}), λL = ${sig(lambdaL)} nm·px; ellipticity ${(100 * analysis.ellipticity).toFixed(2)} ± ${(100 * analysis.uEllipticity).toFixed(2)} %, major axis ${analysis.majorAxisDeg.toFixed(1)}°`,
    analysis,
  };
}

function sig(v: number): string {
  return Number(v.toPrecision(6)).toString();
}
