/**
 * The two-dimensional discrete Fourier transform of a real image region, as the spectrum tools
 * use it: a power spectrum or the complex spectrum in DFT order (the layout of a full complex
 * transform, index v · width + u), or only its half u ≤ width/2 (the rest is its mirror).
 *
 * The one-dimensional transforms run in PFFFT compiled to WebAssembly with SIMD (about 40 KB,
 * compiled in milliseconds; the plain build where the engine has no SIMD) for lengths
 * 2^a·3^b·5^c with a ≥ 5 (real rows) or a ≥ 4 (complex columns); every other length runs in a
 * mixed-radix transform in double precision below (Bluestein's chirp for lengths with a prime
 * factor above 5). The real rows are transformed first, then the columns of the half spectrum;
 * the other half follows from Hermitian symmetry, X(−u, −v) = X(u, v)*.
 */
import type { PffftModule } from './pffft';
import { loadPffft } from './pffft';

/**
 * What the 2D transform writes: |X|² (width · height values), X (interleaved re, im, 2 · width ·
 * height values), or the half of X with u = 0 … ⌊width/2⌋ ('half-complex': interleaved, 2 · (⌊width/2⌋ + 1)
 * · height values, index 2 · (v · (⌊width/2⌋ + 1) + u); the other half is X(u, v) = X(width − u, (height − v) mod height)*).
 */
export type Dft2dOutput = { kind: 'power'; out: Float32Array } | { kind: 'complex'; out: Float32Array } | { kind: 'half-complex'; out: Float32Array };

/** A one-dimensional transform plan: a PFFFT set-up (pointer) or the JavaScript fallback. */
interface Plan1d {
  n: number;
  /** PFFFT set-up pointer, 0 when PFFFT does not take this length. */
  setup: number;
  /** The fallback, when setup is 0. */
  js: ComplexFft | null;
}

/** Columns transformed per block (gathered into contiguous memory, transformed, scattered). */
const COLUMN_BLOCK = 16;

let engine: Promise<PffftModule> | null = null;
const realPlans = new Map<number, Plan1d>();
const complexPlans = new Map<number, Plan1d>();

/** Loads the transform engine once per realm (process, page or worker); later calls return at once. */
export function loadFft(): Promise<void> {
  engine ??= loadPffft();
  return engine.then(() => undefined);
}

function pffftTakes(n: number, minPowerOfTwo: number): boolean {
  let k = n;
  let twos = 0;
  while (k % 2 === 0) {
    k /= 2;
    twos++;
  }
  for (const p of [3, 5]) while (k % p === 0) k /= p;
  return k === 1 && twos >= minPowerOfTwo;
}

function plan(m: PffftModule, n: number, kind: 'real' | 'complex'): Plan1d {
  const cache = kind === 'real' ? realPlans : complexPlans;
  let p = cache.get(n);
  if (!p) {
    // PFFFT: real lengths need 2^5 | n, complex 2^4 | n (four-wide SIMD vectors)
    const setup = pffftTakes(n, kind === 'real' ? 5 : 4) ? m._pffft_new_setup(n, kind === 'real' ? 0 : 1) : 0;
    p = { n, setup, js: setup ? null : new ComplexFft(n) };
    cache.set(n, p);
  }
  return p;
}

