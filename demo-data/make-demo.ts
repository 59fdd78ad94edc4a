/**
 * Makes the demo files: synthetic micrographs and a powder pattern of clay tactoids (stacks of
 * silicate platelets) in a polymer film, with known truth. Seeded: running it again reproduces
 * every file byte for byte.
 *
 *   npm run demo
 *
 * Writes into demo-data/: four micrographs, one Cu Kα pattern and index.json (what each file is
 * and the true values used to make it).
 */
import { writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { encode } from 'fast-png';
import { encodeTiff } from '../testing/encode-tiff';
import { drawText, fillRect, measureText, type Raster } from '../src/figure/draw-text';
import { DEFAULT_LP_GEOMETRY, lpFactor } from '../src/diffraction/lorentz-polarisation';
import { gaussian as gauss, rng } from '../testing/random';

const OUT = dirname(fileURLToPath(import.meta.url));



/** Poisson deviate: exact (Knuth) below mean 30, normal approximation above. */
function poisson(mean: number, r: () => number, g: () => number): number {
  if (mean <= 0) return 0;
  if (mean < 30) {
    const l = Math.exp(-mean);
    let k = 0;
    let p = 1;
    do {
      k++;
      p *= r();
    } while (p > l);
    return k - 1;
  }
  return Math.max(0, Math.round(mean + Math.sqrt(mean) * g()));
}

const raster = (width: number, height: number, fill = 0): Raster => ({ width, height, data: new Float32Array(width * height).fill(fill) });

/** Separable Gaussian blur (the microscope's transfer, as a simple stand-in), edges clamped. */
function blur(img: Raster, sigmaPx: number): void {
  const rad = Math.ceil(3 * sigmaPx);
  const k = new Float32Array(2 * rad + 1);
  let sum = 0;
  for (let i = -rad; i <= rad; i++) sum += k[i + rad] = Math.exp(-(i * i) / (2 * sigmaPx * sigmaPx));
  for (let i = 0; i < k.length; i++) k[i] /= sum;
  const { width: w, height: h, data } = img;
  const tmp = new Float32Array(w * h);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      let s = 0;
      for (let i = -rad; i <= rad; i++) s += k[i + rad] * data[y * w + Math.min(w - 1, Math.max(0, x + i))];
      tmp[y * w + x] = s;
    }
  }
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      let s = 0;
      for (let i = -rad; i <= rad; i++) s += k[i + rad] * tmp[Math.min(h - 1, Math.max(0, y + i)) * w + x];
      data[y * w + x] = s;
    }
  }
}

/**
 * Band-limited isotropic random texture (amorphous granularity, film thickness variation): white
 * Gaussian noise filtered by a difference of Gaussians, so its power spectrum is a smooth band
 * between about fMinPerPx and fMaxPerPx cycles/px with random phases and no discrete
 * frequencies — unlike a sum of plane waves, which would be a set of true periodicities.
 */
function texture(img: Raster, g: () => number, fMinPerPx: number, fMaxPerPx: number, amplitude: number): void {
  const { width: w, height: h, data } = img;
  const fine = raster(w, h, 0);
  for (let i = 0; i < fine.data.length; i++) fine.data[i] = g();
  const coarse = raster(w, h, 0);
  coarse.data.set(fine.data);
  // A Gaussian of σ px passes frequencies up to about 1/(2πσ) cycles/px.
  blur(fine, 1 / (2 * Math.PI * fMaxPerPx));
  blur(coarse, 1 / (2 * Math.PI * fMinPerPx));
  let sum = 0;
  let sum2 = 0;
  for (let i = 0; i < fine.data.length; i++) {
    const v = fine.data[i] - coarse.data[i];
    fine.data[i] = v;
    sum += v;
    sum2 += v * v;
  }
  const n = fine.data.length;
  const sd = Math.sqrt(Math.max(1e-30, sum2 / n - (sum / n) ** 2));
  for (let i = 0; i < n; i++) data[i] += (amplitude * fine.data[i]) / sd;
}

