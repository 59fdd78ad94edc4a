import { describe, expect, test } from 'vitest';
import { gaussianKernel, IDEAL_DETECTOR, kernelTransfer, makeRandom, poissonDeviate } from '../../testing/synthetic/imaging';
import { FAMILIES, generateCase, renderCase } from '../../testing/synthetic/lattice-images';
import { bandLimited, darkLinesProfile, harmonicAmplitude, sineProfile } from '../../testing/synthetic/profiles';
import { axialAngleDeg, frequencyOf, maskValue, NO_TEXTURE, type Scene } from '../../testing/synthetic/scene';

/** |Σ (v − mean) e^(−2πi(fx·x + fy·y))|², the periodogram at any frequency (direct DFT sum; common practice). */
function dftPower(data: ArrayLike<number>, w: number, h: number, fx: number, fy: number): number {
  let mean = 0;
  for (let i = 0; i < w * h; i++) mean += data[i];
  mean /= w * h;
  let re = 0;
  let im = 0;
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const a = -2 * Math.PI * (fx * x + fy * y);
      const v = data[y * w + x] - mean;
      re += v * Math.cos(a);
      im += v * Math.sin(a);
    }
  }
  return re * re + im * im;
}

/** Bilinear sample of a row-major image. */
function bilinear(data: ArrayLike<number>, w: number, x: number, y: number): number {
  const x0 = Math.floor(x);
  const y0 = Math.floor(y);
  const fx = x - x0;
  const fy = y - y0;
  const at = (i: number, j: number) => data[j * w + i];
  return (at(x0, y0) * (1 - fx) + at(x0 + 1, y0) * fx) * (1 - fy) + (at(x0, y0 + 1) * (1 - fx) + at(x0 + 1, y0 + 1) * fx) * fy;
}