/**
 * Forward 2D DFT of a real width × height array, X(u, v) = Σ x(i, j) e^{−2πi(ui/width + vj/height)}
 * (unscaled, as opencv.js's `dft` and numpy's `fft2`).
 *
 * @param width columns (≥ 1)
 * @param height rows (≥ 1)
 * @param fillRow writes one row of the input: `fillRow(row, j)` must set row[i] for every
 *   i < width to x(i, j); it is called once for each j in turn (the array is reused from row to
 *   row and may live in the engine's memory: do not keep it)
 * @param output where the result goes: power |X|² (width · height values) or the complex X
 *   (2 · width · height values, interleaved), both in DFT order, index v · width + u, or the half
 *   u ≤ width/2 of X ('half-complex')
 * Notes: single precision in PFFFT, double precision in the fallback; results agree with a
 * double-precision DFT to a few units of float32 rounding relative to the largest value. The rows'
 * transforms are kept in the output array itself and the columns transformed there a block at a
 * time, so the transform needs no memory of the image's size besides its output (the engine holds
 * one row and one block of columns).
 * Reference: row–column decomposition of the 2D DFT with real-input symmetry (Cooley & Tukey,
 * Math. Comput. 19, 297 (1965); PFFFT after FFTPACK, Swarztrauber 1982).
 */
