/**
 * bench:labels — scale bars and their labels on seeded rendered scenes of many styles (pixel fonts
 * 7–16 px without anti-aliasing, drawn anti-aliased and two-level stroke fonts, system fonts
 * rendered by a browser; light or dark ink; strip, box, bordered box on a light ground, or free on
 * the image; label left, right, above or below; horizontal and vertical bars; units pm, Å, nm, µm,
 * um, mm, decimal point or comma), and deliberately ambiguous (legible but not round) labels.
 * Targets (issue 14): every label correct or asked about, zero wrong pixel sizes returned without
 * a question; bar end points within 0.5 px.
 * Usage: npm run bench:labels [-- --n 48 --seed 1 --held-out 24]
 */
import { findScaleBar } from '../src/calibration/scale-bar';
import { LABEL_CHARACTERS, parseScaleLabel } from '../src/calibration/label';
import { readScaleBar } from '../src/calibration/label-read';
import { createTextReader } from '../src/calibration/ocr';
import { ambiguousCases, labelCases } from '../testing/synthetic/label-cases';
import { barScene, sceneLabel, type BarSceneSpec } from '../testing/synthetic/scale-bar-scenes';
import { integerOption, printTable } from '../testing/bench-options';

function styleName(s: BarSceneSpec): string {
  const t = s.text;
  if (t.kind === 'pixel') return `pixel ${t.font}${t.scale > 1 ? ` ×${t.scale}` : ''}`;
  if (t.kind === 'atlas') return 'system font';
  return `stroke ${t.font} ${t.antiAliased ? 'anti-aliased' : 'two-level'}`;
}

interface Outcome {
  style: string;
  holder: string;
  placement: string;
  orientation: string;
  ink: string;
  label: string;
  barFound: boolean;
  endErrPx: number;
  status: 'correct' | 'asked' | 'wrong' | 'no bar';
  read: string;
}

async function runCase(s: BarSceneSpec, reader: Awaited<ReturnType<typeof createTextReader>>): Promise<Outcome> {
  const { image, truth } = barScene(s);
  const label = sceneLabel(s);
  const base = { style: styleName(s), holder: s.holder, placement: s.placement, orientation: s.orientation, ink: s.ink, label };
  const bar = findScaleBar(image);
  if (!bar) return { ...base, barFound: false, endErrPx: NaN, status: 'no bar', read: '' };
  const endErrPx = Math.max(Math.hypot(bar.x0 - truth.x0, bar.y0 - truth.y0), Math.hypot(bar.x1 - truth.x1, bar.y1 - truth.y1));
  const r = await readScaleBar(image, reader);
  const want = parseScaleLabel(label)!.nm;
  let status: Outcome['status'];
  if (!r.calibration || !r.label) status = 'asked';
  else status = Math.abs(r.label.nm / want - 1) < 1e-9 ? 'correct' : 'wrong';
  return { ...base, barFound: true, endErrPx, status, read: r.label?.text ?? r.ocrText ?? '' };
}

async function main(): Promise<void> {
  const n = integerOption('n', 48);
  const seed = integerOption('seed', 1);
  const heldOut = integerOption('held-out', 24, 0);
  const reader = await createTextReader({ whitelist: LABEL_CHARACTERS });
  const t0 = performance.now();
  try {
    const sets: [string, BarSceneSpec[]][] = [
      [`round labels, seed ${seed}`, labelCases(seed, n)],
      ...(heldOut > 0 ? ([[`round labels, held-out seed ${seed + 100}`, labelCases(seed + 100, heldOut)]] as [string, BarSceneSpec[]][]) : []),
      [`ambiguous (not round) labels, seed ${seed}`, ambiguousCases(seed)],
    ];
    const summary: (string | number)[][] = [];
    for (const [name, specs] of sets) {
      const outs: Outcome[] = [];
      for (const s of specs) outs.push(await runCase(s, reader));
      const ambiguous = name.startsWith('ambiguous');
      console.log(`## ${name}: ${specs.length} scenes`);
      printTable(
        ['#', 'style', 'holder', 'label at', 'bar', 'ink', 'label', 'end error (px)', 'outcome', 'read'],
        outs.map((o, i) => [i + 1, o.style, o.holder, o.placement, o.orientation, o.ink, o.label, o.barFound ? o.endErrPx.toFixed(2) : '—', o.status, o.read.trim()]),
      );
      // by style kind
      const kinds = [...new Set(outs.map((o) => o.style.replace(/ ×\d+$/, '')))].sort();
      printTable(
        ['style', 'scenes', 'bar ends ≤ 0.5 px', 'correct', 'asked', 'wrong, silent'],
        kinds.map((k) => {
          const g = outs.filter((o) => o.style.replace(/ ×\d+$/, '') === k);
          return [k, g.length, g.filter((o) => o.endErrPx <= 0.5).length, g.filter((o) => o.status === 'correct').length, g.filter((o) => o.status === 'asked').length, g.filter((o) => o.status === 'wrong').length];
        }),
      );
      const bars = outs.filter((o) => o.barFound);
      summary.push([
        name,
        specs.length,
        `${outs.filter((o) => o.endErrPx <= 0.5).length}/${specs.length}`,
        bars.length ? Math.max(...bars.map((o) => o.endErrPx)).toFixed(2) : '—',
        ambiguous ? '— (must be asked)' : `${outs.filter((o) => o.status === 'correct').length}/${specs.length}`,
        outs.filter((o) => o.status === 'asked').length,
        outs.filter((o) => o.status === 'wrong').length,
      ]);
    }
    console.log('## summary (targets: every round label correct, zero wrong pixel sizes without a question, ends within 0.5 px)');
    printTable(['set', 'scenes', 'bar ends ≤ 0.5 px', 'worst end (px)', 'labels correct', 'asked', 'wrong, silent'], summary);
    console.log(`time ${((performance.now() - t0) / 1000).toFixed(0)} s (OCR engine offline, one worker)`);
  } finally {
    await reader.close();
  }
}

main().catch((e) => {
  console.error(e);
  process.exit(1);
});
