/**
 * Seeded synthetic powder patterns with known truth for the diffraction benchmark and tests:
 * lamellar series, layered silicates with turbostratic (hk) bands, cubic, tetragonal and
 * hexagonal phases, two-phase mixtures, Kα1-only and Kα1+Kα2 radiation, strong noise, amorphous
 * halos and zero shifts, each written as a text file with one of many header styles.
 *
 * Phases are lattices with centring extinctions only (their intensities are drawn at random, seeded),
 * except where a real cell is named or a monatomic metal's intensities follow from its atom; sizes are Scherrer sizes (Lorentzian broadening) on top of a
 * laboratory instrument profile.
 */
import { dToTwoTheta, lorentzPolarisation } from '../../src/diffraction/bragg';
import { cubicMultiplicity, latticeLines, type LatticeCell, type LatticeKind } from '../../src/diffraction/lattice';
import { scatteringFactor } from '../../src/diffraction/scattering';
import type { LpGeometry } from '../../src/diffraction/lorentz-polarisation';
import { HC_KEV_NM } from '../../src/diffraction/radiation';
import { gaussian, rng } from '../random';
import { LAB_INSTRUMENT, reflectionWidth, syntheticPattern, type SyntheticHalo, type SyntheticInstrument, type SyntheticPeak } from './diffraction-pattern';

/** A phase of a scenario. */
export interface ScenarioPhase {
  name: string;
  cell: LatticeCell;
  /** Further reflection conditions (glides, screws, a real structure's absences). */
  allows?: (h: number, k: number, l: number) => boolean;
  /** Crystallite size in nm (Lorentzian broadening). */
  sizeNm: number;
  /** Area of the strongest line (counts·°). */
  strongestArea: number;
  /** Relative intensities given in order of the lines (else drawn at random, seeded). */
  intensities?: number[];
  /** Two-dimensional (hk) bands of turbostratic layers instead of hk0/hkl lines: d-spacings in nm with relative areas. */
  bands?: Array<{ dNm: number; rel: number }>;
  /** Layered silicate style: only the 00l lines of the cell (and the bands). */
  basalOnly?: boolean;
  /**
   * A monatomic cubic phase (one atom of this element per lattice point): its intensities follow
   * the multiplicity, the atom's scattering factor, a Debye–Waller factor (B drawn in 0.3–1 Å²) and
   * the Lorentz–polarisation factor, each line scattered by 15 % (texture), instead of drawn at random.
   */
  element?: string;
  /** Smallest d drawn (default: the pattern's range). */
  dMinNm?: number;
}

/** One synthetic case with its truth. */
export interface Scenario {
  name: string;
  /** What it covers, for the table. */
  covers: string;
  /** The file as written (header and two columns). */
  text: string;
  /** The header's wavelength and doublet, the truth. */
  wavelengthNm: number;
  ka2Nm: number | null;
  phases: ScenarioPhase[];
  /** Every drawn reflection (Kα1 position before zero shift) with its phase and whether it must be found. */
  peaks: Array<SyntheticPeak & { phase: number; hkl: [number, number, number]; dNm: number; findable: boolean; expectedZ: number }>;
  halos: SyntheticHalo[];
  zeroShiftDeg: number;
  instrument: SyntheticInstrument;
  /** The Lorentz–polarisation geometry the lines were drawn with (the user states it to the analysis, as the wavelength). */
  lp: LpGeometry;
}