describe('synthetic lattice images: the truth is in the image', () => {
  test('straight fringes: the periodogram peaks at the stated frequency vector, not at its mirror image', () => {
    for (const seed of [3, 4, 5]) {
      const { image, truth } = generateCase('straight', seed);
      const t = truth.periodicities[0];
      const { width: w, height: h, data } = image;
      const p0 = dftPower(data, w, h, t.fxPerPx, t.fyPerPx);
      // a quarter of a bin off the truth along x, y and the normal loses power (the peak of a
      // many-period sinusoid is at its frequency; common practice)
      const f = Math.hypot(t.fxPerPx, t.fyPerPx);
      const q = 0.25 / Math.max(w, h);
      for (const [dx, dy] of [[q, 0], [-q, 0], [0, q], [0, -q], [(q * t.fxPerPx) / f, (q * t.fyPerPx) / f], [(-q * t.fxPerPx) / f, (-q * t.fyPerPx) / f]]) {
        expect(p0, `seed ${seed}, offset ${dx}, ${dy}`).toBeGreaterThan(dftPower(data, w, h, t.fxPerPx + dx, t.fyPerPx + dy));
      }
      // the direction convention (y up on the screen, row index down): the mirrored vector is noise
      if (Math.abs(t.fxPerPx) > 2 / w && Math.abs(t.fyPerPx) > 2 / h) {
        expect(p0).toBeGreaterThan(100 * dftPower(data, w, h, t.fxPerPx, -t.fyPerPx));
      }
      expect(t.angleDeg).toBeCloseTo(axialAngleDeg(t.fxPerPx, t.fyPerPx), 9);
    }
  });

  test('an angle of 30° as shown is a fringe normal pointing up and to the right', () => {
    // row index grows downwards, so a normal 30° above +x has fy = −sin 30° / d (see tests/measure/synth.ts)
    const { fxPerPx, fyPerPx } = frequencyOf(10, 30);
    expect(fxPerPx).toBeCloseTo(Math.cos(Math.PI / 6) / 10, 12);
    expect(fyPerPx).toBeCloseTo(-0.5 / 10, 12);
  });

  test('curved lamellae: the spacing along any normal is the stated d', () => {
    const d = 7.3;
    const cx = -150.5;
    const cy = 80.25;
    const scene: Scene = {
      widthPx: 256,
      heightPx: 200,
      sets: [{ periodPx: d, profile: sineProfile(), contrast: 0.3, geometry: { kind: 'arcs', centreXPx: cx, centreYPx: cy, phaseCycles: 0.37 }, mask: { kind: 'all' } }],
      meanSteps: [],
      texture: NO_TEXTURE,
      thickness: null,
      illumination: [],
      blurPx: 0.8,
      dosePerPx: 1000,
      detector: IDEAL_DETECTOR,
    };
    const { expectedCounts } = renderCase('curved', 1, scene, []);
    // along three rays from the centre of curvature, in windows of 8 periods at two radii, the
    // Hann-windowed periodogram of the profile peaks at 1/d (a local spacing; common practice)
    for (const dirDeg of [-12, 0, 10]) {
      const a = (dirDeg * Math.PI) / 180;
      const radii: number[] = [];
      for (let r = 0; r < 600; r += 0.5) {
        const x = cx + r * Math.cos(a);
        const y = cy - r * Math.sin(a);
        if (x >= 1 && y >= 1 && x <= 254 && y <= 198) radii.push(r);
        else if (radii.length > 0) break;
      }
      const first = radii[0];
      const last = radii[radii.length - 1];
      expect(last - first, `ray ${dirDeg}°`).toBeGreaterThan(16 * d);
      for (const start of [first, last - 8 * d]) {
        const step = 0.25;
        const n = Math.floor((8 * d) / step);
        const v: number[] = [];
        for (let i = 0; i < n; i++) {
          const r = start + i * step;
          v.push(bilinear(expectedCounts, 256, cx + r * Math.cos(a), cy - r * Math.sin(a)));
        }
        const mean = v.reduce((s, x) => s + x, 0) / n;
        let best = 0;
        let bestF = 0;
        for (let k = -400; k <= 400; k++) {
          const f = (1 / d) * (1 + k / 4000);
          let re = 0;
          let im = 0;
          for (let i = 0; i < n; i++) {
            const w = 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / n);
            re += w * (v[i] - mean) * Math.cos(2 * Math.PI * f * i * step);
            im -= w * (v[i] - mean) * Math.sin(2 * Math.PI * f * i * step);
          }
          if (re * re + im * im > best) {
            best = re * re + im * im;
            bestF = f;
          }
        }
        expect(Math.abs(1 / bestF - d) / d, `ray ${dirDeg}°, from r = ${start.toFixed(0)} px`).toBeLessThan(0.005);
      }
    }
  });

  test('curved family: the stated direction is the normal at the region centre', () => {
    let checked = 0;
    for (let seed = 1; seed <= 12; seed++) {
      const { truth } = generateCase('curved', seed);
      const s = truth.scene.sets[0];
      if (s.geometry.kind !== 'arcs' || s.mask.kind !== 'all') continue;
      const t = truth.periodicities[0];
      expect(t.periodPx).toBe(s.periodPx);
      const dir = axialAngleDeg((truth.scene.widthPx - 1) / 2 - s.geometry.centreXPx, (truth.scene.heightPx - 1) / 2 - s.geometry.centreYPx);
      expect(Math.abs(dir - t.angleDeg) % 180).toBeLessThan(1e-6);
      checked++;
    }
    expect(checked).toBeGreaterThan(2);
  });

  test('small crystals fill 5–40 % of the region, inside its central 80 %', () => {
    for (let seed = 1; seed <= 6; seed++) {
      const { truth } = generateCase('small-crystal', seed);
      const { widthPx: w, heightPx: h } = truth.scene;
      const mask = truth.scene.sets[0].mask;
      let inside = 0;
      let outsideCentre = 0;
      for (let y = 0; y < h; y += 2) {
        for (let x = 0; x < w; x += 2) {
          const v = maskValue(mask, x, y);
          inside += v;
          if (v > 0.5 && (x < 0.1 * w || x > 0.9 * w || y < 0.1 * h || y > 0.9 * h)) outsideCentre++;
        }
      }
      const fraction = inside / (Math.ceil(w / 2) * Math.ceil(h / 2));
      // soft edges and sampling on every second pixel: a little tolerance (common practice)
      expect(fraction, `seed ${seed}`).toBeGreaterThan(0.04);
      expect(fraction, `seed ${seed}`).toBeLessThan(0.42);
      expect(outsideCentre, `seed ${seed}`).toBe(0);
      expect(truth.scene.meanSteps[0].delta).not.toBe(0);
    }
  });

  test('sharp dark lines carry their harmonics up to the sampling limit only', () => {
    const p = darkLinesProfile(0.06);
    // a periodic Gaussian line of width σ: c₂/c₁ = e^(−6π²σ²) (Fourier series of a Gaussian; common practice)
    expect(harmonicAmplitude(p, 2) / harmonicAmplitude(p, 1)).toBeCloseTo(Math.exp(-6 * Math.PI * Math.PI * 0.0036), 9);
    expect(bandLimited(p, 6.5).re.length).toBe(3); // 3/6.5 < 0.5 < 4/6.5 cycles/px
    expect(bandLimited(p, 2.6).re.length).toBe(1);
    expect(bandLimited(p, 40).re.length).toBe(12);
  });

  test('the harmonics family reports the fundamental as truth even when a harmonic is stronger', () => {
    for (let seed = 1; seed <= 8; seed++) {
      const { truth } = generateCase('harmonics', seed);
      const s = truth.scene.sets[0];
      expect(truth.periodicities[0].periodPx).toBe(s.periodPx);
      expect(s.periodPx).toBeGreaterThanOrEqual(6.5);
      expect(harmonicAmplitude(s.profile, 2)).toBeGreaterThan(0);
      expect(harmonicAmplitude(s.profile, 3)).toBeGreaterThan(0);
    }
  });
});

