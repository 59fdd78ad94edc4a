// The diffraction side panel: a powder XRD / SAXS pattern (file or typed peaks), its background
// and fitted peaks on a 2θ, d or q axis, the peak table, and the micrograph periods drawn as
// markers with uncertainty bands beside the reconciliation table.
import { groupAndPoolPeriods, type SourcedPeriod } from '../src/measure/pool';
import { LitElement, css, html, nothing, type TemplateResult } from 'lit';
import type { PatternAnalysis } from '../src/diffraction/analyse';
import type { LpGeometry } from '../src/diffraction/lorentz-polarisation';
import type { ComputeClient } from './compute-client';
import { diffractionSetRecord } from '../src/diffraction/stored-set';
import { listBatchFiles, listBatches } from '../src/store/batches';
import { listMeasurements, putDiffractionSet, type LibraryDb } from '../src/store/library';
import { dToTwoTheta, parseWavelength, XRAY_LINES } from '../src/diffraction/bragg';
import { parsePattern, parsePeakList, type ManualPeak, type Pattern, type PeakListUnit } from '../src/diffraction/pattern';
import { fittedLineLabels } from '../src/diffraction/line-labels';
import { reconcile, type DiffractionLine, type MicrographPeriod, type Reconciliation } from '../src/diffraction/reconcile';
import { indexSeries, type IndexedSeries } from '../src/diffraction/series';
import { pm, sig } from '../src/diffraction/format';
import { describePhaseSize } from '../src/diffraction/phase-size';
import { budgetContents, DEFAULT_COVERAGE_FACTOR, expressPeriod, formatPlusMinus, type UncertaintyBudget } from '../src/measure/measurement';
import { INTERNAL_STANDARDS } from '../src/diffraction/internal-standard';
import { BUILT_IN_PHASES, type ZoneAxisResult, type ZoneSpot } from '../src/diffraction/zone-axis';
import type { PlotData } from '../src/figure/plot';
import { spacedIndex, spacedLineLabel } from '../src/figure/reflection-index';
import './plot';
import type { StrataPlot } from './plot';
import './export-menu';
import type { ExportFigure, ExportTable } from './export-menu';
import { plotSvg } from '../src/figure/plot';
import { controlStyles, panelStyles, wideStyles } from './styles';

export const panelLabel = 'Diffraction';
/** The pattern's plot and its peaks get the main area beside the image; controls the side column. */
export const panelWide = true;

type AxisView = '2theta' | 'd' | 'q';

const f = (v: number | null | undefined, d = 4) => (v === null || v === undefined || !Number.isFinite(v) ? '—' : v.toFixed(d));

/**
 * `<strata-diffraction-panel>`. Properties: `periods` (micrograph periods with uncertainties,
 * `{ periodNm, uncertaintyNm, label? }[]`), `calibrationRelUncertainty` (the pixel size's share
 * of those uncertainties, optional). Events: `library-changed` (after "Save set" stored the set),
 * `status-message` {text, kind}. The fit runs on the main thread (a few seconds for 4000 points).
 */
export class StrataDiffractionPanel extends LitElement {
  static override properties = {
    periods: { attribute: false },
    wide: { type: Boolean, reflect: true },
    compute: { attribute: false },
    db: { attribute: false },
    calibrationRelUncertainty: { attribute: false },
    wavelengthKey: { state: true },
    customWavelength: { state: true },
    lpSpecimen: { state: true },
    monochromatorText: { state: true },
    columnsText: { state: true },
    standardKey: { state: true },
    standardCell: { state: true },
    axisView: { state: true },
    logY: { state: true },
    analysis: { state: true },
    manual: { state: true },
    manualUnit: { state: true },
    error: { state: true },
    busy: { state: true },
    zonePhase: { state: true },
    spotsText: { state: true },
    zoneResult: { state: true },
    zoneError: { state: true },
  };

  static override styles = [
    controlStyles,
    panelStyles,
    wideStyles,
    css`
      table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; }
      th, td { padding: 2px 4px; text-align: right; border-bottom: 1px solid var(--line); }
      td.nowrap { white-space: nowrap; }
      /* a value and its ± stay on one line; the cross-check's five columns fit the side column */
      table.cross-check { font-size: 0.9em; }
      table.cross-check td { white-space: nowrap; padding-left: 0.25em; padding-right: 0.25em; }
      th:first-child, td:first-child { text-align: left; }
      textarea { width: 100%; box-sizing: border-box; font: inherit; color: var(--text); background: #212b35; border: 1px solid var(--line); }
      /* a long option (a standard with its certified cell) must not push the column wider than the screen */
      select.internal-standard { max-width: 15em; }
      select.lp-geometry { max-width: 15em; }
      .error { color: #f08a7a; }
      td.good { color: #7fd18b; }
      td.warn { color: #f0c05a; }
    `,
  ];