/** Header styles: how a file states its radiation (each one a common export's way). */
export const HEADER_STYLES: Array<{ name: string; make: (ka1Nm: number, ka2Nm: number | null) => string }> = [
  { name: 'lambda1/lambda2 Å', make: (a, b) => `# lambda1 = ${(a * 10).toFixed(6)} A, lambda2 = ${b ? (b * 10).toFixed(6) : ''} A` },
  { name: 'K-Alpha1 [Å] with ratio', make: (a, b) => `# K-Alpha1 wavelength [Å]: ${(a * 10).toFixed(6)}\n# K-Alpha2 wavelength [Å]: ${((b ?? a) * 10).toFixed(6)}\n# Ratio K-Alpha2/K-Alpha1: 0.5` },
  { name: 'anode name', make: () => '# Anode: Cu\n# scan 2theta, counts' },
  { name: 'wavelength nm', make: (a) => `# wavelength = ${a.toFixed(8)} nm` },
  { name: 'Kα1 in pm', make: (a) => `# Ka1 = ${(a * 1000).toFixed(4)} pm` },
  { name: 'Cu Kα weighted mean', make: () => '# Cu K-alpha radiation, lambda = 1.5418 A' },
  { name: 'bare first line', make: (a) => `${(a * 10).toFixed(6)}` },
];

/** Header styles of single-wavelength (monochromatic) scans. */
export const MONO_HEADER_STYLES: Array<{ name: string; make: (nm: number) => string }> = [
  { name: 'synchrotron energy keV', make: (nm) => `# synchrotron powder beamline\n# energy = ${(HC_KEV_NM / nm).toFixed(4)} keV` },
  { name: 'synchrotron wavelength with su', make: (nm) => `# beamline scan, wavelength: ${(nm * 10).toFixed(5)}(2) Å` },
  { name: 'Kα1 monochromatic', make: (nm) => `# Cu Ka1 ${(nm * 10).toFixed(6)} A, Johansson Ge(111) primary monochromator` },
];

const CU1 = 0.154059292;
const CU2 = 0.15444274;

interface Setup {
  name: string;
  covers: string;
  phases: ScenarioPhase[];
  rangeDeg: [number, number];
  stepDeg?: number;
  background?: { a: number; b: number; c: number; slope?: number };
  halos?: SyntheticHalo[];
  zeroShiftDeg?: number;
  /** 'doublet' (Cu Kα1+Kα2) or a single wavelength in nm. */
  radiation: 'doublet' | number;
  header: number;
  /** Multiplies every count (strong noise: below 1). */
  countScale?: number;
  /** LP geometry across each line (default: random powder, Bragg–Brentano, no monochromator). */
  lp?: LpGeometry;
}

/**
 * Expected significance of a line in a profile fit: its counts under ±1 FWHM (about 0.76 of a
 * pseudo-Voigt's area) over their counting noise, halved for the fit's free position, width, shape
 * and background (measured on these scenarios: fitted area/σ is about half this count ratio).
 */
function expectedZ(area: number, fwhm: number, bgLevel: number, step: number): number {
  const pts = (2 * fwhm) / step;
  const inside = 0.76 * area / step; // counts summed over the points
  return (0.5 * inside) / Math.sqrt(Math.max(1, bgLevel * pts + inside));
}

/** Integrated intensity of a monatomic cubic line: m·f²·exp(−2B s²)·LP (Cullity & Stock, Elements of X-Ray Diffraction, ch. 4). */
function monatomicIntensity(kind: LatticeKind, element: string, hkl: [number, number, number], dNm: number, lambdaNm: number, bIsoA2: number): number {
  const m = cubicMultiplicity(kind, hkl[0] ** 2 + hkl[1] ** 2 + hkl[2] ** 2);
  const sA = 1 / (20 * dNm); // sin θ / λ in Å⁻¹
  const f = scatteringFactor(element, sA);
  return m * f * f * Math.exp(-2 * bIsoA2 * sA * sA) * lorentzPolarisation(dToTwoTheta(dNm, lambdaNm));
}

