/**
 * Where in a region a spectrum spot's fringes live, and how well their frequency is known there:
 * the spot's complex band-pass field (geometric phase analysis), the crystal support it implies,
 * and the Cramér–Rao bound of a weighted fit on that support.
 */
import type { GreyImage } from '../image/grey-image';
import { realDft2d } from '../image/fft';
import type { Workspace } from '../image/workspace';
import { fftRadix2 } from './period-profile';
import type { RectPx } from './spectrum';
import { windowSamples } from './window';

/** Below this window value (the region's tapered edges) a cell's amplitude is not estimated. */
export const MIN_WINDOW = 0.5;

/** The complex DFT of a lightly tapered region (DFT order, interleaved re, im), its half u ≤ width/2 kept. */
export interface ComplexSpectrum {
  /** The area transformed (image pixels). */
  area: RectPx;
  /**
   * Interleaved re, im of the bins u = 0 … ⌊width/2⌋: index 2·(v·(⌊width/2⌋ + 1) + u). The other
   * bins are the mirrors, X(u, v) = X(width − u, (height − v) mod height)* (a real region's
   * spectrum): read any bin with {@link spectrumBinIndex}.
   */
  data: Float32Array;
  /** The windows applied along x and y. */
  windowX: Float64Array;
  windowY: Float64Array;
}

/**
 * Complex DFT of an area after removing its mean and applying a separable Tukey window.
 *
 * Parameters: image; area (inside the image, any size ≥ 16 × 16); tukeyAlpha (default 0.3);
 * workspace, to hold the spectrum in its 'spectrum-complex' buffer (valid until the next complex
 * spectrum taken with that workspace; default a fresh array).
 * Returns: the complex spectrum in DFT order, its half u ≤ width/2 stored (half the memory of the
 * full spectrum; the other half is the mirror, given exactly by {@link spectrumBinIndex}).
 * Reference: periodogram with data window, Harris, Proc. IEEE 66(1), 51–83 (1978).
 */
export async function complexSpectrum(image: GreyImage, area: RectPx, tukeyAlpha = 0.3, workspace?: Workspace): Promise<ComplexSpectrum> {
  const { x, y, width: w, height: h } = area;
  if (x < 0 || y < 0 || x + w > image.width || y + h > image.height || w < 16 || h < 16) {
    throw new RangeError(`area x ${x}, y ${y}, ${w} × ${h} must lie inside the ${image.width} × ${image.height} image and be at least 16 × 16`);
  }
  const wx = windowSamples('tukey', w, tukeyAlpha);
  const wy = windowSamples('tukey', h, tukeyAlpha);
  const d = image.data;
  let sum = 0;
  for (let j = 0; j < h; j++) {
    const o = (y + j) * image.width + x;
    for (let i = 0; i < w; i++) sum += d[o + i];
  }
  const mean = sum / (w * h);
  // the transform writes every element of its output, so a borrowed array serves as a fresh one
  const halfLength = 2 * ((w >> 1) + 1) * h;
  const data = workspace ? workspace.float32('spectrum-complex', halfLength) : new Float32Array(halfLength);
  await realDft2d(
    w,
    h,
    (m, j) => {
      const o = (y + j) * image.width + x;
      for (let i = 0; i < w; i++) m[i] = (d[o + i] - mean) * wx[i] * wy[j];
    },
    { kind: 'half-complex', out: data },
  );
  return { area: { ...area }, data, windowX: wx, windowY: wy };
}

/**
 * Where bin (u, v) of a complex spectrum lies in its stored half: the index of its real part in
 * `data`, negated (−index − 1) when the bin is the mirror of a stored one, whose imaginary part
 * then changes sign (X(u, v) = X(width − u, (height − v) mod height)*).
 *
 * Parameters: u, v, bin indices in 0 … width − 1 and 0 … height − 1; width, height of the area.
 * Returns: 2·(v·(⌊width/2⌋ + 1) + u) for u ≤ width/2, else −(that index of the mirror bin) − 1.
 * Reference: Hermitian symmetry of the DFT of real data (Bracewell, The Fourier Transform and Its Applications, from memory).
 */
export function spectrumBinIndex(u: number, v: number, width: number, height: number): number {
  const nc = (width >> 1) + 1;
  if (u < nc) return 2 * (v * nc + u);
  return -(2 * (((height - v) % height) * nc + (width - u))) - 1;
}