  periods: (MicrographPeriod & { budget?: UncertaintyBudget })[] = [];
  /** Set by the shell: the figures in the main area beside the image, the controls in a side column. */
  wide = false;
  /** The compute worker client the shell gives every panel. */
  compute: ComputeClient | null = null;
  /** The local library, for the periods measured in stored micrographs. */
  db: LibraryDb | null = null;
  calibrationRelUncertainty: number | undefined = undefined;
  wavelengthKey = 'header';
  customWavelength = '';
  /** The specimen whose Lorentz–polarisation factor is fitted across each line of a 2θ pattern (src/diffraction/lorentz-polarisation.ts). */
  lpSpecimen: LpGeometry['specimen'] = 'powder';
  /** The monochromator's 2θ in degrees as typed; '' for none. */
  monochromatorText = '';
  /** The columns to read as typed ('1,2' or '1,2,4'); '' lets the file's column names decide. */
  columnsText = '';
  /** The internal standard mixed into the sample: 'none', a built-in id ('si', 'lab6') or 'cubic-F' / 'cubic-I' / 'cubic-P' (a cell typed in standardCell as a ± u, nm). */
  standardKey = 'none';
  standardCell = '';
  axisView: AxisView = '2theta';
  logY = false;
  analysis: PatternAnalysis | null = null;
  manual: ManualPeak[] = [];
  manualUnit: PeakListUnit = 'dNm';
  error = '';
  busy = false;
  /** Spot indexing: a built-in phase's name or 'file'; the typed or taken spots; the result. */
  zonePhase = 'Si';
  spotsText = '';
  zoneResult: (ZoneAxisResult & { source: string }) | null = null;
  zoneError = '';
  private cifText: string | null = null;
  private cifName: string | null = null;
  private pattern: Pattern | null = null;
  private patternText: string | null = null;
  private fileName: string | null = null;

  constructor() {
    super();
    // the shell hands over a pattern opened from the start screen or a file: {fileName, text, accepted}
    this.addEventListener('open-pattern', (e) => {
      const d = (e as CustomEvent<{ fileName?: string; text?: string; accepted?: boolean }>).detail;
      if (typeof d?.text !== 'string') return;
      d.accepted = true;
      this.patternText = d.text;
      this.fileName = d.fileName ?? null;
      this.columnsText = '';
      // the panel's own file field no longer names the pattern shown
      const field = this.renderRoot.querySelector<HTMLInputElement>('input[type="file"]');
      if (field) field.value = '';
      void this.analyse();
    });
    // a structure file opened or dropped on the app: {fileName, text, accepted}, used for spot indexing
    this.addEventListener('open-structure', (e) => {
      const d = (e as CustomEvent<{ fileName?: string; text?: string; accepted?: boolean }>).detail;
      if (typeof d?.text !== 'string') return;
      d.accepted = true;
      this.cifText = d.text;
      this.cifName = d.fileName ?? 'structure.cif';
      this.zonePhase = 'file';
    });
  }

  private emit(type: string, detail: unknown): void {
    this.dispatchEvent(new CustomEvent(type, { detail, bubbles: true, composed: true }));
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.emit('status-message', { text, kind });
  }

  /** The internal standard for analysePattern, or undefined for none; throws naming the text when a typed cell is not a ± u. */
  private standardOption(): { id: string } | { aNm: number; uANm: number; centring: 'F' | 'I' | 'P' } | undefined {
    if (this.standardKey === 'none') return undefined;
    if (!this.standardKey.startsWith('cubic-')) return { id: this.standardKey };
    const m = /^\s*([\d.]+)\s*(?:±|\+-|\+\/-)\s*([\d.]+)\s*$/.exec(this.standardCell);
    if (!m) throw new Error(`type the internal standard's lattice parameter as a ± u in nm (u: standard uncertainty), e.g. 0.40782 ± 0.00002, got "${this.standardCell}"`);
    return { aNm: Number(m[1]), uANm: Number(m[2]), centring: this.standardKey.slice(6) as 'F' | 'I' | 'P' };
  }

  /** The zero-shift line under the peaks: its value, ± at k = 2 and what the ± contains. */
  private zeroShiftLine(a: PatternAnalysis): string {
    const z = a.indexing.zeroShiftDeg;
    if (z === null) return '';
    const u2 = pm(z, 2 * (a.indexing.zeroShiftUncDeg ?? 0));
    const std = a.indexing.phases.find((p) => p.standard);
    if (!std) return `Zero shift ${u2}° (± 2u, k = 2: the fit of the indexed lines), removed from d.`;
    const cell = this.standardKey.startsWith('cubic-') ? 'the standard uncertainty of its cell as typed' : "the certified cell's uncertainty";
    return `Zero shift ${u2}° (± 2u, k = 2), measured on the internal standard ${std.name} (${std.lines.length} lines, its cell held) and removed from d; the ± contains the fit of the standard's lines and ${cell}.`;
  }

  /** The Lorentz–polarisation geometry for analysePattern; throws naming the text when the monochromator 2θ is not a number in (0, 180). */
  private lpOption(): LpGeometry {
    const t = this.monochromatorText.trim().replace(',', '.');
    if (this.lpSpecimen === 'none' || t === '') return { specimen: this.lpSpecimen, monochromatorTwoThetaDeg: null };
    const deg = Number(t);
    if (!(deg > 0 && deg < 180)) throw new Error(`type the monochromator's 2θ in degrees, between 0 and 180 (graphite 002 with Cu Kα: 26.6), or leave it empty for none; got "${this.monochromatorText}"`);
    return { specimen: this.lpSpecimen, monochromatorTwoThetaDeg: deg };
  }

  private wavelengthOption(): string | undefined {
    if (this.wavelengthKey === 'header') return undefined;
    if (this.wavelengthKey === 'custom') return this.customWavelength.trim() || undefined;
    return this.wavelengthKey;
  }

  private async onFile(e: Event): Promise<void> {
    const input = e.target as HTMLInputElement;
    const file = input.files?.[0];
    if (!file) return;
    this.patternText = await file.text();
    this.fileName = file.name;
    this.columnsText = '';
    this.analyse();
  }