/** Draws a scenario: lines of every phase with widths from the instrument and size, halos, noise. */
function draw(s: Setup, seed: number): Scenario {
  const rnd = rng(seed * 7919 + s.name.length * 31 + s.phases.length);
  const lambda = s.radiation === 'doublet' ? CU1 : s.radiation;
  const ka2 = s.radiation === 'doublet' ? CU2 : null;
  const step = s.stepDeg ?? 0.02;
  const bg = s.background ?? { a: 150, b: 1500, c: 4 };
  const scale = s.countScale ?? 1;
  const [t0, t1] = s.rangeDeg;
  const dMin = lambda / (2 * Math.sin((t1 * Math.PI) / 360));
  const dMax = lambda / (2 * Math.sin((t0 * Math.PI) / 360));
  const peaks: Scenario['peaks'] = [];
  s.phases.forEach((ph, pi) => {
    let lines = latticeLines(ph.cell, Math.max(dMin, ph.dMinNm ?? 0), dMax).filter((l) => !ph.allows || ph.allows(...l.hkl));
    if (ph.basalOnly) lines = lines.filter((l) => l.hkl[0] === 0 && l.hkl[1] === 0);
    // random intensities, seeded; the high orders of a lamellar stack stay weak (their structure factor falls off)
    const bIso = ph.element ? 0.3 + 0.7 * rnd() : 0;
    const gauss = gaussian(rnd);
    const rel = lines.map((l, i) => ph.intensities?.[i] ?? (ph.element ? monatomicIntensity(ph.cell.kind, ph.element, l.hkl, l.dNm, lambda, bIso) * Math.exp(0.15 * gauss()) : Math.max(0.04, rnd() ** 2) * (ph.cell.kind === 'lamellar' ? 0.1 : i < 3 ? 1.5 : 1)));
    const top = Math.max(...rel);
    lines.forEach((l, i) => {
      const tt = dToTwoTheta(l.dNm, lambda);
      const w = reflectionWidth(tt, ph.sizeNm, lambda, LAB_INSTRUMENT);
      peaks.push({ twoThetaDeg: tt, area: (scale * ph.strongestArea * rel[i]) / top, fwhmDeg: w.fwhmDeg, eta: w.eta, phase: pi, hkl: l.hkl, dNm: l.dNm, findable: true, expectedZ: 0 });
    });
    for (const b of ph.bands ?? []) {
      const tt = dToTwoTheta(b.dNm, lambda);
      peaks.push({ twoThetaDeg: tt, area: scale * ph.strongestArea * b.rel, fwhmDeg: 1, eta: 0, kind: 'band', bandLaNm: 8, phase: pi, hkl: [0, 0, 0], dNm: b.dNm, findable: true, expectedZ: 0 });
    }
  });
  const halos = (s.halos ?? []).map((h) => ({ ...h, height: h.height * scale }));
  const bgS = { ...bg, a: bg.a * scale, b: bg.b * scale, slope: (bg.slope ?? 0) * scale };
  for (const p of peaks) {
    const t = p.twoThetaDeg;
    let level = bgS.a + bgS.b * Math.exp(-t / bgS.c) + bgS.slope * t;
    for (const h of halos) level += h.height * Math.exp((-4 * Math.LN2 * (t - h.centerDeg) ** 2) / h.fwhmDeg ** 2);
    p.expectedZ = p.kind === 'band' ? 25 : expectedZ(p.area, p.fwhmDeg, level, step);
    p.findable = p.expectedZ >= 6 && t > t0 + 3 * p.fwhmDeg && t < t1 - 3 * p.fwhmDeg;
  }
  // lines closer than one FWHM are one line to a fit without constraints (common practice): only the strongest of them is required
  const sorted = [...peaks].sort((a, b) => a.twoThetaDeg - b.twoThetaDeg);
  for (let i = 1; i < sorted.length; i++) {
    const a = sorted[i - 1];
    const b = sorted[i];
    if (Math.abs(b.twoThetaDeg - a.twoThetaDeg) < 1.0 * Math.max(a.fwhmDeg, b.fwhmDeg)) {
      if (a.area >= b.area) b.findable = false;
      else a.findable = false;
    }
  }
  const lp = s.lp ?? POWDER;
  const pattern = syntheticPattern(peaks, { rangeDeg: s.rangeDeg, stepDeg: step, wavelengthNm: lambda, ka2Nm: ka2, background: bgS, halos, zeroShiftDeg: s.zeroShiftDeg ?? 0, seed, lp });
  let header: string;
  if (s.radiation === 'doublet') header = HEADER_STYLES[s.header % HEADER_STYLES.length].make(CU1, CU2);
  else header = MONO_HEADER_STYLES[s.header % MONO_HEADER_STYLES.length].make(lambda);
  const rows = Array.from(pattern.x, (x, i) => `${x.toFixed(4)} ${pattern.y[i]}`);
  return {
    name: s.name,
    covers: s.covers,
    text: `${header}\n${rows.join('\n')}\n`,
    wavelengthNm: s.radiation === 'doublet' ? (s.header % HEADER_STYLES.length === 0 ? Number((CU1 * 10).toFixed(6)) / 10 : CU1) : lambda,
    ka2Nm: ka2,
    phases: s.phases,
    peaks,
    halos,
    zeroShiftDeg: s.zeroShiftDeg ?? 0,
    instrument: LAB_INSTRUMENT,
    lp,
  };
}