export async function realDft2d(width: number, height: number, fillRow: (row: Float32Array, j: number) => void, output: Dft2dOutput): Promise<void> {
  if (!(Number.isInteger(width) && width >= 1)) throw new RangeError(`width must be a positive integer, got ${width}`);
  if (!(Number.isInteger(height) && height >= 1)) throw new RangeError(`height must be a positive integer, got ${height}`);
  const need = output.kind === 'power' ? width * height : output.kind === 'complex' ? 2 * width * height : 2 * ((width >> 1) + 1) * height;
  if (!(output.out instanceof Float32Array) || output.out.length !== need) {
    throw new RangeError(`output.out must be a Float32Array of ${need} values for a ${width} × ${height} ${output.kind} spectrum, got ${output.out?.length}`);
  }
  engine ??= loadPffft();
  const m = await engine;
  const w = width;
  const h = height;
  const nc = (w >> 1) + 1; // columns of the half spectrum (u = 0 … ⌊w/2⌋)
  const nyquist = (w & 1) === 0 && w > 1 ? nc - 1 : -1; // the real Nyquist column, when w is even
  const rowPlan = plan(m, w, 'real');
  const colPlan = plan(m, h, 'complex');
  const block = Math.min(COLUMN_BLOCK, nc);
  const pRow = m._pffft_aligned_malloc(4 * Math.max(w, 4));
  const pCol = m._pffft_aligned_malloc(8 * block * h);
  const pWork = m._pffft_aligned_malloc(4 * Math.max(w, 2 * h));
  if (!pRow || !pCol || !pWork) {
    for (const p of [pRow, pCol, pWork]) if (p) m._pffft_aligned_free(p);
    throw new RangeError(`a ${w} × ${h} transform needs ${Math.round((8 * block * h) / 2 ** 20)} MiB that the transform engine could not get`);
  }
  const out = output.out;
  const kind = output.kind;
  // Where row j's transform is kept until its columns are transformed, in the output itself:
  // 'complex' and 'half-complex' keep X(u, j) where X(u, v) goes (row stride 2w or 2nc), so each
  // column is transformed in place. 'power' has only w values per row: the row is kept packed,
  // x(0) at 0, the complex X(u) for 0 < u < w/2 at 2u − 1 (re) and 2u (im), the real Nyquist
  // value at w − 1; a column block's powers overwrite only the places of columns already
  // gathered (p ≤ u0 + nb − 1 holds column ⌈p/2⌉), and the mirrored half is written at the end.
  // The DC and Nyquist values of a real row's transform are real (their imaginary parts are 0).
  const rowStride = kind === 'complex' ? 2 * w : kind === 'half-complex' ? 2 * nc : w;
  try {
    // views are taken after every allocation (the memory may have grown, which replaces its buffer)
    const heap = new Float32Array(m.HEAPF32.buffer);
    const row = heap.subarray(pRow >> 2, (pRow >> 2) + w);
    const col = heap.subarray(pCol >> 2, (pCol >> 2) + 2 * block * h);

    // 1. Rows: real transform, nc complex values (DC … Nyquist) per row, kept in the output.
    const keepRow = (j: number, re: (u: number) => number, im: (u: number) => number) => {
      const o = j * rowStride;
      if (kind === 'power') {
        out[o] = re(0);
        for (let u = 1; u < nc; u++) {
          if (u === nyquist) {
            out[o + w - 1] = re(u);
          } else {
            out[o + 2 * u - 1] = re(u);
            out[o + 2 * u] = im(u);
          }
        }
      } else {
        for (let u = 0; u < nc; u++) {
          out[o + 2 * u] = re(u);
          out[o + 2 * u + 1] = im(u);
        }
      }
    };
    if (rowPlan.setup) {
      for (let j = 0; j < h; j++) {
        fillRow(row, j);
        m._pffft_transform_ordered(rowPlan.setup, pRow, pRow, pWork, 0);
        // PFFFT packs the real Nyquist value into the DC value's imaginary slot
        const o = j * rowStride;
        if (kind === 'power') {
          out[o] = row[0];
          out.set(row.subarray(2, w), o + 1);
          out[o + w - 1] = row[1];
        } else {
          out.set(row.subarray(2, w), o + 2);
          out[o] = row[0];
          out[o + 1] = 0;
          out[o + w] = row[1];
          out[o + w + 1] = 0;
        }
      }
    } else {
      // two real rows a, b at once as z = a + i·b: A(u) = (Z(u) + Z(−u)*)/2, B(u) = (Z(u) − Z(−u)*)/(2i)
      const js = rowPlan.js!;
      const { re, im } = js;
      const a = new Float32Array(nc);
      const ai = new Float32Array(nc);
      const b = new Float32Array(nc);
      const bi = new Float32Array(nc);
      for (let j = 0; j < h; j += 2) {
        fillRow(row, j);
        for (let i = 0; i < w; i++) re[i] = row[i];
        if (j + 1 < h) {
          fillRow(row, j + 1);
          for (let i = 0; i < w; i++) im[i] = row[i];
        } else {
          im.fill(0, 0, w);
        }
        js.forward();
        for (let u = 0; u < nc; u++) {
          const k = u === 0 ? 0 : w - u;
          const zr = re[u];
          const zi = im[u];
          const cr = re[k];
          const ci = -im[k];
          a[u] = 0.5 * (zr + cr);
          ai[u] = 0.5 * (zi + ci);
          b[u] = 0.5 * (zi - ci);
          bi[u] = -0.5 * (zr - cr);
        }
        keepRow(j, (u) => a[u], (u) => ai[u]);
        if (j + 1 < h) keepRow(j + 1, (u) => b[u], (u) => bi[u]);
      }
    }

    // 2. Columns of the half spectrum, a block at a time, transformed where they are kept.
    for (let u0 = 0; u0 < nc; u0 += block) {
      const nb = Math.min(block, nc - u0);
      if (kind === 'power') {
        // the DC and Nyquist columns (real) apart, so the loop over the others has no branch
        const bFirst = u0 === 0 ? 1 : 0;
        const bEnd = nyquist >= u0 && nyquist < u0 + nb ? nyquist - u0 : nb;
        for (let j = 0; j < h; j++) {
          const o = j * w;
          if (bFirst === 1) {
            col[2 * j] = out[o];
            col[2 * j + 1] = 0;
          }
          for (let bb = bFirst, d = 2 * (bFirst * h + j), q = o + 2 * (u0 + bFirst) - 1; bb < bEnd; bb++, d += 2 * h, q += 2) {
            col[d] = out[q];
            col[d + 1] = out[q + 1];
          }
          if (bEnd < nb) {
            const d = 2 * (bEnd * h + j);
            col[d] = out[o + w - 1];
            col[d + 1] = 0;
          }
        }
      } else {
        for (let j = 0; j < h; j++) {
          const s = j * rowStride + 2 * u0;
          for (let bb = 0; bb < nb; bb++) {
            const d = 2 * (bb * h + j);
            col[d] = out[s + 2 * bb];
            col[d + 1] = out[s + 2 * bb + 1];
          }
        }
      }
      if (colPlan.setup) {
        for (let bb = 0; bb < nb; bb++) m._pffft_transform_ordered(colPlan.setup, pCol + 8 * bb * h, pCol + 8 * bb * h, pWork, 0);
      } else {
        const js = colPlan.js!;
        for (let bb = 0; bb < nb; bb++) {
          const o = 2 * bb * h;
          for (let v = 0; v < h; v++) {
            js.re[v] = col[o + 2 * v];
            js.im[v] = col[o + 2 * v + 1];
          }
          js.forward();
          for (let v = 0; v < h; v++) {
            col[o + 2 * v] = js.re[v];
            col[o + 2 * v + 1] = js.im[v];
          }
        }
      }
      // columns u0 + b with b in [m0, m1) have their mirror w − u in the other half (0 < u ≤ w − nc)
      const m0 = u0 === 0 ? 1 : 0;
      const m1 = Math.max(m0, Math.min(nb, w - nc - u0 + 1));
      if (kind === 'half-complex') {
        for (let v = 0; v < h; v++) {
          const r = 2 * (v * nc + u0);
          for (let bb = 0, d = 2 * v; bb < nb; bb++, d += 2 * h) {
            out[r + 2 * bb] = col[d];
            out[r + 2 * bb + 1] = col[d + 1];
          }
        }
      } else if (kind === 'power') {
        // the mirrored half is written once every column is done (its places still hold rows' values)
        for (let v = 0; v < h; v++) {
          const r = v * w + u0;
          for (let bb = 0, d = 2 * v; bb < nb; bb++, d += 2 * h) out[r + bb] = col[d] * col[d] + col[d + 1] * col[d + 1];
        }
      } else {
        for (let v = 0; v < h; v++) {
          const r = 2 * (v * w + u0);
          const mirror = 2 * (((h - v) % h) * w + w - u0);
          for (let bb = 0, d = 2 * v; bb < nb; bb++, d += 2 * h) {
            out[r + 2 * bb] = col[d];
            out[r + 2 * bb + 1] = col[d + 1];
          }
          for (let bb = m0; bb < m1; bb++) {
            out[mirror - 2 * bb] = out[r + 2 * bb];
            out[mirror - 2 * bb + 1] = -out[r + 2 * bb + 1];
          }
        }
      }
    }
    if (kind === 'power') {
      // the other half, P(w − u, −v) = P(u, v) for 0 < u ≤ w − nc (places u ≥ nc, free now)
      for (let v = 0; v < h; v++) {
        const r = v * w;
        const mirror = ((h - v) % h) * w + w;
        for (let u = 1; u <= w - nc; u++) out[mirror - u] = out[r + u];
      }
    }
  } finally {
    m._pffft_aligned_free(pRow);
    m._pffft_aligned_free(pCol);
    m._pffft_aligned_free(pWork);
  }
}