/** Electron counts with shot noise, times a gain, clipped to 16 bits. */
function expose(img: Raster, dosePerPx: number, gain: number, offset: number, r: () => number, g: () => number): Uint16Array {
  const out = new Uint16Array(img.data.length);
  for (let i = 0; i < out.length; i++) {
    const counts = poisson(Math.max(0, img.data[i]) * dosePerPx, r, g);
    out[i] = Math.min(65535, Math.round(offset + gain * counts));
  }
  return out;
}

/** Burns an information strip with a scale bar and its label below a 16-bit image. */
function withStrip(
  pixels: Uint16Array,
  width: number,
  height: number,
  stripPx: number,
  barLengthPx: number,
  label: string,
): { data: Uint16Array; height: number; bar: { x0: number; y: number; lengthPx: number; thicknessPx: number } } {
  const H = height + stripPx;
  const img = raster(width, H, 0);
  for (let i = 0; i < pixels.length; i++) img.data[i] = pixels[i];
  fillRect(img, 0, height, width, stripPx, 0);
  const x0 = 40;
  const y = height + 18;
  const thickness = 10;
  fillRect(img, x0, y, barLengthPx, thickness, 65535);
  const size = 24;
  const m = measureText(label, { sizePx: size, value: 0 });
  drawText(img, label, x0 + barLengthPx / 2 - m.widthPx / 2, y + thickness + 10 + m.ascentPx, { sizePx: size, value: 65535, font: 'sans' });
  const data = new Uint16Array(width * H);
  for (let i = 0; i < data.length; i++) data[i] = Math.round(Math.min(65535, Math.max(0, img.data[i])));
  return { data, height: H, bar: { x0, y, lengthPx: barLengthPx, thicknessPx: thickness } };
}

const SOFTWARE = 'Stratameter demo generator';
const tiffResolution = (nmPerPx: number) => ({ x: 1e7 / nmPerPx, unit: 'cm' as const }); // pixels per cm

interface IndexEntry {
  file: string;
  title: string;
  description: string;
  kind: 'micrograph' | 'pattern';
  truth: Record<string, unknown>;
}
const index: IndexEntry[] = [];

