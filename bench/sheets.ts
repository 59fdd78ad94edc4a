/**
 * bench:sheets — accuracy of layer counts and thickness on seeded synthetic stacks
 * (clay tactoids in a polymer film): along drawn lines and automatic over whole images.
 * Targets: layer count exact for ≥ 95 % of sheets of ≥ 2 layers at moderate noise; thickness
 * within half a period; no sheets in a purely amorphous image.
 */
import { sheetsAlongProfile } from '../src/sheets/profile';
import { detectSheets } from '../src/sheets/detect';
import { axialDifferenceDeg } from '../src/sheets/structure-tensor';
import { gauss, rng, syntheticImage, syntheticProfile, type ImageSheet } from '../testing/synthetic/stacks';

function table(head: string[], rows: (string | number)[][]): void {
  const cells = rows.map((r) => r.map(String));
  const w = head.map((h, k) => Math.max(h.length, ...cells.map((r) => r[k].length)));
  console.log(`| ${head.map((h, k) => h.padEnd(w[k])).join(' | ')} |`);
  console.log(`|${w.map((x, k) => (k === 0 ? '-'.repeat(x + 2) : `${'-'.repeat(x + 1)}:`)).join('|')}|`);
  for (const r of cells) console.log(`| ${r.map((c, k) => (k === 0 ? c.padEnd(w[k]) : c.padStart(w[k]))).join(' | ')} |`);
  console.log('');
}

const pct = (a: number, b: number) => (b === 0 ? '—' : `${((100 * a) / b).toFixed(1)} %`);

/** Gaussian blur of a 1D profile. */
function blur1d(v: Float64Array, sigma: number): Float64Array {
  if (sigma <= 0) return v;
  const r = Math.ceil(3 * sigma);
  const out = new Float64Array(v.length);
  for (let i = 0; i < v.length; i++) {
    let s = 0;
    let w = 0;
    for (let k = -r; k <= r; k++) {
      const j = Math.min(v.length - 1, Math.max(0, i + k));
      const g = Math.exp(-0.5 * (k / sigma) ** 2);
      s += g * v[j];
      w += g;
    }
    out[i] = s / w;
  }
  return out;
}