/** Options of {@link spotField}. */
export interface SpotFieldOptions {
  /** Width σ of the Gaussian band-pass around the spot, in bins of the longer side (default: a sixteenth of the region resolves, see notes). */
  sigmaBins?: number;
  /** Side of the (square) grid the field is sampled on (power of two, default 64). */
  gridSize?: number;
}

/** A spot's band-pass field on a coarse grid over the area. */
export interface SpotField {
  /** Grid side (samples along x and y). */
  gridSize: number;
  /** Grid spacing in image pixels along x and y. */
  cellWidthPx: number;
  cellHeightPx: number;
  /** Complex field, interleaved re, im, row-major (gridSize²), at baseband of (fx, fy): B(x) ≈ (a(x)/2)·w(x)·e^(iφ(x)). */
  field: Float64Array;
  /** Local fringe amplitude a(x) = 2|B|/w (grey values), the noise's mean share removed, row-major; NaN near the edges, where the window is below MIN_WINDOW and the amplitude is not known. */
  amplitude: Float64Array;
  /** Standard deviation of |B| from noise alone (the background near the spot), in amplitude units of `amplitude`. */
  noiseAmplitude: number;
  /** White-noise variance per pixel equivalent to the background power near the spot (grey values²). */
  noiseVariance: number;
  /** The frequency the field is demodulated at, cycles/px. */
  fx: number;
  fy: number;
  /** σ of the band-pass in cycles/px. */
  sigmaPerPx: number;
}

/**
 * The complex band-pass field of one spectrum spot: the fringes of that spot alone, as an
 * amplitude and a phase over the region.
 *
 * Parameters: spec, the region's complex spectrum; fx, fy, the spot's frequency (cycles/px, fy
 * along the row index); options.
 * Returns: the field on a gridSize² grid covering the area, the local amplitude and the noise level.
 * Notes: the spectrum is multiplied by a Gaussian centred on the spot (σ in bins), shifted to zero
 * frequency and inverse-transformed on a coarse grid: the demodulated fringe field of geometric
 * phase analysis. Its amplitude shows where the spot's fringes are; its phase is their local
 * displacement. The band-pass is kept narrower than a third of the spot's distance from zero so
 * that the mean contrast of a stack (the envelope around zero frequency) does not leak in. The
 * noise variance is the median power of the spectrum in an annulus 3σ–6σ around the spot, over
 * ln 2 (median of an exponential) and over Σw² (the window's energy).
 * Reference: Hÿtch, Snoeck & Kilaas, Ultramicroscopy 74, 131 (1998).
 */