// ---------------------------------------------------------------------------------------------
// 1. Overview: edge-on tactoids, bent, 2–10 layers of period 1.25 nm, 0.5 nm/px, bar in a strip
{
  const seed = 101;
  const r = rng(seed);
  const g = gauss(r);
  const W = 1024;
  const H = 1024;
  const nmPerPx = 0.5;
  const periodNm = 1.25;
  const sheetSigmaNm = 0.3;
  const img = raster(W, H, 1);
  texture(img, g, 0.004, 0.03, 0.05); // slow thickness/density variation of the film
  texture(img, g, 0.15, 0.45, 0.03); // fine amorphous granularity
  const tactoids: Record<string, number>[] = [];
  const darkness = 0.35;
  const count = 26;
  for (let t = 0; t < count; t++) {
    const layers = 2 + Math.floor(r() * 9); // 2–10
    const lengthNm = 40 + 120 * r();
    const radiusNm = (r() < 0.5 ? -1 : 1) * (150 + 850 * r());
    const cx = 40 + (W - 80) * r();
    const cy = 40 + (H - 80) * r();
    const angleDeg = 180 * r(); // direction of the sheets (tangent at the centre), y up on screen
    tactoids.push({
      centreXPx: +cx.toFixed(2),
      centreYPx: +cy.toFixed(2),
      sheetDirectionDeg: +angleDeg.toFixed(2),
      layers,
      lengthNm: +lengthNm.toFixed(1),
      bendRadiusNm: +radiusNm.toFixed(1),
      thicknessNm: +(layers * periodNm).toFixed(3),
    });
    const a = (angleDeg * Math.PI) / 180;
    const tx = Math.cos(a);
    const ty = -Math.sin(a); // pixel y is down
    const nx = -ty;
    const ny = tx;
    const R = radiusNm / nmPerPx;
    const ccx = cx + R * nx; // centre of curvature
    const ccy = cy + R * ny;
    const halfLenPx = lengthNm / nmPerPx / 2;
    const halfThickPx = (layers * periodNm) / nmPerPx / 2 + 3;
    const ext = halfLenPx + halfThickPx + 4;
    const x0 = Math.max(0, Math.floor(cx - ext));
    const x1 = Math.min(W - 1, Math.ceil(cx + ext));
    const y0 = Math.max(0, Math.floor(cy - ext));
    const y1 = Math.min(H - 1, Math.ceil(cy + ext));
    const sig = sheetSigmaNm / nmPerPx;
    const pPx = periodNm / nmPerPx;
    for (let y = y0; y <= y1; y++) {
      for (let x = x0; x <= x1; x++) {
        let acc = 0;
        for (const [sx, sy] of [[0.25, 0.25], [0.75, 0.25], [0.25, 0.75], [0.75, 0.75]]) {
          const px = x + sx - ccx;
          const py = y + sy - ccy;
          const rho = Math.hypot(px, py);
          const u = (R > 0 ? 1 : -1) * (Math.abs(R) - rho); // across the sheets, 0 on the centre line
          // along the arc: angle from the direction back to the tactoid's centre
          const cosPhi = (px * -nx + py * -ny) * Math.sign(R) / rho;
          const s = Math.abs(R) * Math.acos(Math.max(-1, Math.min(1, cosPhi)));
          if (s > halfLenPx + 3) continue;
          const endFade = Math.min(1, Math.max(0, (halfLenPx - s) / 3 + 0.5));
          let dark = 0;
          for (let k = 0; k < layers; k++) {
            const uk = (k - (layers - 1) / 2) * pPx;
            const d = u - uk;
            if (Math.abs(d) < 4 * sig) dark += Math.exp(-(d * d) / (2 * sig * sig));
          }
          acc += 0.25 * endFade * Math.min(1, dark);
        }
        img.data[y * W + x] *= 1 - darkness * acc;
      }
    }
  }
  blur(img, 0.6);
  const counts = expose(img, 400, 90, 2000, r, g);
  const barNm = 100;
  const barPx = barNm / nmPerPx;
  const strip = withStrip(counts, W, H, 72, barPx, '100 nm');
  const file = 'tactoid-film_overview.tif';
  writeFileSync(
    join(OUT, file),
    encodeTiff({
      width: W,
      height: strip.height,
      data: strip.data,
      compression: 'deflate',
      resolution: tiffResolution(nmPerPx),
      description: 'Synthetic overview: clay tactoids in a polymer film (demo data)',
      software: SOFTWARE,
    }),
  );
  index.push({
    file,
    title: 'Tactoid film, overview',
    description:
      'Bright-field overview of a polymer film holding edge-on clay tactoids of 2 to 10 silicate layers, some bent. 16-bit TIFF with resolution tags (0.5 nm/px) and a burned-in 100 nm scale bar in an information strip below the image.',
    kind: 'micrograph',
    truth: {
      seed,
      nmPerPx,
      layerPeriodNm: periodNm,
      sheetProfile: `Gaussian, sigma ${sheetSigmaNm} nm, darkening ${darkness}`,
      blurSigmaPx: 0.6,
      dosePerPx: 400,
      gain: 90,
      offset: 2000,
      scaleBar: { labelNm: barNm, lengthPx: barPx, x0Px: strip.bar.x0, yPx: strip.bar.y, thicknessPx: strip.bar.thicknessPx },
      stripBox: [0, H, W, 72],
      imageBox: [0, 0, W, H],
      tactoids,
    },
  });
}