/** Splits n into the radices of the mixed-radix stages (4 first, then 2, 3, 5), or null when n has another prime factor. */
function radices(n: number): number[] | null {
  const out: number[] = [];
  let k = n;
  while (k % 4 === 0) {
    out.push(4);
    k /= 4;
  }
  for (const p of [2, 3, 5]) {
    while (k % p === 0) {
      out.push(p);
      k /= p;
    }
  }
  return k === 1 ? out : null;
}

/**
 * A forward complex DFT of one length in double precision (the fallback for lengths PFFFT does
 * not take): Stockham autosort stages of radix 4, 2, 3 and 5; any other length by Bluestein's
 * chirp transform over a power-of-two length.
 * Reference: Stockham autosort FFT (Cochran et al., Proc. IEEE 55, 1664 (1967)); chirp z-transform,
 * Bluestein, IEEE Trans. Audio Electroacoust. 18, 451 (1970).
 */
export class ComplexFft {
  /** Real parts: write the input here, read the result here after forward(). */
  readonly re: Float64Array;
  /** Imaginary parts. */
  readonly im: Float64Array;
  /** Stockham stages: radix, sub-transform length so far, twiddles e^{−2πi·q·k/(ns·r)} at [k·(r−1) + q − 1]. */
  private readonly stages: Stage[] | null;
  private readonly tr: Float64Array;
  private readonly ti: Float64Array;
  private readonly chirp: { m: ComplexFft; wr: Float64Array; wi: Float64Array; br: Float64Array; bi: Float64Array } | null = null;