export function spotField(spec: ComplexSpectrum, fx: number, fy: number, options: SpotFieldOptions = {}): SpotField {
  const { width: w, height: h } = spec.area;
  const n = options.gridSize ?? 64;
  if (!(Number.isInteger(Math.log2(n)) && n >= 8 && n <= 512)) throw new RangeError(`gridSize must be a power of two in 8–512, got ${n}`);
  const nMax = Math.max(w, h);
  const fAbsBins = Math.hypot(fx * w, fy * h);
  const sigma = options.sigmaBins ?? Math.max(0.8, Math.min(16 / (2 * Math.PI), fAbsBins / 3.5));
  if (!(sigma > 0)) throw new RangeError(`sigmaBins must be positive, got ${sigma}`);
  // σ along each axis in that axis's bins (square in physical frequency)
  const sx = (sigma * w) / nMax;
  const sy = (sigma * h) / nMax;
  const cu = fx * w;
  const cv = fy * h;
  const ru = Math.ceil(3.5 * sx);
  const rv = Math.ceil(3.5 * sy);
  const re = new Float64Array(n * n);
  const im = new Float64Array(n * n);
  const u0 = Math.round(cu);
  const v0 = Math.round(cv);
  const d = spec.data;
  let gSum2 = 0;
  for (let dv = -rv; dv <= rv; dv++) {
    const vv = v0 + dv;
    const ey = (vv - cv) / sy;
    const vi = ((vv % h) + h) % h;
    for (let du = -ru; du <= ru; du++) {
      const uu = u0 + du;
      const ex = (uu - cu) / sx;
      const g = Math.exp(-0.5 * (ex * ex + ey * ey));
      if (g < 1e-4) continue;
      const ui = ((uu % w) + w) % w;
      const at = spectrumBinIndex(ui, vi, w, h);
      const k = at >= 0 ? at : -at - 1;
      // shift to baseband: bin offset (uu − cu, vv − cv); the residual sub-bin offset is applied as a phase ramp below
      const gi = ((dv % n) + n) % n;
      const gu = ((du % n) + n) % n;
      re[gi * n + gu] += g * d[k];
      im[gi * n + gu] += g * (at >= 0 ? d[k + 1] : -d[k + 1]);
      gSum2 += g * g;
    }
  }
  // Inverse transform on the grid: B(x_j) = (1/(W·H)) Σ X(u) e^(2πi (du·x/W + dv·y/H)), x_j = j·W/n.
  // With integer offsets du the grid transform is an n-point inverse DFT along each axis (n ≥ 2r + 1).
  ifft2(re, im, n);
  const field = new Float64Array(2 * n * n);
  const amplitude = new Float64Array(n * n);
  const windowAt = new Float64Array(n * n);
  const cellW = w / n;
  const cellH = h / n;
  const fracU = u0 - cu;
  const fracV = v0 - cv;
  const scale = 1 / (w * h);
  for (let j = 0; j < n; j++) {
    const yPx = j * cellH;
    const wyv = spec.windowY[Math.min(h - 1, Math.round(yPx))];
    for (let i = 0; i < n; i++) {
      const xPx = i * cellW;
      // the grid was demodulated at the integer bins (u0, v0): move to the spot's own frequency
      const ph = 2 * Math.PI * ((fracU * xPx) / w + (fracV * yPx) / h);
      const c = Math.cos(ph);
      const s = Math.sin(ph);
      const k = j * n + i;
      const r0 = re[k] * scale;
      const i0 = im[k] * scale;
      field[2 * k] = r0 * c - i0 * s;
      field[2 * k + 1] = r0 * s + i0 * c;
      const wv = spec.windowX[Math.min(w - 1, Math.round(xPx))] * wyv;
      amplitude[k] = wv >= MIN_WINDOW ? (2 * Math.hypot(r0, i0)) / wv : NaN;
      windowAt[k] = wv;
    }
  }
  // Background near the spot: median |X|² in an annulus 3.5σ–7σ (bins), the spot's own bins excluded.
  const ring: number[] = [];
  const rOut = Math.ceil(7 * Math.max(sx, sy)) + 2;
  for (let dv = -rOut; dv <= rOut; dv++) {
    for (let du = -rOut; du <= rOut; du++) {
      const e = Math.hypot(du / Math.max(sx, 0.5), dv / Math.max(sy, 0.5));
      if (e < 3.5 || e > 7 + 2 / Math.max(sx, sy)) continue;
      const ui = (((u0 + du) % w) + w) % w;
      const vi = (((v0 + dv) % h) + h) % h;
      if (ui === 0 && vi === 0) continue;
      const at = spectrumBinIndex(ui, vi, w, h);
      const k = at >= 0 ? at : -at - 1;
      ring.push(d[k] * d[k] + d[k + 1] * d[k + 1]);
    }
  }
  ring.sort((a, b) => a - b);
  const medianPower = ring.length ? ring[ring.length >> 1] : 0;
  let sw2 = 0;
  const winX = spec.windowX;
  const winY = spec.windowY;
  // indexed loops (not for…of): the same sums in the same order, without an iterator per element
  for (let i = 0; i < winX.length; i++) {
    const a = winX[i];
    for (let j = 0; j < winY.length; j++) {
      const b = winY[j];
      sw2 += a * a * b * b;
    }
  }
  const noiseVariance = sw2 > 0 ? medianPower / Math.LN2 / sw2 : 0;
  // |B| noise: var(B) = (1/(WH))² Σ G² E|X|², amplitude units ×2 (a = 2|B|)
  const noiseAmplitude = 2 * Math.sqrt(gSum2 * (medianPower / Math.LN2)) * scale;
  // |B|² = |signal|² + |noise|² on average: remove the noise's share, so faint fringes are not
  // credited with the noise's amplitude (which would make their bound too small)
  for (let k = 0; k < amplitude.length; k++) {
    if (!Number.isFinite(amplitude[k])) continue;
    const nk = noiseAmplitude / windowAt[k];
    amplitude[k] = Math.sqrt(Math.max(0, amplitude[k] * amplitude[k] - nk * nk));
  }
  return { gridSize: n, cellWidthPx: cellW, cellHeightPx: cellH, field, amplitude, noiseAmplitude, noiseVariance, fx, fy, sigmaPerPx: sigma / nMax };
}