// ---------------------------------------------------------------------------------------------
// 2. High magnification: 1.25 nm basal fringes in two tactoids at different angles, 0.05 nm/px
{
  const seed = 202;
  const r = rng(seed);
  const g = gauss(r);
  const W = 1024;
  const H = 1024;
  const nmPerPx = 0.05;
  const periodNm = 1.25;
  const img = raster(W, H, 1);
  // amorphous polymer: granularity at 0.01–0.12 cycles/px = 0.2–2.4 nm⁻¹ (phase contrast)
  texture(img, g, 0.01, 0.12, 0.07);
  const pPx = periodNm / nmPerPx;
  const regions = [
    { name: 'A', cx: 330, cy: 330, normalDeg: 28, layers: 8, lengthNm: 36, contrast: 0.16 },
    { name: 'B', cx: 700, cy: 720, normalDeg: 117, layers: 6, lengthNm: 30, contrast: 0.13 },
  ];
  for (const t of regions) {
    const a = (t.normalDeg * Math.PI) / 180;
    const nx = Math.cos(a);
    const ny = -Math.sin(a); // y up on screen
    const halfThick = (t.layers * pPx) / 2;
    const halfLen = t.lengthNm / nmPerPx / 2;
    const phase = 2 * Math.PI * r();
    for (let y = 0; y < H; y++) {
      for (let x = 0; x < W; x++) {
        const dx = x + 0.5 - t.cx;
        const dy = y + 0.5 - t.cy;
        const u = dx * nx + dy * ny; // along the fringe normal
        const s = -dx * ny + dy * nx; // along the fringes
        const wu = Math.min(1, Math.max(0, (halfThick - Math.abs(u)) / 12 + 0.5));
        const ws = Math.min(1, Math.max(0, (halfLen - Math.abs(s)) / 20 + 0.5));
        const w = wu * ws;
        if (w > 0) img.data[y * W + x] += w * t.contrast * Math.cos((2 * Math.PI * u) / pPx + phase);
      }
    }
  }
  blur(img, 1.2);
  const counts = expose(img, 80, 30, 1000, r, g);
  const file = 'tactoid-fringes_hr.tif';
  writeFileSync(
    join(OUT, file),
    encodeTiff({
      width: W,
      height: H,
      data: counts,
      compression: 'deflate',
      resolution: tiffResolution(nmPerPx),
      description: 'Synthetic lattice-fringe image: two clay tactoids in an amorphous polymer (demo data)',
      software: SOFTWARE,
    }),
  );
  index.push({
    file,
    title: 'Tactoid lattice fringes, high magnification',
    description:
      'High-magnification image of two tactoids showing 1.25 nm basal lattice fringes at different angles, in an amorphous polymer background. 16-bit TIFF with resolution tags (0.05 nm/px), no scale bar.',
    kind: 'micrograph',
    truth: {
      seed,
      nmPerPx,
      periodNm,
      periodPx: pPx,
      angleConvention: 'fringe normal, degrees counter-clockwise from +x with y up on the screen',
      tactoids: regions.map((t) => ({ name: t.name, centreXPx: t.cx, centreYPx: t.cy, normalAngleDeg: t.normalDeg, layers: t.layers, lengthNm: t.lengthNm, fringeContrast: t.contrast })),
      blurSigmaPx: 1.2,
      dosePerPx: 80,
      gain: 30,
      offset: 1000,
    },
  });
}