  /** @param n the length (≥ 1) */
  constructor(readonly n: number) {
    if (!(Number.isInteger(n) && n >= 1)) throw new RangeError(`n must be a positive integer, got ${n}`);
    this.re = new Float64Array(n);
    this.im = new Float64Array(n);
    this.tr = new Float64Array(n);
    this.ti = new Float64Array(n);
    const rs = radices(n);
    let ns = 1;
    this.stages = rs
      ? rs.map((r) => {
          const twr = new Float64Array(ns * (r - 1));
          const twi = new Float64Array(ns * (r - 1));
          for (let k = 0; k < ns; k++) {
            for (let q = 1; q < r; q++) {
              const a = (-2 * Math.PI * q * k) / (ns * r);
              twr[k * (r - 1) + q - 1] = Math.cos(a);
              twi[k * (r - 1) + q - 1] = Math.sin(a);
            }
          }
          const stage = { r, ns, twr, twi };
          ns *= r;
          return stage;
        })
      : null;
    if (!this.stages) {
      // Bluestein: X_k = w_k Σ (x_j w_j) conj(w_{k−j}), w_k = e^{−iπk²/n}, as a cyclic convolution of length M ≥ 2n − 1
      let mLen = 1;
      // (a length with a prime factor above 5)
      while (mLen < 2 * n - 1) mLen *= 2;
      const wr = new Float64Array(n);
      const wi = new Float64Array(n);
      for (let k = 0; k < n; k++) {
        const a = (Math.PI * ((k * k) % (2 * n))) / n;
        wr[k] = Math.cos(a);
        wi[k] = -Math.sin(a);
      }
      const conv = new ComplexFft(mLen);
      conv.re.fill(0);
      conv.im.fill(0);
      for (let k = 0; k < n; k++) {
        conv.re[k] = wr[k];
        conv.im[k] = -wi[k];
        if (k > 0) {
          conv.re[mLen - k] = wr[k];
          conv.im[mLen - k] = -wi[k];
        }
      }
      conv.forward();
      this.chirp = { m: conv, wr, wi, br: Float64Array.from(conv.re), bi: Float64Array.from(conv.im) };
    }
  }

  /** Transforms re, im in place (forward, unscaled). */
  forward(): void {
    if (this.stages) this.stockham();
    else this.bluestein();
  }

  private stockham(): void {
    const n = this.n;
    let xr = this.re;
    let xi = this.im;
    let yr = this.tr;
    let yi = this.ti;
    for (const stage of this.stages!) {
      if (stage.r === 4) radix4(n, stage, xr, xi, yr, yi);
      else if (stage.r === 2) radix2(n, stage, xr, xi, yr, yi);
      else if (stage.r === 3) radix3(n, stage, xr, xi, yr, yi);
      else radix5(n, stage, xr, xi, yr, yi);
      const tr = xr;
      xr = yr;
      yr = tr;
      const ti = xi;
      xi = yi;
      yi = ti;
    }
    if (xr !== this.re) {
      this.re.set(xr);
      this.im.set(xi);
    }
  }