  /** Loads the demo powder pattern that ships with the app (listed in demo/index.json). */
  private async loadDemoPattern(): Promise<void> {
    try {
      const list = (await (await fetch('demo/index.json')).json()) as Array<{ file: string; kind: string }>;
      const entry = list.find((e) => e.kind === 'pattern');
      if (!entry) throw new Error('no demo pattern in this build');
      const res = await fetch(`demo/${encodeURIComponent(entry.file)}`);
      if (!res.ok) throw new Error(`demo pattern not found (${res.status})`);
      this.patternText = await res.text();
      this.fileName = entry.file;
      this.columnsText = '';
      await this.analyse();
    } catch (err) {
      this.error = (err as Error).message;
    }
  }

  /** Parses and fits the pattern in the compute worker, so the page stays responsive. */
  private async analyse(): Promise<void> {
    if (this.patternText === null) return;
    this.error = '';
    this.busy = true;
    try {
      if (!this.compute) throw new Error('the compute worker is not available');
      const { pattern, analysis } = await this.compute.call('analysePattern', { text: this.patternText, wavelength: this.wavelengthOption(), columns: this.columnsText.trim() || undefined, fileName: this.fileName || undefined, internalStandard: this.standardOption(), lp: this.lpOption() });
      this.pattern = pattern;
      this.analysis = analysis;
      this.manual = [];
      this.emit('status-message', { text: `${this.fileName}: ${analysis.peaks.length} ${analysis.peaks.length === 1 ? 'peak' : 'peaks'} fitted`, kind: 'info' });
    } catch (err) {
      this.analysis = null;
      this.error = (err as Error).message;
    } finally {
      this.busy = false;
    }
  }

  /** The periods the reconciliation can use (positive, with a stated uncertainty). */
  private validPeriods(): MicrographPeriod[] {
    return (this.periods ?? []).filter((p) => p.periodNm > 0 && p.uncertaintyNm >= 0);
  }

  /**
   * Takes every calibrated period of the library as the micrograph side of the comparison: the
   * measurements saved from the Periods panel and the accepted periods of every batch's files.
   */
  private async loadLibraryPeriods(): Promise<void> {
    if (!this.db) return;
    const all = await listMeasurements(this.db);
    const items: SourcedPeriod[] = all.flatMap((m) => m.periodicities.map((p) => ({ periodicity: p, calibration: m.calibration, source: m.fileName || m.id })));
    const saved = items.length;
    let batched = 0;
    for (const b of await listBatches(this.db)) {
      for (const f of await listBatchFiles(this.db, b.id)) {
        if (f.result?.status !== 'ok' || !f.result.calibration) continue;
        for (const p of f.result.summary.topPeriods) {
          items.push({ periodicity: p, calibration: f.result.calibration, source: `${b.name} · ${f.name}` });
          batched++;
        }
      }
    }
    // The one pooling rule: periods that lie together are pooled (random effects, calibration part once).
    const groups = groupAndPoolPeriods(items.filter((it) => it.calibration !== null));
    this.periods = groups.map((g) => ({
      periodNm: g.budget.value,
      uncertaintyNm: g.budget.combined,
      budget: g.budget,
      label: `${g.n} period${g.n === 1 ? '' : 's'} from ${g.sources.slice(0, 3).join(', ')}${g.sources.length > 3 ? ` and ${g.sources.length - 3} more` : ''}${Number.isFinite(g.birgeRatio) ? `; Birge ratio ${g.birgeRatio.toFixed(2)}` : ''}`,
    }));
    this.emit('status-message', { text: `${this.periods.length} distinct ${this.periods.length === 1 ? 'period' : 'periods'} pooled from the library (${saved} saved, ${batched} from batches; uncalibrated ones left out)`, kind: 'info' });
  }

  private onManual(text: string): void {
    this.error = '';
    if (!text.trim()) {
      this.manual = [];
      return;
    }
    try {
      const w = this.wavelengthOption();
      this.manual = parsePeakList(text, this.manualUnit, w ? parseWavelength(w).wavelengthNm : undefined);
    } catch (err) {
      this.error = (err as Error).message;
    }
  }

  /** Spots as typed: 'd,angle' pairs (nm, degrees) separated by ';' or new lines; 'd±u,angle' gives u (else 0.5 % of d). */
  private typedSpots(): ZoneSpot[] {
    return this.spotsText.split(/[;\n]/).map((t) => t.trim()).filter(Boolean).map((t, i) => {
      const m = /^([0-9.eE+-]+)(?:\s*(?:±|\+-)\s*([0-9.eE+-]+))?\s*,\s*([0-9.eE+-]+)$/.exec(t);
      if (!m) throw new Error(`spot ${i + 1} '${t}' is not 'd,angle' (nm, degrees)`);
      const d = Number(m[1]);
      return { dNm: d, dUncNm: m[2] !== undefined ? Number(m[2]) : 0.005 * d, angleDeg: Number(m[3]) };
    });
  }

  /** The calibrated periods of the most recent stored measurement with at least two, as spots (d ± u, direction). */
  private async spotsFromLibrary(): Promise<void> {
    if (!this.db) return;
    const all = (await listMeasurements(this.db)).filter((m) => m.calibration && m.periodicities.filter((p) => p.geometry === 'normal').length >= 2);
    const m = all.sort((a, b) => (b.createdIso ?? '').localeCompare(a.createdIso ?? ''))[0];
    if (!m) {
      this.zoneError = 'no stored measurement has two calibrated spots';
      return;
    }
    this.spotsText = m.periodicities.filter((p) => p.geometry === 'normal').map((p) => {
      const b = expressPeriod(p, m.calibration, 1);
      return `${sig(b.value, 5)}±${sig(b.combined, 2)},${sig(p.angleDeg, 4)}`;
    }).join('; ');
    this.say(`Spots from ${m.fileName || m.id}`);
  }