// ---------- A: along a line (profiles of 2 stacks with a gap) ----------
// usage: npm run bench:sheets -- [parts, e.g. AB] [--seed N]; --seed shifts every seed by N
// (default 0), for checking a change on a second, independent set of stacks
const argv = process.argv.slice(2);
const seedAt = argv.indexOf('--seed');
const seedBase = seedAt >= 0 ? Number(argv[seedAt + 1]) : 0;
if (!Number.isInteger(seedBase) || seedBase < 0) throw new RangeError(`--seed must be a non-negative integer, got ${argv[seedAt + 1]}`);
const parts = argv.find((a, i) => !a.startsWith('--') && (seedAt < 0 || i !== seedAt + 1)) ?? 'ABCD';
console.log(`seed offset ${seedBase}\n`);
const noiseLevels: [string, number][] = [
  ['low', 0.015],
  ['moderate', 0.03],
  ['high', 0.06],
];
if (parts.includes('A')) {
console.log('## A. Along a line: two stacks per profile, period 6–14 px, gap 1–6 periods, 8 seeds per row');
console.log('profile noise sd relative to a layer depth of 0.3 (a 9 px wide line on an image with 3× this noise);');
console.log('blur σ = 0.15 period on odd seeds.\n');
const rowsA: (string | number)[][] = [];
const summaryA = new Map<string, { n: number; exact: number; thick: number; found: number }>();
for (const [label, noise] of noiseLevels) {
  for (let layers = 1; layers <= 12; layers++) {
    let n = 0;
    let found = 0;
    let exact = 0;
    let thick = 0;
    let absErr = 0;
    const sharp = { n: 0, exact: 0, thick: 0, found: 0 };
    const blurred = { n: 0, exact: 0, thick: 0, found: 0 };
    for (let s8 = 1; s8 <= 8; s8++) {
      const seed = s8 + 8 * seedBase;
      const part = s8 % 2 ? blurred : sharp;
      part.n++;
      const r = rng(1000 * layers + seed + 77 * noise * 1000);
      const p = 6 + 8 * r();
      const other = 2 + Math.floor(6 * r());
      const gap = p * (1 + 5 * r());
      const first = 4 * p + 10 * r();
      const truth = [
        { layers, periodPx: p, firstPx: first },
        { layers: other, periodPx: p, firstPx: first + (layers - 1) * p + gap + p },
      ];
      const length = Math.ceil(truth[1].firstPx + other * p + 4 * p);
      let prof = syntheticProfile(length, truth, { noise: 0, seed });
      prof = blur1d(prof, s8 % 2 ? 0.15 * p : 0);
      const rn = rng(seed * 31 + layers);
      prof = prof.map((v) => v + noise * gauss(rn));
      const res = sheetsAlongProfile(prof, { minLayers: layers === 1 ? 1 : 2 });
      n++;
      const centre = first + ((layers - 1) * p) / 2;
      const s = res.sheets.find((q) => Math.abs(q.centerPx - centre) < Math.max(p, (layers * p) / 3));
      if (!s) continue;
      found++;
      part.found++;
      if (s.layers === layers) { exact++; part.exact++; }
      const err = Math.abs(s.thicknessPx - layers * p);
      if (err < p / 2) { thick++; part.thick++; }
      absErr += err / p;
    }
    rowsA.push([label, layers, n, pct(found, n), pct(exact, n), pct(thick, n), found ? (absErr / found).toFixed(3) : '—']);
    const all = { n, exact, thick, found };
    if (layers >= 2) {
      for (const [key, st] of [[label, all], [`${label}, sharp`, sharp], [`${label}, blurred`, blurred]] as const) {
        const s = summaryA.get(key) ?? { n: 0, exact: 0, thick: 0, found: 0 };
        s.n += st.n; s.exact += st.exact; s.thick += st.thick; s.found += st.found;
        summaryA.set(key, s);
      }
    }
  }
}
table(['noise', 'layers', 'sheets', 'found', 'count exact', 'thickness < p/2', 'mean |Δt| / p'], rowsA);
console.log('Summary, sheets of ≥ 2 layers:\n');
table(['noise', 'sheets', 'found', 'count exact', 'thickness < p/2'],
  [...summaryA].map(([k, s]) => [k, s.n, pct(s.found, s.n), pct(s.exact, s.n), pct(s.thick, s.n)]));

}
// ---------- B: automatic over whole images ----------
if (parts.includes('B')) {
console.log('## B. Automatic over 400 × 400 px images: 4 sheets each (1–12 layers, period 7–11 px, random angle, every other one bent), amorphous film, 4 images per row\n');
const rowsB: (string | number)[][] = [];
const imageNoise: [string, number, number][] = [
  ['low', 0.04, 0],
  ['moderate', 0.08, 0],
  ['moderate + blur', 0.08, 1],
  ['high', 0.15, 0],
];
for (const [label, noise, blurPx] of imageNoise) {
  let nTrue = 0;
  let nTrue2 = 0;
  let found = 0;
  let exact2 = 0;
  let thick = 0;
  let angleOk = 0;
  let falseSheets = 0;
  const t0 = performance.now();
  for (let s4 = 1; s4 <= 4; s4++) {
    const seed = s4 + 4 * seedBase;
    const r = rng(seed * 7919);
    const p = 7 + 4 * r();
    const centres: [number, number][] = [[105, 105], [295, 105], [105, 295], [295, 295]];
    const truth: ImageSheet[] = centres.map(([cx, cy], k) => ({
      layers: 1 + Math.floor(12 * r()),
      periodPx: p,
      cx: cx + 10 * (r() - 0.5),
      cy: cy + 10 * (r() - 0.5),
      angleDeg: 180 * r(),
      lengthPx: 110 + 30 * r(),
      curvature: k % 2 ? 0.004 : 0,
    }));
    const img = syntheticImage(400, 400, truth, { noise, amorphous: 0.05, seed, blurPx });
    const res = detectSheets(img);
    const used = new Set<number>();
    for (const t of truth) {
      nTrue++;
      if (t.layers >= 2) nTrue2++;
      const k = res.sheets.findIndex((s, i) => !used.has(i) && Math.hypot(s.centerPx[0] - t.cx, s.centerPx[1] - t.cy) < Math.max(12, (t.layers * p) / 2));
      if (k < 0) continue;
      used.add(k);
      const s = res.sheets[k];
      found++;
      if (t.layers >= 2 && s.layers === t.layers) exact2++;
      if (Math.abs(s.thicknessPx - t.layers * p) < p / 2) thick++;
      if (axialDifferenceDeg(s.angleDeg, t.angleDeg) < 5) angleOk++;
    }
    falseSheets += res.sheets.length - used.size;
  }
  const ms = (performance.now() - t0) / 4;
  rowsB.push([label, nTrue, pct(found, nTrue), pct(exact2, nTrue2), pct(thick, nTrue), pct(angleOk, nTrue), falseSheets, ms.toFixed(0)]);
}
table(['image noise', 'true sheets', 'found', 'count exact (≥ 2 layers)', 'thickness < p/2', 'angle < 5°', 'false sheets', 'ms / image'], rowsB);

}
// ---------- C: amorphous images ----------
if (parts.includes('C')) {
console.log('## C. Purely amorphous images (no sheets): 400 × 400 px, 6 seeds\n');
const rowsC: (string | number)[][] = [];
for (const [label, noise] of [['amorphous film only', 0], ['film + moderate noise', 0.08], ['film + high noise', 0.15]] as [string, number][]) {
  let sheets = 0;
  let lineSheets = 0;
  for (let s6 = 1; s6 <= 6; s6++) {
    const seed = s6 + 6 * seedBase;
    const img = syntheticImage(400, 400, [], { noise, amorphous: 0.05, seed: 100 + seed });
    sheets += detectSheets(img).sheets.length;
    // and a drawn line across the middle, 9 px wide
    const { sheetsAlongLine } = await import('../src/sheets/line');
    lineSheets += sheetsAlongLine(img, 20, 200, 380, 200, { widthPx: 9 }).sheets.length;
  }
  rowsC.push([label, 6, sheets, lineSheets]);
}
table(['image', 'images', 'automatic sheets', 'sheets on a line'], rowsC);
}

// ---------- D: time on large images ----------
if (parts.includes('D')) {
  console.log('## D. Time for a whole image (one run each, single thread): automatic sheets and the domain map\n');
  const { domainMap } = await import('../src/sheets/domains');
  const rowsD: (string | number)[][] = [];
  for (const n of [1024, 2048]) {
    const sheets: ImageSheet[] = [];
    const per = n / 256;
    for (let i = 0; i < per * per; i++) {
      sheets.push({ layers: 2 + (i % 10), periodPx: 9, cx: 128 + 256 * (i % per), cy: 128 + 256 * Math.floor(i / per), angleDeg: (37 * i) % 180, lengthPx: 150 });
    }
    const img = syntheticImage(n, n, sheets, { noise: 0.05, amorphous: 0.05, seed: 1 });
    let t = performance.now();
    const r = detectSheets(img);
    const ta = performance.now() - t;
    t = performance.now();
    const d = domainMap(img);
    const td = performance.now() - t;
    rowsD.push([`${n} × ${n}`, sheets.length, r.sheets.length, ta.toFixed(0), d.columns * d.rows, td.toFixed(0)]);
  }
  table(['image', 'true sheets', 'found', 'automatic (ms)', 'tiles', 'domain map (ms)'], rowsD);
}