  private bluestein(): void {
    const { m, wr, wi, br, bi } = this.chirp!;
    const n = this.n;
    m.re.fill(0);
    m.im.fill(0);
    for (let k = 0; k < n; k++) {
      m.re[k] = this.re[k] * wr[k] - this.im[k] * wi[k];
      m.im[k] = this.re[k] * wi[k] + this.im[k] * wr[k];
    }
    m.forward();
    // multiply by the chirp's transform, then an inverse transform as conj(F(conj(·)))/M
    for (let k = 0; k < m.n; k++) {
      const r = m.re[k] * br[k] - m.im[k] * bi[k];
      const i = m.re[k] * bi[k] + m.im[k] * br[k];
      m.re[k] = r;
      m.im[k] = -i;
    }
    m.forward();
    for (let k = 0; k < n; k++) {
      const r = m.re[k] / m.n;
      const i = -m.im[k] / m.n;
      this.re[k] = r * wr[k] - i * wi[k];
      this.im[k] = r * wi[k] + i * wr[k];
    }
  }
}

/** A Stockham stage: radix r, sub-transform length ns so far, twiddles at [k·(r−1) + q − 1]. */
interface Stage {
  r: number;
  ns: number;
  twr: Float64Array;
  twi: Float64Array;
}

// One Stockham stage per radix: inputs x[j + q·n/r] (j = g·ns + k), twiddled by e^{−2πi·q·k/(ns·r)},
// a length-r DFT, outputs y[g·ns·r + k + p·ns] (Govindaraju et al., SC 2008, "High performance
// discrete Fourier transforms on graphics processors", the Stockham formulation).

function radix2(n: number, { ns, twr, twi }: Stage, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array): void {
  const stride = n >> 1;
  for (let j = 0; j < stride; j++) {
    const k = j % ns;
    const base = (j - k) * 2 + k;
    const b = xr[j + stride];
    const c = xi[j + stride];
    const a1r = b * twr[k] - c * twi[k];
    const a1i = b * twi[k] + c * twr[k];
    yr[base] = xr[j] + a1r;
    yi[base] = xi[j] + a1i;
    yr[base + ns] = xr[j] - a1r;
    yi[base + ns] = xi[j] - a1i;
  }
}

function radix4(n: number, { ns, twr, twi }: Stage, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array): void {
  const stride = n >> 2;
  for (let j = 0; j < stride; j++) {
    const k = j % ns;
    const base = (j - k) * 4 + k;
    const t = 3 * k;
    const a0r = xr[j];
    const a0i = xi[j];
    let b = xr[j + stride];
    let c = xi[j + stride];
    const a1r = b * twr[t] - c * twi[t];
    const a1i = b * twi[t] + c * twr[t];
    b = xr[j + 2 * stride];
    c = xi[j + 2 * stride];
    const a2r = b * twr[t + 1] - c * twi[t + 1];
    const a2i = b * twi[t + 1] + c * twr[t + 1];
    b = xr[j + 3 * stride];
    c = xi[j + 3 * stride];
    const a3r = b * twr[t + 2] - c * twi[t + 2];
    const a3i = b * twi[t + 2] + c * twr[t + 2];
    const t0r = a0r + a2r;
    const t0i = a0i + a2i;
    const t1r = a0r - a2r;
    const t1i = a0i - a2i;
    const t2r = a1r + a3r;
    const t2i = a1i + a3i;
    const t3r = a1r - a3r;
    const t3i = a1i - a3i;
    yr[base] = t0r + t2r;
    yi[base] = t0i + t2i;
    yr[base + 2 * ns] = t0r - t2r;
    yi[base + 2 * ns] = t0i - t2i;
    yr[base + ns] = t1r + t3i;
    yi[base + ns] = t1i - t3r;
    yr[base + 3 * ns] = t1r - t3i;
    yi[base + 3 * ns] = t1i + t3r;
  }
}

const C3 = -0.5;
const S3 = -Math.sqrt(3) / 2;