  /** Asks for a structure file (an input made on demand, so the panel keeps one file input: the pattern's). */
  private pickCif(): void {
    const input = document.createElement('input');
    input.type = 'file';
    input.accept = '.cif';
    input.addEventListener('change', (e) => void this.onCif(e));
    input.click();
  }

  private async onCif(e: Event): Promise<void> {
    const file = (e.target as HTMLInputElement).files?.[0];
    if (!file) return;
    this.cifText = await file.text();
    this.cifName = file.name;
    this.zonePhase = 'file';
  }

  /** Indexes the spots in the compute worker. */
  private async indexSpotsNow(): Promise<void> {
    this.zoneError = '';
    this.zoneResult = null;
    try {
      if (!this.compute) throw new Error('the compute worker is not available');
      const spots = this.typedSpots();
      if (this.zonePhase === 'file' && this.cifText === null) throw new Error('choose a structure file first');
      this.zoneResult = await this.compute.call('indexSpots', this.zonePhase === 'file' ? { spots, cifText: this.cifText!, cifName: this.cifName ?? undefined } : { spots, builtIn: this.zonePhase });
    } catch (err) {
      this.zoneError = (err as Error).message;
    }
  }

  private zoneSection(): TemplateResult {
    const r = this.zoneResult;
    const spots = (() => {
      try {
        return this.typedSpots();
      } catch {
        return [];
      }
    })();
    const best = r?.candidates[0];
    return html`<section class="o6">
      <h3>Index spots with a structure</h3>
      <div class="row">
        <label>Phase
          <select @change=${(e: Event) => { this.zonePhase = (e.target as HTMLSelectElement).value; }}>
            ${BUILT_IN_PHASES.map((p) => html`<option value=${p.name} ?selected=${this.zonePhase === p.name} title=${p.source}>${p.name}</option>`)}
            <option value="file" ?selected=${this.zonePhase === 'file'}>structure file${this.cifName ? `: ${this.cifName}` : '…'}</option>
          </select>
        </label>
        <button @click=${() => this.pickCif()} title="A crystallographic information file (CIF) of the phase">Structure file…</button>
        <button ?disabled=${!this.db} @click=${() => this.spotsFromLibrary()} title="The calibrated spots of the most recent measurement saved in the library">Spots from the library</button>
      </div>
      <textarea rows="2" aria-label="Spots as d,angle pairs in nm and degrees, separated by semicolons" placeholder="d,angle; d,angle … e.g. 0.3135,10; 0.3135,80.5; 0.192,45.3" .value=${this.spotsText} @change=${(e: Event) => { this.spotsText = (e.target as HTMLTextAreaElement).value; }}></textarea>
      <div class="row"><button @click=${() => this.indexSpotsNow()}>Index spots</button></div>
      ${this.zoneError ? html`<p class="error">${this.zoneError}</p>` : nothing}
      ${r && !best ? html`<p>No zone axis of ${r.phase} explains the spots.</p>` : nothing}
      ${best ? html`<p>Zone axis <strong>[${best.uvw.join(' ')}]</strong>${best.mirrored ? ' (image mirrored)' : ''} — ${best.assignments.length} of ${spots.length} spots, χ² ${sig(best.chi2, 3)}; ${r!.source}</p>
        <table>
          <tr><th>spot</th><th>d (nm) ± u</th><th>hkl</th><th>d calc (nm)</th><th>Δd (nm)</th><th>Δangle (°)</th></tr>
          ${best.assignments.map((a) => html`<tr><td>${a.spot + 1}</td><td>${spots[a.spot] ? pm(spots[a.spot].dNm, spots[a.spot].dUncNm) : '—'}</td><td>${a.hkl.join(' ')}</td><td>${sig(a.dCalcNm, 5)}</td><td>${sig(a.dResidualNm, 2)}</td><td>${sig(a.angleResidualDeg, 2)}</td></tr>`)}
        </table>
        ${r!.candidates.length > 1 ? html`<p class="muted">Other zone axes: ${r!.candidates.slice(1).map((c) => `[${c.uvw.join(' ')}] (${c.assignments.length} spots, χ² ${sig(c.chi2, 3)})`).join('; ')}</p>` : nothing}` : nothing}
      ${r?.notes.map((n) => html`<p class="muted">${n}</p>`) ?? nothing}
    </section>`;
  }

  /** Diffraction lines from the fit or the typed list, with series labels. */
  private lines(): { lines: DiffractionLine[]; series: IndexedSeries[] } {
    if (this.analysis) {
      const labels = fittedLineLabels(this.analysis);
      return {
        lines: this.analysis.peaks.map((p, i) => ({ dNm: p.dCorrectedNm, dUncNm: p.budget.combinedNm, label: labels[i]!, crystalliteNm: p.crystalliteNm, intensity: p.intensity })),
        series: this.analysis.series,
      };
    }
    const series = indexSeries(this.manual.map((m) => ({ dNm: m.dNm })));
    return { lines: this.manual.map((m, i) => ({ dNm: m.dNm, dUncNm: 0, label: `typed ${i + 1}` })), series };
  }