describe('synthetic lattice images: the imaging chain', () => {
  test('Poisson counts have variance equal to their mean, exact and normal branches', () => {
    // Poisson law: E = Var = λ (common practice); 40 000 draws, 6 standard errors
    for (const lambda of [0.7, 3, 30, 400]) {
      const r = makeRandom(17);
      const n = 40_000;
      let s = 0;
      let s2 = 0;
      for (let i = 0; i < n; i++) {
        const k = poissonDeviate(lambda, r);
        expect(Number.isInteger(k) && k >= 0).toBe(true);
        s += k;
        s2 += k * k;
      }
      const mean = s / n;
      const variance = s2 / n - mean * mean;
      expect(Math.abs(mean - lambda)).toBeLessThan(6 * Math.sqrt(lambda / n));
      // var of the sample variance ≈ (2λ² + λ)/n for a Poisson law (fourth cumulant λ)
      expect(Math.abs(variance - lambda)).toBeLessThan(6 * Math.sqrt((2 * lambda * lambda + lambda) / n));
    }
  });

  test('the sampled Gaussian kernel transfers like a Gaussian', () => {
    // Fourier transform of a Gaussian: H(f) = exp(−2π²σ²f²) (common practice); the sampled kernel matches for σ ≥ 1
    const k = gaussianKernel(2);
    for (const f of [0.02, 0.1, 0.2]) expect(kernelTransfer(k, f)).toBeCloseTo(Math.exp(-2 * Math.PI * Math.PI * 4 * f * f), 4);
  });

  test('every family is seeded: the same seed gives the same image, another family another case', () => {
    for (const family of FAMILIES) {
      const a = generateCase(family, 7);
      expect(a.truth.family).toBe(family);
      for (const p of a.truth.periodicities) {
        expect(p.periodPx).toBeGreaterThanOrEqual(2.6);
        expect(p.periodPx).toBeLessThanOrEqual(60);
        expect(5 * p.periodPx).toBeLessThanOrEqual(Math.min(a.image.width, a.image.height) + 1e-9);
      }
      if (family === 'curved' || family === 'small-crystal' || family === 'amorphous') {
        expect(generateCase(family, 7).image.data).toEqual(a.image.data);
      }
    }
    expect(generateCase('straight', 7).truth.periodicities[0].periodPx).not.toBe(generateCase('low-dose', 7).truth.periodicities[0].periodPx);
  });

  test('saturation clips at least the stated fraction at one level', () => {
    const { image, truth } = generateCase('saturation', 2);
    const clip = truth.scene.detector.saturatedFraction;
    if (clip > 0 && truth.scene.detector.eightBitRangeFactor === 0) {
      let atMax = 0;
      for (const v of image.data) if (v === image.max) atMax++;
      expect(atMax / image.data.length).toBeGreaterThanOrEqual(clip - 1e-9);
    }
    expect(truth.saturatedFraction).toBeGreaterThanOrEqual(clip - 1e-9);
  });
});
