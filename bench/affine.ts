/**
 * bench:affine — two-axis (affine) calibration on seeded synthetic lattice images with known scan
 * distortion (testing/synthetic/distorted-lattice.ts): stretch 0–4 %, shear 0–1.5° either way,
 * any lattice rotation, noise 10–40 % of the mean, for the built-in zone-axis lattices. Each image
 * is measured by the ordinary region measurement (power spectrum spots with their budgets) and
 * fitted by calibrateTwoAxis. Targets (issue 14): stretch within 0.1 %, shear within 0.05°; after
 * correction, symmetry-equivalent spacings agree within their uncertainty (k = 2).
 * Usage: npm run bench:affine [-- --n 16 --seed 1]
 */
import { calibrateTwoAxis, latticeSpotsOf, PROJECTED_LATTICES } from '../src/calibration/affine';
import { measureRegion } from '../src/measure/measure-region';
import { expressPeriod } from '../src/measure/measurement';
import { rng } from '../testing/random';
import { distortedLattice } from '../testing/synthetic/distorted-lattice';
import { integerOption, printTable } from '../testing/bench-options';

async function main(): Promise<void> {
  const n = integerOption('n', 16);
  const seed = integerOption('seed', 1);
  const r = rng(seed);
  const ids = ['si-110', 'si-001', 'au-001', 'graphite-001'];
  const rows: (string | number)[][] = [];
  let worstStretch = 0;
  let worstShear = 0;
  let agree = 0;
  let pairs = 0;
  let failed = 0;
  const t0 = performance.now();
  for (let i = 0; i < n; i++) {
    const lat = PROJECTED_LATTICES.find((l) => l.id === ids[i % ids.length])!;
    const stretch = 0.04 * r();
    const shear = (r() < 0.5 ? -1 : 1) * 1.5 * r();
    const rot = 180 * r();
    const noise = 0.1 + 0.3 * r();
    const periodPx = 5.5 + 4 * r();
    const size = 320 + 64 * Math.floor(r() * 3);
    const refl = lat.id === 'graphite-001' ? [[1, 0, 0.3], [0, 1, 0.3], [1, -1, 0.3]] : [[1, 0, 0.3], [0, 1, 0.3], [1, 1, 0.15]];
    const img = distortedLattice({ width: size, height: size, sxNm: lat.d1Nm / periodPx, stretch, shearDeg: shear, d1Nm: lat.d1Nm, d2Nm: lat.d2Nm, angleDeg: lat.angleDeg, rotationDeg: rot, reflections: refl.map(([h, k, amplitude]) => ({ h, k, amplitude })), noise, seed: seed * 1000 + i });
    const m = await measureRegion(img, { x: 0, y: 0, width: size, height: size }, {});
    try {
      const fit = calibrateTwoAxis(latticeSpotsOf(m.periodicities), lat);
      const eS = fit.stretchPct - 100 * stretch;
      const eG = fit.shearDeg - shear;
      worstStretch = Math.max(worstStretch, Math.abs(eS));
      worstShear = Math.max(worstShear, Math.abs(eG));
      // symmetry-equivalent spacings after correction: every spot near d1 (and near d2 when equal)
      const eq = m.periodicities.filter((p) => p.flags.length === 0).map((p) => expressPeriod(p, fit.calibration)).filter((b) => Math.abs(b.value / lat.d1Nm - 1) < 0.03);
      let ok = true;
      for (let a = 0; a < eq.length; a++) for (let b = a + 1; b < eq.length; b++) {
        pairs++;
        const within = Math.abs(eq[a].value - eq[b].value) <= Math.hypot(eq[a].expanded, eq[b].expanded);
        if (within) agree++;
        else ok = false;
      }
      rows.push([i + 1, lat.id, (100 * stretch).toFixed(2), shear.toFixed(2), rot.toFixed(0), (100 * noise).toFixed(0), periodPx.toFixed(1), eS.toFixed(3), (2 * fit.uStretchPct).toFixed(3), eG.toFixed(3), (2 * fit.uShearDeg).toFixed(3), `${eq.length}${ok ? '' : ' (disagree)'}`]);
    } catch (e) {
      failed++;
      rows.push([i + 1, lat.id, (100 * stretch).toFixed(2), shear.toFixed(2), rot.toFixed(0), (100 * noise).toFixed(0), periodPx.toFixed(1), `failed: ${(e as Error).message.slice(0, 50)}`, '', '', '', '']);
    }
  }
  console.log('## two-axis calibration of distorted lattice images (errors: fitted − true)');
  printTable(['#', 'lattice', 'stretch (%)', 'shear (°)', 'rotation (°)', 'noise (%)', 'd1 period (px)', 'stretch error (%)', 'U stretch (%)', 'shear error (°)', 'U shear (°)', 'equivalent spots'], rows);
  console.log('## summary');
  printTable(
    ['quantity', 'worst |error|', 'target', 'notes'],
    [
      ['stretch', `${worstStretch.toFixed(3)} %`, '0.1 %', `${failed} of ${n} fits failed`],
      ['shear', `${worstShear.toFixed(3)}°`, '0.05°', ''],
      ['equivalent spacings after correction', `${agree}/${pairs} pairs agree`, 'within U (k = 2)', ''],
    ],
  );
  console.log(`time ${((performance.now() - t0) / 1000).toFixed(0)} s`);
}

main().catch((e) => {
  console.error(e);
  process.exit(1);
});