  private reconciliation(): Reconciliation | null {
    const ok = this.validPeriods();
    if (ok.length === 0) return null;
    const { lines, series } = this.lines();
    if (lines.length === 0) return null;
    return reconcile({ periods: ok, calibrationRelUncertainty: this.calibrationRelUncertainty }, { lines, series });
  }

  /** Stores the fitted or typed set in the library (one transaction), with its lines and series. */
  private async save(): Promise<void> {
    if (!this.db) {
      this.say('The library is not open: the set cannot be stored', 'error');
      return;
    }
    const a = this.analysis;
    const w = this.wavelengthOption();
    const wavelengthNm = a?.wavelengthNm ?? (w ? parseWavelength(w).wavelengthNm : null);
    if (!wavelengthNm) {
      this.say('Choose the radiation (wavelength) first: a stored set keeps it', 'error');
      return;
    }
    const { lines, series } = this.lines();
    const createdIso = new Date().toISOString();
    const name = this.fileName ?? `typed peaks ${createdIso.slice(0, 16).replace('T', ' ')}`;
    try {
      const record = diffractionSetRecord({
        id: globalThis.crypto.randomUUID(),
        name,
        createdIso,
        patternText: a ? this.patternText : null,
        fileName: this.fileName,
        wavelengthNm,
        ka2Nm: a?.ka2Nm ?? null,
        peaks: a ? a.peaks.map((p) => ({ twoThetaDeg: p.twoThetaDeg, intensity: p.intensity })) : this.manual.map((m) => ({ twoThetaDeg: m.twoThetaDeg ?? null, intensity: null })),
        lines,
        series,
      });
      await putDiffractionSet(this.db, record);
      this.emit('library-changed', null);
      this.say(`Stored the diffraction set ${name} (${lines.length} lines) in the library`);
    } catch (err) {
      this.say(`The set was not stored: ${(err as Error).message}`, 'error');
    }
  }

  /** Maps a d-spacing (nm) to the current axis; null when not representable. */
  private xOfD(dNm: number): number | null {
    if (this.axisView === 'd') return dNm;
    if (this.axisView === 'q') return (2 * Math.PI) / dNm;
    const lambda = this.pattern?.wavelengthNm ?? (this.wavelengthOption() ? parseWavelength(this.wavelengthOption()!).wavelengthNm : null);
    if (!lambda || lambda / (2 * dNm) > 1) return null;
    return dToTwoTheta(dNm, lambda);
  }

  /** The pattern as a plot for the shared plot element (x ascending in the axis chosen). */
  /** The pattern's plot (null with fewer than 2 points to draw). */
  private plotData(): PlotData | null {
    const p = this.pattern;
    const a = this.analysis;
    const tY = (y: number) => (this.logY ? Math.log10(Math.max(y, 1)) : y);
    const rows: { x: number; y: number; bg: number; model: number }[] = [];
    if (p && a) {
      for (let i = 0; i < p.x.length; i++) {
        const d = p.axis === 'q' ? (2 * Math.PI) / p.x[i] : p.wavelengthNm! / (2 * Math.sin((p.x[i] * Math.PI) / 360));
        const x = this.xOfD(d);
        if (x !== null && Number.isFinite(x)) rows.push({ x, y: tY(p.y[i]), bg: tY(a.background[i]), model: tY(a.model[i]) });
      }
    }
    const peakDs = a ? a.peaks.map((q) => q.dNm) : this.manual.map((m) => m.dNm);
    if (this.axisView === 'd' && rows.length) {
      // d explodes at low angle: show down to the pattern's largest d that a peak or period needs
      const dMax = 2 * Math.max(...peakDs, ...(this.periods ?? []).map((q) => q.periodNm));
      for (let i = rows.length - 1; i >= 0; i--) if (rows[i].x > dMax) rows.splice(i, 1);
    }
    rows.sort((u, v) => u.x - v.x);
    if (rows.length < 2) return null;
    const x = rows.map((r) => r.x);
    const yAt = (v: number) => {
      let i = x.findIndex((xi) => xi >= v);
      if (i < 0) i = x.length - 1;
      return rows[i].y;
    };
    const unit = this.axisView === '2theta' ? '2θ (°)' : this.axisView === 'd' ? 'd (nm)' : 'q (nm⁻¹)';
    const yLabel = this.logY ? 'log₁₀ intensity (counts)' : 'intensity (counts)';
    const periods = (this.periods ?? []).flatMap((q) => {
      const c = this.xOfD(q.periodNm);
      const lo = this.xOfD(q.periodNm + q.uncertaintyNm);
      const hi = this.xOfD(Math.max(1e-6, q.periodNm - q.uncertaintyNm));
      return c === null ? [] : [{ x: c, lo: lo ?? c, hi: hi ?? c, label: `${q.periodNm.toPrecision(4)} nm (micrograph)` }];
    });
    const data: PlotData = {
      id: 'diffraction-pattern',
      title: `Diffraction pattern${this.fileName ? `: ${this.fileName}` : ''}`,
      xLabel: unit,
      yLabel,
      x,
      traces: [
        { label: 'background', y: rows.map((r) => r.bg), style: 'background' },
        { label: 'fitted model', y: rows.map((r) => r.model), style: 'fit' },
        { label: yLabel, y: rows.map((r) => r.y), style: 'data' },
      ],
      marks: peakDs.flatMap((d) => { const v = this.xOfD(d); return v === null ? [] : [{ x: v, y: yAt(v), kind: 'max' as const }]; }),
      rules: periods,
      description: `Diffraction pattern against ${unit} with its fitted model and background; ${peakDs.length} peaks marked${periods.length ? `; ${periods.length} micrograph periods as bands (± their uncertainty)` : ''}.`,
    };
    return data;
  }