function radix3(n: number, { ns, twr, twi }: Stage, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array): void {
  const stride = n / 3;
  for (let j = 0; j < stride; j++) {
    const k = j % ns;
    const base = (j - k) * 3 + k;
    const t = 2 * k;
    const a0r = xr[j];
    const a0i = xi[j];
    let b = xr[j + stride];
    let c = xi[j + stride];
    const a1r = b * twr[t] - c * twi[t];
    const a1i = b * twi[t] + c * twr[t];
    b = xr[j + 2 * stride];
    c = xi[j + 2 * stride];
    const a2r = b * twr[t + 1] - c * twi[t + 1];
    const a2i = b * twi[t + 1] + c * twr[t + 1];
    const sr = a1r + a2r;
    const si = a1i + a2i;
    const dr = a1r - a2r;
    const di = a1i - a2i;
    const mr = a0r + C3 * sr;
    const mi = a0i + C3 * si;
    yr[base] = a0r + sr;
    yi[base] = a0i + si;
    yr[base + ns] = mr - S3 * di;
    yi[base + ns] = mi + S3 * dr;
    yr[base + 2 * ns] = mr + S3 * di;
    yi[base + 2 * ns] = mi - S3 * dr;
  }
}

const C5A = Math.cos((2 * Math.PI) / 5);
const C5B = Math.cos((4 * Math.PI) / 5);
const S5A = -Math.sin((2 * Math.PI) / 5);
const S5B = -Math.sin((4 * Math.PI) / 5);

function radix5(n: number, { ns, twr, twi }: Stage, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array): void {
  const stride = n / 5;
  for (let j = 0; j < stride; j++) {
    const k = j % ns;
    const base = (j - k) * 5 + k;
    const t = 4 * k;
    const a0r = xr[j];
    const a0i = xi[j];
    let b = xr[j + stride];
    let c = xi[j + stride];
    const a1r = b * twr[t] - c * twi[t];
    const a1i = b * twi[t] + c * twr[t];
    b = xr[j + 2 * stride];
    c = xi[j + 2 * stride];
    const a2r = b * twr[t + 1] - c * twi[t + 1];
    const a2i = b * twi[t + 1] + c * twr[t + 1];
    b = xr[j + 3 * stride];
    c = xi[j + 3 * stride];
    const a3r = b * twr[t + 2] - c * twi[t + 2];
    const a3i = b * twi[t + 2] + c * twr[t + 2];
    b = xr[j + 4 * stride];
    c = xi[j + 4 * stride];
    const a4r = b * twr[t + 3] - c * twi[t + 3];
    const a4i = b * twi[t + 3] + c * twr[t + 3];
    // pairs (1, 4) and (2, 3)
    const p1r = a1r + a4r;
    const p1i = a1i + a4i;
    const m1r = a1r - a4r;
    const m1i = a1i - a4i;
    const p2r = a2r + a3r;
    const p2i = a2i + a3i;
    const m2r = a2r - a3r;
    const m2i = a2i - a3i;
    yr[base] = a0r + p1r + p2r;
    yi[base] = a0i + p1i + p2i;
    const q1r = a0r + C5A * p1r + C5B * p2r;
    const q1i = a0i + C5A * p1i + C5B * p2i;
    const q2r = a0r + C5B * p1r + C5A * p2r;
    const q2i = a0i + C5B * p1i + C5A * p2i;
    const u1r = S5A * m1r + S5B * m2r;
    const u1i = S5A * m1i + S5B * m2i;
    const u2r = S5B * m1r - S5A * m2r;
    const u2i = S5B * m1i - S5A * m2i;
    yr[base + ns] = q1r - u1i;
    yi[base + ns] = q1i + u1r;
    yr[base + 4 * ns] = q1r + u1i;
    yi[base + 4 * ns] = q1i - u1r;
    yr[base + 2 * ns] = q2r - u2i;
    yi[base + 2 * ns] = q2i + u2r;
    yr[base + 3 * ns] = q2r + u2i;
    yi[base + 3 * ns] = q2i - u2r;
  }
}