/** In-place 2D inverse DFT (unnormalised) of an n × n complex array, n a power of two. */
function ifft2(re: Float64Array, im: Float64Array, n: number): void {
  const rr = new Float64Array(n);
  const ri = new Float64Array(n);
  // inverse = conj(FFT(conj(x)))
  for (let k = 0; k < im.length; k++) im[k] = -im[k];
  for (let j = 0; j < n; j++) {
    for (let i = 0; i < n; i++) {
      rr[i] = re[j * n + i];
      ri[i] = im[j * n + i];
    }
    fftRadix2(rr, ri);
    for (let i = 0; i < n; i++) {
      re[j * n + i] = rr[i];
      im[j * n + i] = ri[i];
    }
  }
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      rr[j] = re[j * n + i];
      ri[j] = im[j * n + i];
    }
    fftRadix2(rr, ri);
    for (let j = 0; j < n; j++) {
      re[j * n + i] = rr[j];
      im[j * n + i] = ri[j];
    }
  }
  for (let k = 0; k < im.length; k++) im[k] = -im[k];
}

/** The support of a spot: where its fringes stand above the noise, as weights 0–1 on the field's grid. */
export interface SpotSupport {
  /** Weight per grid cell, row-major (gridSize²): 0 where only noise, rising to 1 at full fringe amplitude. */
  weights: Float64Array;
  /** Fraction of the area carrying the fringes: cells above half the plateau's weight. */
  coverage: number;
  /** Largest local amplitude (grey values). */
  peakAmplitude: number;
}

/**
 * Where a spot's fringes are: a soft mask from the local amplitude of its band-pass field.
 *
 * Parameters: field from {@link spotField}.
 * Returns: weights (0 at and below 3 noise standard deviations, 1 at the peak amplitude's
 * plateau), the covered fraction and the peak amplitude.
 * Notes: a weight proportional to the local amplitude is what a maximum-likelihood fit of a tone
 * of varying amplitude gives each sample (a matched filter); the noise floor is subtracted so that
 * amorphous parts of the region get no weight.
 * Reference: amplitude image of geometric phase analysis, Hÿtch, Snoeck & Kilaas (1998).
 */
export function spotSupport(field: SpotField): SpotSupport {
  const a = field.amplitude;
  const n = field.gridSize;
  const valid = Array.from(a).filter((v) => Number.isFinite(v)).sort((x, y) => x - y);
  const weights = new Float64Array(n * n);
  if (!valid.length) return { weights, coverage: 0, peakAmplitude: 0 };
  // the plateau: the 90th percentile of the amplitude, robust to a few bright noise cells
  const peak = valid[Math.floor(0.9 * (valid.length - 1))];
  const floor = 3 * field.noiseAmplitude;
  let s = 0;
  let cells = 0;
  if (peak > floor) {
    for (let k = 0; k < a.length; k++) {
      if (!Number.isFinite(a[k])) continue;
      const v = Math.max(0, Math.min(1, (a[k] - floor) / (peak - floor)));
      weights[k] = v;
      if (v > 0.5) s++; // covered: above half the plateau (robust to the noise's scatter about it)
      cells++;
    }
    // edge cells (window too low to estimate): the weight of the nearest cell inside
    for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) {
      const k = j * n + i;
      if (Number.isFinite(a[k])) continue;
      let best = Infinity;
      let w = 0;
      for (let r = 1; r < n && best === Infinity; r++) {
        for (let dj = -r; dj <= r; dj++) for (let di = -r; di <= r; di++) {
          if (Math.max(Math.abs(di), Math.abs(dj)) !== r) continue;
          const ii = i + di;
          const jj = j + dj;
          if (ii < 0 || jj < 0 || ii >= n || jj >= n) continue;
          const kk = jj * n + ii;
          if (!Number.isFinite(a[kk])) continue;
          const d = di * di + dj * dj;
          if (d < best) {
            best = d;
            w = weights[kk];
          }
        }
      }
      weights[k] = w;
    }
  }
  return { weights, coverage: cells ? s / cells : 0, peakAmplitude: peak };
}

/**
 * Weights per image pixel of an area from a grid of weights over it (bilinear).
 *
 * Parameters: grid weights (n × n) over an area of width × height px; out, an array of
 * width · height values to write them into (every element is written; default a fresh array).
 * Returns: Float32Array of width · height weights (`out` when given).
 */