// ---------------------------------------------------------------------------------------------
// 3. Lamellar mesophase: fingerprint pattern, period 3.9 nm, 8-bit PNG with a scale bar only
{
  const seed = 303;
  const r = rng(seed);
  const g = gauss(r);
  const W = 768;
  const H = 768;
  const nmPerPx = 0.3;
  const periodNm = 3.9;
  const pPx = periodNm / nmPerPx;
  const grains = Array.from({ length: 9 }, () => ({ x: W * r(), y: H * r(), angle: Math.PI * r(), phase: 2 * Math.PI * r() }));
  const spread = 150;
  const img = raster(W, H, 0);
  for (let y = 0; y < H; y++) {
    for (let x = 0; x < W; x++) {
      let sw = 0;
      let sv = 0;
      for (const gr of grains) {
        const d2 = (x - gr.x) ** 2 + (y - gr.y) ** 2;
        const w = Math.exp(-d2 / (2 * spread * spread)) ** 4; // sharpened partition: grains with narrow boundaries
        const u = (x + 0.5) * Math.cos(gr.angle) - (y + 0.5) * Math.sin(gr.angle);
        sw += w;
        sv += w * Math.cos((2 * Math.PI * u) / pPx + gr.phase);
      }
      img.data[y * W + x] = 0.5 + 0.18 * (sv / Math.max(sw, 1e-300));
    }
  }
  texture(img, g, 0.02, 0.2, 0.03);
  blur(img, 1.0);
  const counts = expose(img, 120, 1, 0, r, g);
  const u8 = new Uint8Array(W * H);
  let max = 0;
  for (const c of counts) if (c > max) max = c;
  const grey = raster(W, H);
  for (let i = 0; i < u8.length; i++) grey.data[i] = Math.min(255, Math.round((230 * counts[i]) / max));
  // scale bar overlaid in the lower-right corner, on a white box
  const barNm = 50;
  const barPx = barNm / nmPerPx;
  const label = '50 nm';
  const m = measureText(label, { sizePx: 22, value: 0, font: 'block' });
  const boxW = Math.ceil(barPx + 30);
  const boxH = Math.ceil(10 + m.ascentPx + m.descentPx + 34);
  const bx = W - boxW - 16;
  const by = H - boxH - 16;
  fillRect(grey, bx, by, boxW, boxH, 255);
  const barX0 = bx + 15;
  const barY = by + boxH - 14 - 8;
  fillRect(grey, barX0, barY, barPx, 8, 0);
  drawText(grey, label, barX0 + barPx / 2 - m.widthPx / 2, barY - 8 - m.descentPx, { sizePx: 22, value: 0, font: 'block' });
  for (let i = 0; i < u8.length; i++) u8[i] = Math.round(Math.min(255, Math.max(0, grey.data[i])));
  const file = 'lamellar-mesophase.png';
  writeFileSync(join(OUT, file), encode({ width: W, height: H, data: u8, channels: 1, depth: 8 }));
  index.push({
    file,
    title: 'Lamellar mesophase (fingerprint pattern)',
    description:
      'A lamellar surfactant–polymer mesophase region seen as a fingerprint pattern of grains with period 3.9 nm. 8-bit PNG with no calibration in the file: only a burned-in 50 nm scale bar, overlaid in the lower-right corner.',
    kind: 'micrograph',
    truth: {
      seed,
      nmPerPx,
      periodNm,
      periodPx: pPx,
      grains: grains.map((gr) => ({ xPx: +gr.x.toFixed(1), yPx: +gr.y.toFixed(1), normalAngleDeg: +((gr.angle * 180) / Math.PI).toFixed(2) })),
      scaleBar: { labelNm: barNm, lengthPx: barPx, x0Px: barX0, yPx: barY, thicknessPx: 8 },
      overlayBox: [bx, by, boxW, boxH],
      fileCalibration: null,
    },
  });
}

// ---------------------------------------------------------------------------------------------
// 4. Amorphous region: no periodicity at all
{
  const seed = 404;
  const r = rng(seed);
  const g = gauss(r);
  const W = 512;
  const H = 512;
  const nmPerPx = 0.2;
  const img = raster(W, H, 1);
  texture(img, g, 0.01, 0.25, 0.08);
  blur(img, 0.8);
  const counts = expose(img, 100, 20, 500, r, g);
  const file = 'amorphous-polymer.tif';
  writeFileSync(
    join(OUT, file),
    encodeTiff({ width: W, height: H, data: counts, compression: 'deflate', resolution: tiffResolution(nmPerPx), description: 'Synthetic amorphous polymer region (demo data)', software: SOFTWARE }),
  );
  index.push({
    file,
    title: 'Amorphous polymer, no order',
    description: 'A region of the film with no tactoid and no lamellae: amorphous granularity only, so no significant periodicity should be reported. 16-bit TIFF, 0.2 nm/px in the tags.',
    kind: 'micrograph',
    truth: { seed, nmPerPx, periodicities: [], texture: 'white Gaussian noise band-passed by a difference of Gaussians, about 0.01–0.25 cycles/px', blurSigmaPx: 0.8 },
  });
}