/**
 * LP geometries of the setups, varied so the benchmark is not tuned to one: random powders and
 * oriented clay films, with and without a monochromator (graphite 002 diffracted-beam with Cu Kα,
 * 2θm 26.6°; Johansson Ge(111) primary, 27.3°; d 0.3354 and 0.3266 nm, from memory), and none for
 * the synchrotron scans (transmission data taken as corrected by the beamline's reduction).
 */
const POWDER: LpGeometry = { specimen: 'powder', monochromatorTwoThetaDeg: null };
const POWDER_GRAPHITE: LpGeometry = { specimen: 'powder', monochromatorTwoThetaDeg: 26.6 };
const FILM: LpGeometry = { specimen: 'oriented-film', monochromatorTwoThetaDeg: null };
const FILM_GRAPHITE: LpGeometry = { specimen: 'oriented-film', monochromatorTwoThetaDeg: 26.6 };
const NO_LP: LpGeometry = { specimen: 'none', monochromatorTwoThetaDeg: null };

/** Smectite-like layers, d001 = 1.25 nm (one water layer; reference-values §3) with turbostratic bands (02,11), (13,20), (06,33) (common practice). */
const SMECTITE_BANDS = [
  { dNm: 0.449, rel: 1.2 },
  { dNm: 0.258, rel: 0.8 },
  { dNm: 0.1496, rel: 0.5 },
];

/** fcc d-glide of diamond (Si): hk0 with h+k = 4n when h, k even, and 00l with l = 4n (ITC A, Fd-3m). */
const diamond = (h: number, k: number, l: number) => {
  const all = [h, k, l].map(Math.abs);
  if (all.every((v) => v % 2 === 0)) return (h + k + l) % 4 === 0;
  return true;
};

