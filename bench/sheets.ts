/**
 * bench:sheets — accuracy of layer counts and thickness on seeded synthetic stacks
 * (clay tactoids in a polymer film): A along drawn lines; B automatic over whole overviews of
 * eleven families (testing/synthetic/overviews.ts) and the demo overview; C amorphous images;
 * D the time for a 2048 × 2048 overview.
 * Targets (issue 15): ≥ 90 % of stacks found, ≥ 80 % of monolayers; layer count exact for ≥ 95 %
 * of found stacks of ≥ 2 layers, thickness within half a period for ≥ 95 %; at most one spurious
 * sheet per image and none on amorphous or crossed-lattice images; all 26 demo tactoids; 2048² in
 * at most 10 s on one core.
 */
import { sheetsAlongProfile } from '../src/sheets/profile';
import { detectSheets } from '../src/sheets/detect';
import { existsSync, readFileSync } from 'node:fs';
import { decodeImage } from '../src/image/decode';
import { findScaleBar } from '../src/calibration/scale-bar';
import { gauss, rng, syntheticImage, syntheticProfile } from '../testing/synthetic/stacks';
import { generateOverview, OVERVIEW_FAMILIES, scoreOverview, type TrueStack } from '../testing/synthetic/overviews';
import { printTable } from '../testing/bench-options';

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
// usage: npm run bench:sheets -- [parts, e.g. AB] [--seed N] [--images N] [--family a,b]; --seed
// shifts every seed by N (default 0), for checking a change on a second, independent set of
// stacks; --images sets the overviews per family in B (default 2); --family runs only those
// families in B (and skips the demo overview)
const argv = process.argv.slice(2);
const seedAt = argv.indexOf('--seed');
const seedBase = seedAt >= 0 ? Number(argv[seedAt + 1]) : 0;
if (!Number.isInteger(seedBase) || seedBase < 0) throw new RangeError(`--seed must be a non-negative integer, got ${argv[seedAt + 1]}`);
const imagesAt = argv.indexOf('--images');
const imagesArg = imagesAt >= 0 ? Number(argv[imagesAt + 1]) : null;
if (imagesArg !== null && !(Number.isInteger(imagesArg) && imagesArg >= 1)) throw new RangeError(`--images must be a positive integer, got ${argv[imagesAt + 1]}`);
const familyAt = argv.indexOf('--family');
const familyArg = familyAt >= 0 ? argv[familyAt + 1].split(',') : null;
for (const f of familyArg ?? []) if (!(OVERVIEW_FAMILIES as readonly string[]).includes(f)) throw new RangeError(`--family must be among ${OVERVIEW_FAMILIES.join(', ')}, got ${f}`);
const valueAt = new Set([seedAt, imagesAt, familyAt].filter((i) => i >= 0).map((i) => i + 1));
const parts = argv.find((a, i) => !a.startsWith('--') && !valueAt.has(i)) ?? 'ABCD';
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
printTable(['noise', 'layers', 'sheets', 'found', 'count exact', 'thickness < p/2', 'mean |Δt| / p'], rowsA);
console.log('Summary, sheets of ≥ 2 layers:\n');
printTable(['noise', 'sheets', 'found', 'count exact', 'thickness < p/2'],
  [...summaryA].map(([k, s]) => [k, s.n, pct(s.found, s.n), pct(s.exact, s.n), pct(s.thick, s.n)]));

}
// ---------- B: automatic over whole overviews (seeded families with known truth) ----------
if (parts.includes('B')) {
  const per = imagesArg ?? 2;
  console.log(`## B. Automatic over whole overviews: ${OVERVIEW_FAMILIES.length} families (testing/synthetic/overviews.ts), ${per} seeded images each, 512–768 px`);
  console.log('Each image draws its period (2.5–14 px), layers (1–16), lengths, directions, curvature, dose (25–1000 e/px), blur, film texture and');
  console.log('layer contrast; a found sheet matches a true stack when its centre lies on it and its normal is within 15°. Count and thickness');
  console.log('columns are over the stacks found; "spurious" counts sheets on no stack (duplicates included).\n');
  const rowsB: (string | number)[][] = [];
  const tot = { images: 0, n: 0, found: 0, mono: 0, monoFound: 0, n2: 0, exact: 0, thick: 0, spurious: 0, maxSpurious: 0, ms: 0 };
  for (const family of OVERVIEW_FAMILIES.filter((f) => !familyArg || familyArg.includes(f))) {
    const f = { n: 0, found: 0, mono: 0, monoFound: 0, n2: 0, exact: 0, thick: 0, spurious: 0, maxSpurious: 0, ms: 0 };
    for (let k = 1; k <= per; k++) {
      const o = generateOverview(family, k + per * seedBase);
      const t0 = performance.now();
      const res = detectSheets(o.image);
      f.ms += performance.now() - t0;
      const sc = scoreOverview(o.truth.stacks, res.sheets);
      o.truth.stacks.forEach((t, i) => {
        f.n++;
        if (t.layers === 1) f.mono++;
        const m = sc.matchOf[i];
        if (m < 0) return;
        const s = res.sheets[m];
        f.found++;
        if (t.layers === 1) f.monoFound++;
        if (t.layers >= 2) {
          f.n2++;
          if (s.layers === t.layers) f.exact++;
        }
        if (Math.abs(s.thicknessPx - t.thicknessPx) < t.periodPx / 2) f.thick++;
      });
      f.spurious += sc.spurious;
      f.maxSpurious = Math.max(f.maxSpurious, sc.spurious);
    }
    rowsB.push([family, per, f.n, pct(f.found, f.n), f.mono ? `${f.monoFound}/${f.mono}` : '—', pct(f.exact, f.n2), pct(f.thick, f.found), f.spurious, f.maxSpurious, (f.ms / per).toFixed(0)]);
    tot.images += per;
    for (const key of ['n', 'found', 'mono', 'monoFound', 'n2', 'exact', 'thick', 'spurious', 'ms'] as const) tot[key] += f[key];
    tot.maxSpurious = Math.max(tot.maxSpurious, f.maxSpurious);
  }
  rowsB.push(['all', tot.images, tot.n, pct(tot.found, tot.n), `${tot.monoFound}/${tot.mono}`, pct(tot.exact, tot.n2), pct(tot.thick, tot.found), tot.spurious, tot.maxSpurious, (tot.ms / tot.images).toFixed(0)]);
  printTable(['family', 'images', 'true stacks', 'found', 'monolayers found', 'count exact (≥ 2 layers, found)', 'thickness < p/2 (found)', 'spurious', 'most spurious in one image', 'ms / image'], rowsB);
  console.log('Targets: found ≥ 90 %, monolayers ≥ 80 %, count exact ≥ 95 %, thickness within half a period ≥ 95 %, at most one spurious sheet per image, none on the amorphous and crossed-lattice families.\n');

  // the demo overview, against the truth recorded with it
  const file = 'demo-data/tactoid-film_overview.tif';
  if (existsSync(file) && !familyArg) {
    const img = decodeImage(new Uint8Array(readFileSync(file)), file);
    const entry = (JSON.parse(readFileSync('demo-data/index.json', 'utf8')) as { file: string; truth: { nmPerPx: number; layerPeriodNm: number; tactoids: { centreXPx: number; centreYPx: number; sheetDirectionDeg: number; layers: number; lengthNm: number; bendRadiusNm?: number }[] } }[]).find((e) => file.endsWith(e.file))!;
    const nm = entry.truth.nmPerPx;
    const d = entry.truth.layerPeriodNm / nm;
    const stacks: TrueStack[] = entry.truth.tactoids.map((q) => ({
      cx: q.centreXPx, cy: q.centreYPx, directionDeg: q.sheetDirectionDeg, normalDeg: (q.sheetDirectionDeg + 90) % 180, layers: q.layers, periodPx: d,
      thicknessPx: q.layers * d, lengthPx: q.lengthNm / nm, curvaturePerPx: q.bendRadiusNm ? -nm / q.bendRadiusNm : 0, absorbance: 0, phaseContrast: 0,
    }));
    const bar = findScaleBar(img);
    const t0 = performance.now();
    const res = detectSheets(img, { exclude: bar ? bar.stripBox ?? bar.panelBox : null });
    const ms = performance.now() - t0;
    const sc = scoreOverview(stacks, res.sheets);
    let found = 0;
    let exact = 0;
    const counts: string[] = [];
    stacks.forEach((t, i) => {
      const m = sc.matchOf[i];
      if (m >= 0) {
        found++;
        if (res.sheets[m].layers === t.layers) exact++;
      }
      counts.push(`${t.layers}→${m >= 0 ? res.sheets[m].layers : '–'}`);
    });
    console.log('## B2. The demo overview (tactoid-film_overview.tif, 26 tactoids in its recorded truth)\n');
    printTable(['image', 'tactoids', 'found', 'count exact', 'spurious', 'ms'], [['demo overview', stacks.length, found, exact, sc.spurious, ms.toFixed(0)]]);
    console.log(`Counts (truth→found): ${counts.join(', ')}\n`);
  }
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
printTable(['image', 'images', 'automatic sheets', 'sheets on a line'], rowsC);
}

// ---------- D: time on large images ----------
if (parts.includes('D')) {
  console.log('## D. Time for a whole overview (one run each, single thread): the dense family at 1024² and 2048² px, and the domain map\n');
  const { domainMap } = await import('../src/sheets/domains');
  const rowsD: (string | number)[][] = [];
  for (const n of [1024, 2048]) {
    const o = generateOverview('dense', 1 + seedBase, { sizePx: n });
    let t = performance.now();
    const r = detectSheets(o.image);
    const ta = performance.now() - t;
    const sc = scoreOverview(o.truth.stacks, r.sheets);
    t = performance.now();
    const d = domainMap(o.image);
    const td = performance.now() - t;
    rowsD.push([`${n} × ${n}`, o.truth.stacks.length, sc.matchOf.filter((m) => m >= 0).length, sc.spurious, (ta / 1000).toFixed(1), d.columns * d.rows, (td / 1000).toFixed(1)]);
  }
  printTable(['image', 'true stacks', 'found', 'spurious', 'automatic (s)', 'tiles', 'domain map (s)'], rowsD);
  console.log('Target: a 2048 × 2048 overview in at most 10 s on one core (the machine may be shared: see the time of the domain map beside it).');
}