// ---------------------------------------------------------------------------------------------
// 5. Powder pattern: 00l basal series of the 1.25 nm phase with Cu Kα1/Kα2, plus 3.9 nm lamellae
{
  const seed = 505;
  const r = rng(seed);
  const g = gauss(r);
  const kA1 = 1.5405929; // Å, ITC C Table 4.2.2.6
  const kA2 = 1.5444274; // Å, Hölzer et al. 1997
  const ratio = 0.5; // Kα2/Kα1, Rachinger convention
  const d001 = 12.5; // Å
  const dLam = 39; // Å
  const crystalliteNm = 10; // Scherrer size along the stacking (8 layers)
  const K = 0.9;
  const lines: { name: string; dA: number; height: number; fwhmDeg?: number }[] = [
    { name: 'lamellar (001)', dA: dLam, height: 900, fwhmDeg: 0.12 },
    { name: 'lamellar (002)', dA: dLam / 2, height: 110, fwhmDeg: 0.14 },
    ...[1, 2, 3, 4, 5, 6].map((l) => ({ name: `clay (00${l})`, dA: d001 / l, height: [2600, 300, 260, 90, 60, 25][l - 1] })),
  ];
  const twoTheta = (d: number, lam: number) => (2 * Math.asin(lam / (2 * d)) * 180) / Math.PI;
  const scherrerFwhmDeg = (tt: number) => (((K * kA1) / (crystalliteNm * 10 * Math.cos((tt * Math.PI) / 360))) * 180) / Math.PI;
  const pv = (x: number, x0: number, fwhm: number, eta: number) => {
    const z = (x - x0) / fwhm;
    return eta / (1 + 4 * z * z) + (1 - eta) * Math.exp(-4 * Math.LN2 * z * z);
  };
  const out: string[] = [
    '# Synthetic powder pattern (demo data): clay tactoids in a polymer film',
    `# wavelength: 1.5406 A (Cu Ka1 ${kA1} A, Ka2 ${kA2} A, Ka2/Ka1 = ${ratio})`,
    '# columns: 2theta_deg counts',
  ];
  const start = 1.5;
  const step = 0.02;
  const n = Math.round((40 - start) / step) + 1;
  const truthPeaks = lines.map((l) => {
    const tt1 = twoTheta(l.dA, kA1);
    return { name: l.name, dNm: l.dA / 10, twoThetaKa1Deg: +tt1.toFixed(4), twoThetaKa2Deg: +twoTheta(l.dA, kA2).toFixed(4), fwhmDeg: +(l.fwhmDeg ?? scherrerFwhmDeg(tt1)).toFixed(4), heightCounts: l.height };
  });
  for (let i = 0; i < n; i++) {
    const x = start + i * step;
    let y = 60 + 4000 * Math.exp(-x / 0.9) + 380 * Math.exp(-((x - 19.6) ** 2) / (2 * 3.6 ** 2)); // air scatter + polymer halo
    // each line tilted by the Lorentz–polarisation factor across it (random powder, Bragg–Brentano, no monochromator)
    for (const p of truthPeaks) {
      y += p.heightCounts * pv(x, p.twoThetaKa1Deg, p.fwhmDeg, 0.4) * (lpFactor(x, DEFAULT_LP_GEOMETRY) / lpFactor(p.twoThetaKa1Deg, DEFAULT_LP_GEOMETRY));
      y += ratio * p.heightCounts * pv(x, p.twoThetaKa2Deg, p.fwhmDeg, 0.4) * (lpFactor(x, DEFAULT_LP_GEOMETRY) / lpFactor(p.twoThetaKa2Deg, DEFAULT_LP_GEOMETRY));
    }
    out.push(`${x.toFixed(2)} ${poisson(y, r, g)}`);
  }
  const file = 'tactoid-film_CuKa.xy';
  writeFileSync(join(OUT, file), out.join('\n') + '\n');
  index.push({
    file,
    title: 'Tactoid film, powder XRD (Cu Kα)',
    description:
      'Reflection powder pattern of the same film, 1.5–40° 2θ: the 00l basal series of the 1.25 nm clay phase with Kα1/Kα2 doublets, the 3.9 nm lamellar peaks at low angle, an amorphous polymer halo near 19.6°, air scatter and counting noise.',
    kind: 'pattern',
    truth: {
      seed,
      wavelengthKa1A: kA1,
      wavelengthKa2A: kA2,
      ka2ToKa1: ratio,
      d001Nm: d001 / 10,
      lamellarPeriodNm: dLam / 10,
      crystalliteSizeNm: crystalliteNm,
      scherrerK: K,
      profile: 'pseudo-Voigt, eta 0.4, times LP(2θ)/LP(2θ0) across each line',
      lorentzPolarisation: 'random powder, Bragg–Brentano, no monochromator',
      stepDeg: step,
      peaks: truthPeaks,
      background: '60 + 4000 exp(-2θ/0.9°) + 380 exp(-(2θ-19.6°)²/(2·3.6°²))',
    },
  });
}

writeFileSync(join(OUT, 'index.json'), JSON.stringify(index, null, 2) + '\n');
console.log(index.map((e) => e.file).join('\n'));
