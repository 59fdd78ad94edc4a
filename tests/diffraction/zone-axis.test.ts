import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { parseCif } from '../../src/diffraction/cif';
import { indexSpots, zonePhaseFromLattice, zonePhaseFromStructure, type ZonePhase } from '../../src/diffraction/zone-axis';
import { equivalentZones as equivalent, syntheticZoneSpots } from '../../testing/synthetic/zone-spots';

/** The diamond structure's glide: hkl all even needs h+k+l = 4n (ITC A, Fd-3m). */
const diamond = (h: number, k: number, l: number) => ([h, k, l].every((v) => v % 2 === 0) ? (h + k + l) % 4 === 0 : true);
/** Rutile P4₂/mnm: 0kl k+l = 2n, h00 h = 2n, 00l l = 2n (ITC A, No. 136). */
const rutile = (h: number, k: number, l: number) => (h === 0 ? (k + l) % 2 === 0 : true) && (k === 0 ? (h + l) % 2 === 0 : true) && (h === 0 && k === 0 ? l % 2 === 0 : true);

const graphite = zonePhaseFromStructure(parseCif(readFileSync('tests/fixtures/reference-data/crystal_graphite-2H_COD1200017.cif', 'utf8')), 0.1);
const phases: Array<{ phase: ZonePhase; kind: 'cubic' | 'tetragonal' | 'hexagonal'; zones: Array<[number, number, number]> }> = [
  // Si, a = 0.5431020511 nm (CODATA 2018)
  { phase: zonePhaseFromLattice('Si', { kind: 'cubic-F', aNm: 0.5431020511, cNm: 0.5431020511 }, 0.1, diamond), kind: 'cubic', zones: [[0, 0, 1], [0, 1, 1], [1, 1, 1]] },
  // Au, a = 0.40782 nm (from memory)
  { phase: zonePhaseFromLattice('Au', { kind: 'cubic-F', aNm: 0.40782, cNm: 0.40782 }, 0.08), kind: 'cubic', zones: [[0, 0, 1], [0, 1, 1], [1, 1, 2]] },
  // α-Fe, a = 0.28665 nm (from memory)
  { phase: zonePhaseFromLattice('α-Fe', { kind: 'cubic-I', aNm: 0.28665, cNm: 0.28665 }, 0.06), kind: 'cubic', zones: [[0, 0, 1], [1, 1, 1], [0, 1, 1]] },
  // rutile TiO2, a = 0.4594, c = 0.2959 nm (from memory)
  { phase: zonePhaseFromLattice('rutile', { kind: 'tetragonal-P', aNm: 0.4594, cNm: 0.2959 }, 0.09, rutile), kind: 'tetragonal', zones: [[0, 0, 1], [1, 0, 0], [1, 1, 0]] },
  // graphite-2H from its structure file (SOURCES.md §3)
  { phase: graphite, kind: 'hexagonal', zones: [[0, 0, 1], [1, 0, 0], [1, 2, 0]] },
];

describe('indexSpots: the zone axis of synthetic spot patterns (5 structures × 3 zones, seeded; known truth)', () => {
  for (const { phase, kind, zones } of phases) {
    test.each(zones.map((z) => [z.join('')]))(`${phase.name} [%s]: the right zone (or a symmetry equivalent), every spot's hkl in that zone, residuals listed`, (zs) => {
      const uvw = zones.find((z) => z.join('') === zs)!;
      for (const seed of [1, 2, 3]) {
        const spots = syntheticZoneSpots(phase, uvw, seed * 31 + zs.length, { mirrored: seed === 2, dMinNm: phase.name === 'α-Fe' ? 0.07 : 0.1 });
        expect(spots.length).toBeGreaterThanOrEqual(2);
        const r = indexSpots(spots, phase);
        const best = r.candidates[0];
        expect(best).toBeDefined();
        expect(equivalent(kind, best.uvw, uvw)).toBe(true);
        expect(best.unassigned).toEqual([]);
        for (const a of best.assignments) {
          expect(a.hkl[0] * best.uvw[0] + a.hkl[1] * best.uvw[1] + a.hkl[2] * best.uvw[2]).toBe(0);
          expect(Math.abs(a.angleResidualDeg)).toBeLessThan(4);
        }
      }
    });
  }
  test('bad spots are refused, naming the spot', () => {
    const si = phases[0].phase;
    expect(() => indexSpots([{ dNm: -1, dUncNm: 0, angleDeg: 0 }, { dNm: 0.3, dUncNm: 0, angleDeg: 60 }], si)).toThrow(/spot 1/);
    expect(() => indexSpots([{ dNm: 0.31, dUncNm: 0, angleDeg: 0 }], si)).toThrow(/two spots/);
  });
  test('a smeared spurious spot whose d matches a reflection but whose direction is wrong does not hide the zone (reference pairs sampled, Fischler & Bolles 1981)', () => {
    // α-Fe along [0 1 1] as the power spectrum of a lattice image gave them (seeded synthetic image), plus a
    // smeared spot near the 2 0 0 d at a wrong direction with an angle uncertainty of 8.8°: taken as the one
    // reference spot it left no zone explaining two spots
    const fe = phases[2].phase;
    const good = syntheticZoneSpots(fe, [0, 1, 1], 7, { dMinNm: 0.07 });
    const spurious = { dNm: 0.1401, dUncNm: 0.0066, angleDeg: good[0].angleDeg + 37, angleUncDeg: 8.8 };
    for (const spots of [[...good, spurious], [spurious, ...good]]) {
      const r = indexSpots(spots, fe);
      expect(r.candidates.length).toBeGreaterThan(0);
      expect(equivalent('cubic', r.candidates[0].uvw, [0, 1, 1])).toBe(true);
      expect(r.candidates[0].assignments.length).toBeGreaterThanOrEqual(good.length);
    }
  });
  test('spots of another crystal give no candidate or a poor fit, with a note', () => {
    const r = indexSpots([{ dNm: 0.9, dUncNm: 0.001, angleDeg: 0 }, { dNm: 0.7, dUncNm: 0.001, angleDeg: 50 }], phases[0].phase);
    expect(r.candidates.length).toBe(0);
    expect(r.notes.join()).toMatch(/matches no reflection/);
  });
});