  private plot(data: PlotData | null): TemplateResult | typeof nothing {
    if (!data) return html`<p class="muted placeholder">Open a pattern (File, or Demo pattern) or type peaks: the pattern plot and its fitted peaks appear here.</p>`;
    return html`<strata-plot panel-exports .data=${data} height-px="300" file-stem=${(this.fileName ?? 'pattern').replace(/\.[^.]+$/, '')}></strata-plot>`;
  }

  /** The lines for the export menu: fitted peaks with their d budget (k = 2), or the typed peaks. */
  private linesTable(): ExportTable {
    const a = this.analysis;
    const k = 2;
    if (!a) {
      return {
        noun: 'typed peak', name: 'peaks', header: ['peak', 'dNm'], rows: this.manual.map((m, i) => [i + 1, m.dNm]),
        notes: ['typed peaks: no uncertainty given'], json: { source: 'typed', unit: 'nm', peaks: this.manual },
      };
    }
    const hklOf = (i: number) => a.indexing.phases.flatMap((ph) => ph.lines.filter((l) => l.peak === i).map((l) => l.hkl.join(' ')))[0] ?? null;
    const header = ['peak', 'kind', 'twoThetaDeg', 'uTwoThetaDeg', 'dNm', 'uStatisticalDNm', 'uMethodDNm', 'uCalibrationDNm', 'uCombinedDNm', 'expandedDNm', 'coverageFactorK',
      'fwhmDeg', 'height', 'crystalliteNm', 'uCrystalliteNm', 'hkl', 'wavelength', 'lorentzPolarisation', 'dContains'];
    const rows = a.peaks.map((p, i) => [i + 1, p.kind, p.twoThetaDeg, p.twoThetaUncDeg, p.dCorrectedNm, p.budget.statisticalNm, p.budget.methodNm, p.budget.calibrationNm,
      p.budget.combinedNm, k * p.budget.combinedNm, k, p.fwhmDeg, p.intensity, p.crystalliteNm, p.crystalliteUncNm, hklOf(i), `${a.radiationLabel} (${a.radiationSource})`, a.lpLabel, p.budget.statement]);
    return {
      noun: 'peak', name: 'peaks', header, rows,
      notes: [`${this.fileName ?? 'pattern'}; wavelength ${a.radiationLabel}, from ${a.radiationSource}; Lorentz–polarisation factor across each line: ${a.lpLabel}; u are standard uncertainties, the expanded uncertainty has k = ${k}`],
      json: { file: this.fileName, radiation: { label: a.radiationLabel, source: a.radiationSource }, lorentzPolarisation: a.lpLabel, coverageFactorK: k, peaks: a.peaks, indexing: a.indexing, phaseSizes: a.phaseSizes, series: a.series, reconciliation: this.reconciliation() },
    };
  }