/** The benchmark's setups (24). */
function setups(): Setup[] {
  const cubic = (kind: 'cubic-P' | 'cubic-I' | 'cubic-F', a: number): LatticeCell => ({ kind, aNm: a, cNm: a });
  return [
    { name: 'lamellar 3.2 nm', covers: 'lamellar series, low angle', phases: [{ name: 'organoclay', cell: { kind: 'lamellar', aNm: NaN, cNm: 3.2 }, sizeNm: 40, strongestArea: 250, intensities: [1, 0.35, 0.15, 0.08, 0.05] }], rangeDeg: [1.5, 15], background: { a: 60, b: 3000, c: 1.2 }, radiation: 'doublet', header: 0, lp: FILM_GRAPHITE },
    { name: 'silver behenate, zero shift −0.05°', covers: 'lamellar, zero shift', phases: [{ name: 'AgBeh', cell: { kind: 'lamellar', aNm: NaN, cNm: 5.838 }, sizeNm: 60, strongestArea: 300, intensities: [1, 0.5, 0.45, 0.3, 0.25, 0.2, 0.15, 0.12, 0.1, 0.08] }], rangeDeg: [1.2, 16], stepDeg: 0.01, background: { a: 80, b: 2000, c: 1.5 }, zeroShiftDeg: -0.05, radiation: 'doublet', header: 1 },
    { name: 'smectite with (hk) bands', covers: 'layered silicate, (hk) bands, halo-free', phases: [{ name: 'smectite', cell: { kind: 'lamellar', aNm: NaN, cNm: 1.25 }, sizeNm: 8, strongestArea: 600, intensities: [1, 0.12, 0.18, 0.06, 0.07], bands: SMECTITE_BANDS }], rangeDeg: [3, 70], background: { a: 150, b: 2000, c: 3 }, radiation: 'doublet', header: 2, lp: POWDER_GRAPHITE },
    { name: 'clay film on polymer halo', covers: 'layered silicate, amorphous halo', phases: [{ name: 'clay', cell: { kind: 'lamellar', aNm: NaN, cNm: 1.25 }, sizeNm: 10, strongestArea: 1500, intensities: [1, 0.12, 0.1, 0.04, 0.03] }], rangeDeg: [2, 40], background: { a: 60, b: 3000, c: 1 }, halos: [{ centerDeg: 19.6, fwhmDeg: 8.5, height: 380 }], radiation: 'doublet', header: 3, lp: FILM },
    { name: 'Au-like fcc', covers: 'cubic F', phases: [{ name: 'fcc metal', cell: cubic('cubic-F', 0.40782), element: 'Au', sizeNm: 25, strongestArea: 400 }], rangeDeg: [30, 120], radiation: 'doublet', header: 4, lp: POWDER_GRAPHITE },
    { name: 'Si (diamond)', covers: 'cubic F with d-glide absences, high-angle (400)', phases: [{ name: 'Si', cell: cubic('cubic-F', 0.5431020511), allows: diamond, sizeNm: 200, strongestArea: 300, intensities: [1, 0.55, 0.3, 0.06, 0.11, 0.12, 0.07, 0.05, 0.04] }], rangeDeg: [20, 130], radiation: 'doublet', header: 5 },
    { name: 'LaB6 660c', covers: 'cubic P', phases: [{ name: 'LaB6', cell: cubic('cubic-P', 0.4156826), sizeNm: 500, strongestArea: 250 }], rangeDeg: [15, 120], stepDeg: 0.01, radiation: 'doublet', header: 6 },
    { name: 'bcc metal', covers: 'cubic I', phases: [{ name: 'bcc', cell: cubic('cubic-I', 0.3165), element: 'Mo', sizeNm: 30, strongestArea: 400 }], rangeDeg: [35, 140], radiation: 'doublet', header: 0, lp: POWDER_GRAPHITE },
    { name: 'tetragonal P (layered salt)', covers: 'tetragonal P', phases: [{ name: 'layered salt', cell: { kind: 'tetragonal-P', aNm: 0.626428, cNm: 0.740545 }, sizeNm: 60, strongestArea: 300 }], rangeDeg: [8, 60], radiation: 'doublet', header: 1 },
    { name: 'tetragonal I', covers: 'tetragonal I, weak line beside a strong one', phases: [{ name: 'tetragonal I', cell: { kind: 'tetragonal-I', aNm: 0.3785, cNm: 0.9514 }, sizeNm: 35, strongestArea: 400 }], rangeDeg: [15, 90], radiation: 'doublet', header: 2, lp: POWDER_GRAPHITE },
    { name: 'hexagonal layered (brucite-like)', covers: 'hexagonal P, layered', phases: [{ name: 'brucite-like', cell: { kind: 'hexagonal-P', aNm: 0.3142, cNm: 0.4766 }, sizeNm: 20, strongestArea: 400 }], rangeDeg: [10, 80], radiation: 'doublet', header: 3 },
    { name: 'hexagonal R (LDH-like)', covers: 'hexagonal R, layered', phases: [{ name: 'LDH-like', cell: { kind: 'hexagonal-R', aNm: 0.3046, cNm: 2.2812 }, sizeNm: 25, strongestArea: 500 }], rangeDeg: [5, 70], radiation: 'doublet', header: 4, lp: POWDER_GRAPHITE },
    { name: 'graphite-like hexagonal', covers: 'hexagonal P with 00l: l = 2n', phases: [{ name: 'graphite-like', cell: { kind: 'hexagonal-P', aNm: 0.24612, cNm: 0.67079 }, allows: (h, k, l) => !(h === 0 && k === 0 && l % 2 !== 0) && !((h - k) % 3 === 0 && l % 2 !== 0), sizeNm: 40, strongestArea: 600 }], rangeDeg: [15, 90], radiation: 'doublet', header: 5 },
    { name: 'two phases: Si + LaB6', covers: 'mixture of two cubic phases', phases: [{ name: 'Si', cell: cubic('cubic-F', 0.5431020511), allows: diamond, sizeNm: 150, strongestArea: 300 }, { name: 'LaB6', cell: cubic('cubic-P', 0.4156826), sizeNm: 300, strongestArea: 200 }], rangeDeg: [18, 100], stepDeg: 0.01, radiation: 'doublet', header: 6, lp: POWDER_GRAPHITE },
    { name: 'two phases: clay + fcc', covers: 'mixture: lamellar + cubic F, halo', phases: [{ name: 'clay', cell: { kind: 'lamellar', aNm: NaN, cNm: 1.42 }, sizeNm: 12, strongestArea: 800, intensities: [1, 0.1, 0.15, 0.05] }, { name: 'fcc', cell: cubic('cubic-F', 0.40495), sizeNm: 40, strongestArea: 300 }], rangeDeg: [3, 85], background: { a: 120, b: 2500, c: 2 }, halos: [{ centerDeg: 21, fwhmDeg: 9, height: 250 }], radiation: 'doublet', header: 0 },
    { name: 'two phases: hexagonal + tetragonal', covers: 'mixture of two 2-parameter phases', phases: [{ name: 'hex', cell: { kind: 'hexagonal-P', aNm: 0.3142, cNm: 0.4766 }, sizeNm: 30, strongestArea: 350 }, { name: 'tet', cell: { kind: 'tetragonal-P', aNm: 0.4594, cNm: 0.2959 }, sizeNm: 40, strongestArea: 300 }], rangeDeg: [15, 80], radiation: 'doublet', header: 1 },
    { name: 'Kα1 only, synchrotron fcc', covers: 'single wavelength (energy header)', phases: [{ name: 'fcc', cell: cubic('cubic-F', 0.40782), sizeNm: 30, strongestArea: 500 }], rangeDeg: [10, 60], stepDeg: 0.01, radiation: 0.0729318814, header: 0, lp: NO_LP },
    { name: 'Kα1 only, synchrotron hexagonal', covers: 'single wavelength with su', phases: [{ name: 'hex', cell: { kind: 'hexagonal-P', aNm: 0.3142, cNm: 0.4766 }, sizeNm: 25, strongestArea: 500 }], rangeDeg: [5, 45], stepDeg: 0.01, radiation: 0.0729, header: 1, lp: NO_LP },
    { name: 'Kα1 only, monochromated tube', covers: 'Kα1 only stated', phases: [{ name: 'tet', cell: { kind: 'tetragonal-P', aNm: 0.626428, cNm: 0.740545 }, sizeNm: 50, strongestArea: 300 }], rangeDeg: [8, 60], radiation: CU1, header: 2, lp: { specimen: 'powder', monochromatorTwoThetaDeg: 27.3 } },
    { name: 'strong noise, fcc', covers: 'low counts', phases: [{ name: 'fcc', cell: cubic('cubic-F', 0.40495), sizeNm: 30, strongestArea: 700 }], rangeDeg: [30, 140], countScale: 0.15, radiation: 'doublet', header: 3 },
    { name: 'strong noise, lamellar', covers: 'low counts, low angle', phases: [{ name: 'lamellar', cell: { kind: 'lamellar', aNm: NaN, cNm: 4.0 }, sizeNm: 40, strongestArea: 400, intensities: [1, 0.3, 0.12, 0.06] }], rangeDeg: [1.2, 12], background: { a: 40, b: 2000, c: 1.2 }, countScale: 0.2, radiation: 'doublet', header: 4, lp: FILM_GRAPHITE },
    { name: 'fcc on glass halo', covers: 'cubic F on an amorphous halo', phases: [{ name: 'fcc', cell: cubic('cubic-F', 0.40782), sizeNm: 20, strongestArea: 250 }], rangeDeg: [15, 90], halos: [{ centerDeg: 22, fwhmDeg: 8, height: 500 }], radiation: 'doublet', header: 5 },
    { name: 'tetragonal, zero shift +0.04°', covers: 'zero shift from the indexed series', phases: [{ name: 'tet', cell: { kind: 'tetragonal-P', aNm: 0.626428, cNm: 0.740545 }, sizeNm: 50, strongestArea: 300 }], rangeDeg: [8, 60], zeroShiftDeg: 0.04, radiation: 'doublet', header: 6, lp: POWDER_GRAPHITE },
    { name: 'smectite + quartz-like hexagonal on halo', covers: 'bands, halo and a hexagonal phase', phases: [{ name: 'smectite', cell: { kind: 'lamellar', aNm: NaN, cNm: 1.5 }, sizeNm: 9, strongestArea: 700, intensities: [1, 0.1, 0.12, 0.05], bands: SMECTITE_BANDS }, { name: 'hexagonal', cell: { kind: 'hexagonal-P', aNm: 0.4913, cNm: 0.5405 }, sizeNm: 60, strongestArea: 250 }], rangeDeg: [3, 70], halos: [{ centerDeg: 18, fwhmDeg: 9, height: 200 }], radiation: 'doublet', header: 0 },
  ];
}