export function pixelWeights(grid: Float64Array, n: number, width: number, height: number, out: Float32Array = new Float32Array(width * height)): Float32Array {
  if (out.length !== width * height) throw new RangeError(`out must hold ${width} × ${height} = ${width * height} weights, got ${out.length}`);
  const cw = width / n;
  const ch = height / n;
  // each column's cells and fraction, computed once for all rows
  const c0 = new Int32Array(width);
  const c1 = new Int32Array(width);
  const fxs = new Float64Array(width);
  for (let x = 0; x < width; x++) {
    const gx = Math.min(n - 1.000001, Math.max(0, x / cw));
    const i0 = Math.floor(gx);
    c0[x] = i0;
    c1[x] = Math.min(n - 1, i0 + 1);
    fxs[x] = gx - i0;
  }
  for (let y = 0; y < height; y++) {
    const gy = Math.min(n - 1.000001, Math.max(0, y / ch));
    const j0 = Math.floor(gy);
    const fy = gy - j0;
    const j1 = Math.min(n - 1, j0 + 1);
    const r0 = j0 * n;
    const r1 = j1 * n;
    const o = y * width;
    for (let x = 0; x < width; x++) {
      const fx = fxs[x];
      const i0 = c0[x];
      const i1 = c1[x];
      out[o + x] = (grid[r0 + i0] * (1 - fx) + grid[r0 + i1] * fx) * (1 - fy) + (grid[r1 + i0] * (1 - fx) + grid[r1 + i1] * fx) * fy;
    }
  }
  return out;
}

/** Standard deviations of a fitted frequency vector. */
export interface FrequencyStd {
  /** Along x and along the row index, cycles/px. */
  fxStd: number;
  fyStd: number;
}

/**
 * The Cramér–Rao-type standard deviation of a frequency fitted with weights, for fringes of
 * varying amplitude in white noise.
 *
 * Parameters: field (its amplitude map a(x) and noise variance σ²); weights on the field's grid
 * (null: 1 everywhere); windowX, windowY, the data window of the fit over the cells used; cells,
 * the range of grid cells of the fit (default: all, the whole area).
 * Returns: the standard deviations of fx and fy in cycles/px.
 * Notes: linearising the maximiser of |Σ W d e^(−2πi f·x)|² for d = a(x) cos(2π f·x + φ) + noise
 * gives var(f_x) = 2σ² Σ W²(x − x̄)² / ((2π)² [Σ W a (x − x̄)²]²), x̄ the W·a-weighted centroid;
 * for W = 1 and constant a it is the bound 12/((2π)² η N (N² − 1)) per axis with η = a²/(2σ²).
 * The sums run over the grid cells (each standing for its cell of pixels, with the cell's own
 * second moment added).
 * Reference: Rife & Boorstyn, IEEE Trans. Inf. Theory 20(5), 591 (1974) (the bound); weighted form: linearised periodogram maximiser (derivation ours).
 */
export function weightedFrequencyStd(
  field: SpotField,
  weights: Float64Array | null,
  windowX: Float64Array,
  windowY: Float64Array,
  cells: { i0: number; i1: number; j0: number; j1: number } = { i0: 0, i1: field.gridSize, j0: 0, j1: field.gridSize },
): FrequencyStd {
  const n = field.gridSize;
  const cw = field.cellWidthPx;
  const ch = field.cellHeightPx;
  const area = cw * ch;
  const sigma2 = field.noiseVariance;
  // the windows span the cells' pixels: cell i of the range sits at window sample (i − i0)·cw
  const wAt = (i: number, j: number) =>
    windowX[Math.min(windowX.length - 1, Math.round((i - cells.i0) * cw))] * windowY[Math.min(windowY.length - 1, Math.round((j - cells.j0) * ch))] * (weights ? weights[j * n + i] : 1);
  const { i0, i1, j0, j1 } = cells;
  // edge cells have no amplitude estimate: take the support's plateau scaled by their weight
  const finiteAmps = Array.from(field.amplitude).filter((v) => Number.isFinite(v)).sort((x, y) => x - y);
  const plateau = finiteAmps.length ? finiteAmps[Math.floor(0.9 * (finiteAmps.length - 1))] : 0;
  const ampAt = (k: number) => (Number.isFinite(field.amplitude[k]) ? field.amplitude[k] : (weights ? weights[k] : 1) * plateau);
  let swa = 0;
  let swax = 0;
  let sway = 0;
  for (let j = j0; j < j1; j++) for (let i = i0; i < i1; i++) {
    const wa = wAt(i, j) * ampAt(j * n + i);
    swa += wa;
    swax += wa * i * cw;
    sway += wa * j * ch;
  }
  if (!(swa > 0) || !(sigma2 > 0)) return { fxStd: Infinity, fyStd: Infinity };
  const xb = swax / swa;
  const yb = sway / swa;
  let s1x = 0;
  let s1y = 0;
  let s2x = 0;
  let s2y = 0;
  for (let j = j0; j < j1; j++) for (let i = i0; i < i1; i++) {
    const W = wAt(i, j);
    const a = ampAt(j * n + i);
    const dx2 = (i * cw - xb) ** 2 + (cw * cw) / 12;
    const dy2 = (j * ch - yb) ** 2 + (ch * ch) / 12;
    s1x += W * a * dx2 * area;
    s1y += W * a * dy2 * area;
    s2x += W * W * dx2 * area;
    s2y += W * W * dy2 * area;
  }
  const k = 2 * sigma2 / (4 * Math.PI * Math.PI);
  return { fxStd: Math.sqrt((k * s2x) / (s1x * s1x)), fyStd: Math.sqrt((k * s2y) / (s1y * s1y)) };
}