  override render(): TemplateResult {
    const a = this.analysis;
    const rec = this.reconciliation();
    const valid = this.validPeriods();
    const plotData = this.plotData();
    return html`<div class="side">
      <section class="o1">
        <h3>Pattern</h3>
        <div class="row">
          <label>File <input type="file" accept=".xy,.txt,.dat,.csv,.asc,.cif" @change=${(e: Event) => this.onFile(e)} /></label>
          <button @click=${() => this.loadDemoPattern()} title="The synthetic Cu Kα pattern of the demo tactoid film">Demo pattern</button>
          <label>Wavelength
            <select @change=${(e: Event) => { this.wavelengthKey = (e.target as HTMLSelectElement).value; this.analyse(); }}>
              <option value="header" ?selected=${this.wavelengthKey === 'header'}>from the file</option>
              ${XRAY_LINES.map((l) => html`<option value=${l.key} ?selected=${this.wavelengthKey === l.key}>${l.label} ${(l.wavelengthNm * 10).toFixed(5)} Å</option>`)}
              <option value="custom" ?selected=${this.wavelengthKey === 'custom'}>other…</option>
            </select>
          </label>
          ${this.wavelengthKey === 'custom' ? html`<input type="text" placeholder="1.5406A or 0.15406nm" .value=${this.customWavelength} @change=${(e: Event) => { this.customWavelength = (e.target as HTMLInputElement).value; this.analyse(); }} />` : nothing}
          ${this.columnsText !== '' || /columns to read|column \d+ was asked/.test(this.error) ? html`<label title="The columns of 2θ (or q), intensity and optionally its uncertainty, counted from 1">Columns <input type="text" class="columns" size="7" placeholder="1,2 or 1,2,3" .value=${this.columnsText} @change=${(e: Event) => { this.columnsText = (e.target as HTMLInputElement).value; void this.analyse(); }} /></label>` : nothing}
        </div>
        <div class="row">
          <label title="The Lorentz–polarisation factor fitted across each line of a 2θ pattern, so that a broad low-angle line's fitted centre is its Bragg angle">Lorentz–polarisation
            <select class="lp-geometry" @change=${(e: Event) => { this.lpSpecimen = (e.target as HTMLSelectElement).value as LpGeometry['specimen']; void this.analyse(); }}>
              <option value="powder" ?selected=${this.lpSpecimen === 'powder'}>random powder (Bragg–Brentano)</option>
              <option value="oriented-film" ?selected=${this.lpSpecimen === 'oriented-film'}>oriented film (Bragg–Brentano)</option>
              <option value="none" ?selected=${this.lpSpecimen === 'none'}>none (transmission, synchrotron)</option>
            </select>
          </label>
          ${this.lpSpecimen !== 'none' ? html`<label title="2θ of the monochromator crystal, for the polarisation term (graphite 002 with Cu Kα: 26.6°); empty: no monochromator">Monochromator 2θ (°) <input type="text" class="monochromator" size="5" placeholder="none" .value=${this.monochromatorText} @change=${(e: Event) => { this.monochromatorText = (e.target as HTMLInputElement).value; void this.analyse(); }} /></label>` : nothing}
        </div>
        <div class="row">
          <label>Internal standard
            <select class="internal-standard" @change=${(e: Event) => { this.standardKey = (e.target as HTMLSelectElement).value; if (!this.standardKey.startsWith('cubic-') || this.standardCell.trim()) void this.analyse(); }}>
              <option value="none" ?selected=${this.standardKey === 'none'}>none</option>
              ${INTERNAL_STANDARDS.map((st) => html`<option value=${st.id} ?selected=${this.standardKey === st.id}>${st.name}: a = ${st.aNm} ± ${st.expandedUNm} nm (k = 2)</option>`)}
              ${(['F', 'I', 'P'] as const).map((c) => html`<option value=${`cubic-${c}`} ?selected=${this.standardKey === `cubic-${c}`}>a cubic ${c} cell you enter</option>`)}
            </select>
          </label>
          ${this.standardKey.startsWith('cubic-') ? html`<label>a ± u (nm) <input type="text" class="standard-cell" placeholder="0.40782 ± 0.00002" .value=${this.standardCell} @change=${(e: Event) => { this.standardCell = (e.target as HTMLInputElement).value; void this.analyse(); }} /></label>` : nothing}
        </div>
        <div class="row">
          <label>Typed peaks
            <select @change=${(e: Event) => { this.manualUnit = (e.target as HTMLSelectElement).value as PeakListUnit; }}>
              <option value="dNm">d (nm)</option><option value="dA">d (Å)</option><option value="twoThetaDeg">2θ (°)</option><option value="qInvNm">q (nm⁻¹)</option><option value="qInvA">q (Å⁻¹)</option>
            </select>
          </label>
        </div>
        <textarea rows="2" aria-label="Typed peaks, separated by commas or spaces, in the unit chosen above" placeholder="e.g. 1.25, 0.625, 0.417" ?disabled=${a !== null} @change=${(e: Event) => this.onManual((e.target as HTMLTextAreaElement).value)}></textarea>
        ${this.busy ? html`<p class="muted">Fitting…</p>` : nothing}
        ${this.error ? html`<p class="error">${this.error}</p>` : nothing}
      </section>
      <section class="o4">
        <div class="row">
          <button ?disabled=${!this.db} @click=${() => this.loadLibraryPeriods()} title="Use every calibrated period of the library (saved in the Periods panel, or from a batch) as the real-space side">Take periods from the library</button>
          <span class="muted">${this.periods.length} micrograph period${this.periods.length === 1 ? '' : 's'}</span>
        </div>
      </section>
      ${this.reconciliationSection(rec, valid)}
      ${this.zoneSection()}
      </div>
      <div class="stage">
      <section class="o2">
        <div class="row">
          ${(['2theta', 'd', 'q'] as AxisView[]).map((v) => html`<button aria-pressed=${this.axisView === v ? 'true' : 'false'} @click=${() => { this.axisView = v; }}>${v === '2theta' ? '2θ' : v}</button>`)}
          <label><input type="checkbox" .checked=${this.logY} @change=${(e: Event) => { this.logY = (e.target as HTMLInputElement).checked; }} /> log intensity</label>
          <button ?disabled=${!a && this.manual.length === 0} @click=${() => void this.save()} title="Keep the pattern, its lines and series in the library (for the batch comparison and the library export)">Save set</button>
        </div>
        ${this.plot(plotData)}
        <strata-export-menu .table=${a || this.manual.length ? this.linesTable() : null}
          .figure=${plotData ? ({ name: 'pattern', svg: () => this.renderRoot.querySelector<StrataPlot>('strata-plot')?.svgText() ?? plotSvg(plotData) } satisfies ExportFigure) : null} .report=${false}
          .fileName=${this.fileName ?? 'pattern'}></strata-export-menu>
      </section>
      ${a ? html`<section class="o3">
        <h3>Peaks (${a.peaks.length})</h3>
        <p class="muted">Wavelength ${a.radiationLabel} — from ${a.radiationSource}. <span class="lp-label">Lorentz–polarisation factor across each line: ${a.lpLabel}.</span> d ± 2u: fit, profile shape, zero shift (${a.indexing.zeroShiftDeg !== null ? 'measured, removed' : 'allowance'}) and wavelength.</p>
        <table>
          <tr><th>2θ (°)</th><th>d (nm) ± 2u</th><th>FWHM (°)</th><th>height</th><th>size (nm) ± 2u</th><th>hkl</th></tr>
          ${a.peaks.map((p, i) => {
            const hkl = a.indexing.phases.flatMap((ph, j) => ph.lines.filter((l) => l.peak === i).map((l) => `${a.indexing.phases.length > 1 ? `${j + 1}: ` : ''}${l.hkl.join(' ')}`))[0] ?? '';
            return html`<tr><td>${p.twoThetaDeg === null ? '—' : pm(p.twoThetaDeg, p.twoThetaUncDeg)}</td><td>${pm(p.dCorrectedNm, 2 * p.budget.combinedNm)}</td><td>${sig(p.fwhmDeg, 3)}</td><td>${sig(p.intensity, 3)}</td><td>${p.kind === 'band' ? '(hk) band' : p.crystalliteNm === null ? '—' : pm(p.crystalliteNm, 2 * (p.crystalliteUncNm ?? 0))}</td><td class="nowrap">${hkl}</td></tr>`;
          })}
        </table>
        ${a.indexing.phases.map((ph, j) => html`<p>Phase ${j + 1}: ${ph.kind}, ${ph.kind === 'lamellar' ? `period ${pm(ph.cNm, 2 * ph.cUncNm)} nm` : ph.kind.startsWith('cubic') ? `a = ${pm(ph.aNm, 2 * ph.aUncNm)} nm` : `a = ${pm(ph.aNm, 2 * ph.aUncNm)} nm, c = ${pm(ph.cNm, 2 * ph.cUncNm)} nm`} (± 2u); ${ph.lines.length} lines; F${ph.figureOfMerit.n} = ${sig(ph.figureOfMerit.fN, 3)}${ph.standard ? ` — internal standard ${ph.name}, cell held` : ''}${a.phaseSizes?.[j] ? html`<br><span class="phase-size">${describePhaseSize(a.phaseSizes[j]!, 2)}</span>` : nothing}</p>`)}
        ${a.indexing.zeroShiftDeg !== null ? html`<p class="zero-shift">${this.zeroShiftLine(a)}</p>` : nothing}
        ${a.series.map((s) => html`<p>${s.kind}: ${s.members.map((m) => spacedIndex(m.index)).join(', ')} — cell ${pm(s.cellNm, 2 * s.cellUncNm)} nm (± 2u)</p>`)}
        <p class="muted">${a.sizeMethod}. Size ± 2u: the fitted breadth (FWHM and η); the shape factor K, whose value depends on the crystallites' shape (Langford &amp; Wilson, J. Appl. Cryst. 1978), is taken as exact.</p>
        ${a.notes.map((n) => html`<p class="muted">${n}</p>`)}
      </section>` : nothing}
      </div>
    `;
  }