/**
 * The benchmark's scenarios for one seed (a different seed gives a held-out set: other noise,
 * intensities and, through them, other weak lines).
 * @param seed noise and intensity seed (default 1)
 * @returns 24 scenarios
 */
export function diffractionScenarios(seed = 1): Scenario[] {
  return setups().map((s, i) => draw(s, seed * 1000 + i));
}

/**
 * A line-profile standard measured on the scenarios' instrument: LaB6 (a = 0.4156826 nm, NIST SRM
 * 660c certificate) with crystallites large enough (5 µm) to add no breadth, Cu Kα1+Kα2.
 * @param seed noise seed
 * @returns the scenario (its text is the standard's file)
 */
export function standardScenario(seed = 1, radiation: 'doublet' | number = 'doublet'): Scenario {
  const lambda = radiation === 'doublet' ? CU1 : radiation;
  // the same lines whatever the wavelength: up to sin θ = 0.94
  const range: [number, number] = [(2 * Math.asin((lambda / 2) * 1.2 * (1 / 0.4156826)) * 180) / Math.PI * 0.8, Math.min(140, (2 * Math.asin(0.94) * 180) / Math.PI)];
  return draw({ name: 'LaB6 standard', covers: 'instrument profile', phases: [{ name: 'LaB6', cell: { kind: 'cubic-P', aNm: 0.4156826, cNm: 0.4156826 }, sizeNm: 5000, strongestArea: 400, intensities: [0.6, 1, 0.45, 0.25, 0.5, 0.3, 0.15, 0.12, 0.25, 0.2, 0.15, 0.12, 0.1, 0.12, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1] }], rangeDeg: range, stepDeg: 0.01, radiation, header: 0 }, seed * 7 + 99991);
}