/** How a spot's fringes turn and what their local frequency is, from the phase of its field. */
export interface FieldGeometry {
  /** Weighted standard deviation of the local fringe direction over the support, degrees. */
  directionSdDeg: number;
  /** Weighted mean of the local frequency magnitude |f(x)|, cycles/px (NaN when no cell qualifies). */
  meanMagnitudePerPx: number;
  /** Cells used. */
  cells: number;
}

/**
 * The local frequency vector of a spot's fringes, f(x) = f₀ + ∇φ(x)/2π, over the cells of its
 * support (geometric phase analysis), summarised as the spread of the local direction and the
 * mean local frequency magnitude.
 *
 * Parameters: field from {@link spotField}; weights per cell (the support).
 * Returns: direction spread, mean magnitude, cells used.
 * Notes: phase differences are taken between neighbouring cells as arg(B(x+1)·B*(x−1)), free of
 * wrapping for the band-pass widths used; only cells whose amplitude is known (away from the
 * region's edges) and with weight above one half count. The magnitude of the local frequency does
 * not depend on the fringes' direction, so bent lamellae of constant spacing give one magnitude
 * everywhere while their spot is an arc whose maximum lies off the ring.
 * Reference: Hÿtch, Snoeck & Kilaas, Ultramicroscopy 74, 131 (1998).
 */
export function fieldGeometry(field: SpotField, weights: Float64Array): FieldGeometry {
  const n = field.gridSize;
  const B = field.field;
  const arg = (a: number, b: number) => Math.atan2(B[2 * a + 1] * B[2 * b] - B[2 * a] * B[2 * b + 1], B[2 * a] * B[2 * b] + B[2 * a + 1] * B[2 * b + 1]);
  const a0 = Math.atan2(field.fy, field.fx);
  let sw = 0;
  let sf = 0;
  let sa = 0;
  let sa2 = 0;
  let cells = 0;
  for (let j = 1; j < n - 1; j++) {
    for (let i = 1; i < n - 1; i++) {
      const k = j * n + i;
      const w = weights[k];
      if (!(w > 0.5) || !Number.isFinite(field.amplitude[k])) continue;
      const fx = field.fx + arg(k + 1, k - 1) / (2 * field.cellWidthPx) / (2 * Math.PI);
      const fy = field.fy + arg(k + n, k - n) / (2 * field.cellHeightPx) / (2 * Math.PI);
      let da = Math.atan2(fy, fx) - a0;
      while (da > Math.PI / 2) da -= Math.PI;
      while (da < -Math.PI / 2) da += Math.PI;
      sw += w;
      sf += w * Math.hypot(fx, fy);
      sa += w * da;
      sa2 += w * da * da;
      cells++;
    }
  }
  if (!(sw > 0)) return { directionSdDeg: 0, meanMagnitudePerPx: NaN, cells: 0 };
  const ma = sa / sw;
  return { directionSdDeg: (Math.sqrt(Math.max(0, sa2 / sw - ma * ma)) * 180) / Math.PI, meanMagnitudePerPx: sf / sw, cells };
}