  /** The lines no period matched, each with its d and ± (U = k·u, as in the table above). */
  private unmatchedLines(rec: Reconciliation, u: (value: number, unc: number) => string): TemplateResult | typeof nothing {
    if (!rec.unmatchedLines.length) return nothing;
    const unmatched = new Set(rec.unmatchedLines);
    const lines = this.lines().lines.filter((l) => unmatched.has(l.label));
    return html`<p class="muted unmatched">Unmatched lines (d ± U, nm): ${lines.map((l, i) => html`${i ? '; ' : ''}<span class="num">${spacedLineLabel(l.label)} (d ${u(l.dNm, l.dUncNm)})</span>`)}</p>`;
  }

  /** The micrograph periods against the diffraction lines (side column): every ± is U = k·u, what it contains said under the table. */
  private reconciliationSection(rec: Reconciliation | null, valid: MicrographPeriod[]): TemplateResult | typeof nothing {
    if (!rec) return nothing;
    const k = DEFAULT_COVERAGE_FACTOR;
    const u = (value: number, unc: number) => formatPlusMinus(value, k * unc);
    // what each period's ± contains: its pooled budget's parts, or the combined value it was given
    const contents = valid.map((p) => {
      const b = (p as MicrographPeriod & { budget?: UncertaintyBudget }).budget;
      return b ? budgetContents(b) : 'combined uncertainty as given';
    });
    const same = contents.every((c) => c === contents[0]);
    const dWords = this.analysis ? 'fit, profile shape, zero shift and wavelength (as in the peak table)' : 'none stated (typed lines)';
    return html`<section class="o5">
        <h3>Micrograph periods against diffraction</h3>
        <table class="cross-check">
          <tr><th>period (nm) ± U</th><th>match</th><th>d (nm) ± U</th><th>diff</th><th>z</th></tr>
          ${rec.best.map((b, i) => {
            const p = valid[i];
            if (!b) return html`<tr><td>${u(p.periodNm, p.uncertaintyNm)}</td><td>—</td><td></td><td></td><td></td></tr>`;
            return html`<tr><td>${u(p.periodNm, p.uncertaintyNm)}</td><td class="nowrap">${spacedLineLabel(b.label)}</td><td>${u(b.dNm, b.dUncNm)}</td><td>${(100 * b.relDiff).toFixed(2)} %</td><td class=${Math.abs(b.z) <= 2 ? 'good' : 'warn'}>${b.z.toFixed(2)}</td></tr>`;
          })}
        </table>
        <p class="muted budget-note">± is U = k·u with k = ${k}. Period: ${same ? contents[0] : contents.map((c, i) => `row ${i + 1} ${c}`).join('; ')}. d: ${dWords}. z = (period − d) / √(u²period + u²d), standard uncertainties (k = 1).</p>
        ${this.unmatchedLines(rec, u)}
        ${rec.calibration ? html`<p>Proposed (not applied): multiply nm per pixel by ${f(rec.calibration.factor)} ± ${f(rec.calibration.factorUnc)} (k = 1). ${rec.calibration.reason}</p>` : nothing}
      </section>`;
  }
}

customElements.define('strata-diffraction-panel', StrataDiffractionPanel);
