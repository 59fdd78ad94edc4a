// The electron-diffraction (SAED) side panel: the camera constant of a setting from a ring standard's
// pattern (the image in the viewer), then the ring and spot d-spacings and the angles between
// spots of a sample's pattern recorded at that setting, stored in the library as a diffraction
// set (its lines join the diffraction cross-check). The work runs in the compute worker, on the
// image its session holds: the requests carry the session id, never pixels.
import { LitElement, css, html, nothing } from 'lit';
import type { GreyImage } from '../src/image/grey-image';
import { RING_STANDARDS } from '../src/diffraction/electron/standards';
import { electronDiffractionSet, type CameraSetting } from '../src/diffraction/electron/measure';
import type { PatternMeasurement } from '../src/diffraction/electron/measure';
import { putDiffractionSet, type LibraryDb } from '../src/store/library';
import type { ImageRecord } from '../src/store/records';
import type { ComputeClient } from './compute-client';
import type { ElectronCameraResult } from './compute-protocol';
import { controlStyles, panelStyles } from './styles';
import './export-menu';
import type { ExportTable } from './export-menu';
import { spacedHkl } from '../src/figure/reflection-index';

// 'SAED' (selected-area electron diffraction): a tab label that does not contain the X-ray tab's 'Diffraction'
export const panelLabel = 'SAED';

const sig = (v: number, n = 6) => Number(v.toPrecision(n)).toString();
const pct = (rel: number) => `${sig(100 * rel, 2)} %`;

/**
 * `<strata-electron-panel>`. Properties: `image` (the pattern shown in the viewer), `record` (its library record), `compute`
 * (the compute worker client), `session` (the id of the pattern's session in the compute worker, which
 * holds its pixels), `db` (the local library). Events: `overlay-shapes` {shapes},
 * `status-message` {text, kind}, `library-changed`.
 */
export class StrataElectronPanel extends LitElement {
  static override properties = {
    image: { attribute: false },
    record: { attribute: false },
    compute: { attribute: false },
    session: { attribute: false },
    db: { attribute: false },
    standardId: { state: true },
    cellText: { state: true },
    voltageText: { state: true },
    pixelUmText: { state: true },
    typedK: { state: true },
    calibration: { state: true },
    camera: { state: true },
    what: { state: true },
    measurement: { state: true },
    busy: { state: true },
  };

  static override styles = [
    controlStyles,
    panelStyles,
    css`
      table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; }
      th, td { padding: 2px 4px; text-align: right; border-bottom: 1px solid var(--line); }
      th:first-child, td:first-child { text-align: left; }
      input[type='text'] { width: 9em; }
      select { max-width: 100%; }
      p { margin: 4px 0; }
    `,
  ];

  image: GreyImage | null = null;
  /** The image's library record (its file name names the stored set). */
  record: ImageRecord | null = null;
  compute: ComputeClient | null = null;
  /** The id of the pattern's session in the compute worker (null until the image is open there). */
  session: string | null = null;
  db: LibraryDb | null = null;
  standardId = RING_STANDARDS[0].id;
  /** A cubic cell of the user's: "a±u" nm, with the centring chosen in `cellCentring`. */
  cellText = '';
  voltageText = '200';
  pixelUmText = '';
  /** A camera constant typed as "K±U" (nm⁻¹ per px, standard uncertainty). */
  typedK = '';
  calibration: ElectronCameraResult | null = null;
  /** The setting measurements use: from the calibration or typed. */
  camera: CameraSetting | null = null;
  what: 'both' | 'rings' | 'spots' = 'both';
  measurement: PatternMeasurement | null = null;
  busy = false;

  private emit(type: string, detail: unknown): void {
    this.dispatchEvent(new CustomEvent(type, { detail, bubbles: true, composed: true }));
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.emit('status-message', { text, kind });
  }

  /** The voltage typed, kV, or undefined when empty; throws naming a bad value. */
  private voltage(): number | undefined {
    const t = this.voltageText.trim();
    if (t === '') return undefined;
    const v = Number(t);
    if (!(v >= 1 && v <= 3000)) throw new Error(`the accelerating voltage must be a number of kV from 1 to 3000, got "${t}"`);
    return v;
  }

  /** The session of the pattern in the viewer; throws when none is open. */
  private sessionId(): string {
    if (!this.image || !this.session) throw new Error('open the diffraction pattern in the viewer first');
    return this.session;
  }

  private async calibrate(): Promise<void> {
    if (!this.compute) return;
    this.busy = true;
    try {
      let standard: { id: string } | { aNm: number; uANm: number; centring: 'F' | 'I' | 'P' } = { id: this.standardId };
      if (this.standardId.startsWith('cubic-')) {
        const m = /^\s*([\d.]+)\s*(?:±|\+-)\s*([\d.]+)\s*$/.exec(this.cellText);
        if (!m) throw new Error(`type the lattice parameter as a±u in nm, e.g. 0.4078±0.0004, got "${this.cellText}"`);
        standard = { aNm: Number(m[1]), uANm: Number(m[2]), centring: this.standardId.slice(6) as 'F' | 'I' | 'P' };
      }
      const pixel = this.pixelUmText.trim() === '' ? undefined : Number(this.pixelUmText);
      if (pixel !== undefined && !(pixel > 0)) throw new Error(`the detector pixel size must be a positive number of µm, got "${this.pixelUmText}"`);
      const c = await this.compute.call('cameraConstant', { sessionId: this.sessionId(), standard, voltageKv: this.voltage(), detectorPixelUm: pixel });
      this.calibration = c;
      this.camera = { kInvNmPerPx: c.kInvNmPerPx, relUncertainty: c.relUncertainty, distortion: c.distortion, detail: c.detail };
      this.emit('overlay-shapes', { shapes: [{ kind: 'point', x: c.analysis.geometry.cx, y: c.analysis.geometry.cy, label: 'centre', tone: 'accent' }] });
      this.say(`Camera constant ${sig(c.kInvNmPerPx)} nm⁻¹/px ± ${pct(2 * c.relUncertainty)} (k = 2) from ${c.rings.length} rings: used for the patterns you measure next`);
    } catch (e) {
      this.calibration = null;
      this.say((e as Error).message, 'error');
    } finally {
      this.busy = false;
    }
  }

  private useTyped(): void {
    const m = /^\s*([\d.eE-]+)\s*(?:±|\+-)\s*([\d.eE-]+)\s*$/.exec(this.typedK);
    const k = m ? Number(m[1]) : NaN;
    const u = m ? Number(m[2]) : NaN;
    if (!(k > 0) || !(u >= 0 && u < k)) {
      this.say(`type the camera constant as K±U in nm⁻¹ per px with its standard uncertainty, e.g. 0.0512±0.0001, got "${this.typedK}"`, 'error');
      return;
    }
    this.calibration = null;
    this.camera = { kInvNmPerPx: k, relUncertainty: u / k, distortion: { e1: 0, e2: 0 }, detail: `typed: K = ${m![1]} ± ${m![2]} nm⁻¹/px (standard uncertainty), no distortion correction` };
  }

  private async measure(): Promise<void> {
    if (!this.compute || !this.camera) return;
    this.busy = true;
    try {
      const m = await this.compute.call('electronPattern', { sessionId: this.sessionId(), camera: this.camera, what: this.what });
      this.measurement = m;
      this.emit('overlay-shapes', {
        shapes: [
          { kind: 'point', x: m.geometry.cx, y: m.geometry.cy, label: 'centre', tone: 'accent' },
          ...m.spots.map((s, i) => ({ kind: 'point', x: s.x, y: s.y, label: String(i + 1), tone: 'info' })),
        ],
      });
    } catch (e) {
      this.measurement = null;
      this.say((e as Error).message, 'error');
    } finally {
      this.busy = false;
    }
  }

  private async store(): Promise<void> {
    try {
      if (!this.db) throw new Error('the local library is not available');
      if (!this.measurement) throw new Error('measure a pattern first');
      const kv = this.voltage();
      if (kv === undefined) throw new Error('give the accelerating voltage: the set records its wavelength');
      const name = `${this.record?.fileName ?? 'pattern'} (electron diffraction)`;
      const set = electronDiffractionSet(this.measurement, { id: crypto.randomUUID(), name, createdIso: new Date().toISOString(), fileName: this.record?.fileName ?? null, voltageKv: kv });
      await putDiffractionSet(this.db, set);
      this.emit('library-changed', null);
      this.say(`Stored ${name} with ${this.measurement.rings.length + this.measurement.spots.length} d-spacings in the library`);
    } catch (e) {
      this.say(`Not stored: ${(e as Error).message}`, 'error');
    }
  }

  /** The camera constant's rings for the export menu (K and its parts in the notes and the JSON). */
  private cameraTable(c: ElectronCameraResult): ExportTable {
    return {
      noun: 'ring', name: 'camera-constant',
      header: ['hkl', 'radiusPx', 'standardDNm', 'ringKInvNmPerPx', 'relResidualFromK'],
      rows: c.rings.map((r) => [spacedHkl(r.hkl), r.ring.radiusPx, r.dNm, r.kInvNmPerPx, r.relResidual]),
      notes: [`K = ${sig(c.kInvNmPerPx)} nm^-1 per px, relative standard uncertainty ${sig(c.relUncertainty, 3)} (k = 1): ${c.parts.map((p) => `${p.name} ${sig(p.rel, 3)}`).join(', ')}`,
        `standard: ${c.standard.name} (${c.standard.source})`],
      json: { cameraConstant: c, uncertaintyNote: 'relUncertainty and parts are relative standard uncertainties (k = 1)' },
    };
  }

  /** The pattern's ring and spot d-spacings for the export menu, with U = 2u. */
  private spacingsTable(m: PatternMeasurement): ExportTable {
    const k = 2;
    const rows = [
      ...m.rings.map((r, i) => ['ring', i + 1, r.radiusPx, r.dNm, r.uDNm, k * r.uDNm, k, null, null]),
      ...m.spots.map((sp, i) => ['spot', i + 1, null, sp.dNm, sp.uDNm, k * sp.uDNm, k, sp.directionDeg >= 359.995 ? 0 : sp.directionDeg, sp.fromPair ? 'pair' : 'one spot']),
    ];
    return {
      noun: 'd-spacing', name: 'd-spacings',
      header: ['kind', 'number', 'radiusPx', 'dNm', 'uDNm', 'expandedDNm', 'coverageFactorK', 'directionDeg', 'from'],
      rows,
      notes: [`camera: ${this.camera?.detail ?? 'unknown'}`, `u: standard uncertainty of d (radius or spot positions and the camera constant); expanded with k = ${k}`],
      json: { camera: this.camera, coverageFactorK: k, measurement: m },
    };
  }

  private renderCalibration(c: ElectronCameraResult) {
    return html`
      <p class="num">K = ${sig(c.kInvNmPerPx)} nm⁻¹ per px ± ${pct(2 * c.relUncertainty)}</p>
      <p class="muted">± is U = 2u (k = 2); it contains ${c.parts.map((p) => `${p.name} ${pct(p.rel)}`).join(', ')} (each k = 1).</p>
      <p class="num">λL = ${sig(c.lambdaLNmPx)} nm·px${c.cameraLengthPx !== null ? html`; L = ${sig(c.cameraLengthPx, 5)} px${c.cameraLengthMm !== null ? ` = ${c.cameraLengthMm.toFixed(1)} mm` : ''} at ${c.voltageKv} kV (λ = ${sig((c.wavelengthNm ?? 0) * 1000, 5)} pm)` : ''}</p>
      <p class="num">ellipticity ${(100 * c.ellipticity).toFixed(2)} ± ${(200 * c.uEllipticity).toFixed(2)} %, major axis ${c.majorAxisDeg.toFixed(1)}°; centre ${c.analysis.geometry.cx.toFixed(2)}, ${c.analysis.geometry.cy.toFixed(2)} px</p>
      <table>
        <thead><tr><th>hkl</th><th>radius (px)</th><th>d (nm)</th><th>ring's K − K</th></tr></thead>
        <tbody>${c.rings.map((r) => html`<tr><td>${spacedHkl(r.hkl)}</td><td>${r.ring.radiusPx.toFixed(2)}</td><td>${r.dNm.toFixed(5)}</td><td>${(100 * r.relResidual).toFixed(3)} %</td></tr>`)}</tbody>
      </table>
      ${c.unindexedRadiiPx.length ? html`<p class="muted">Not indexed: rings at ${c.unindexedRadiiPx.map((r) => r.toFixed(1)).join(', ')} px.</p>` : nothing}
      ${c.standard.source.includes('from memory') ? html`<p class="muted">The standard's lattice parameter is a value from memory; its allowance is in the uncertainty.</p>` : nothing}
      <strata-export-menu class="camera-export" .table=${this.cameraTable(c)} .report=${false} .fileName=${this.record?.fileName ?? 'pattern'}></strata-export-menu>
    `;
  }

  private renderMeasurement(m: PatternMeasurement) {
    return html`
      <p class="muted">d ± U: k = 2, contains the ${m.spots.length ? 'radius or spot positions' : 'radius'} and the camera constant.</p>
      ${m.rings.length
        ? html`<table>
            <thead><tr><th>ring</th><th>radius (px)</th><th>d (nm)</th><th>± U (nm)</th></tr></thead>
            <tbody>${m.rings.map((r, i) => html`<tr><td>${i + 1}</td><td>${r.radiusPx.toFixed(2)}</td><td>${r.dNm.toFixed(5)}</td><td>${(2 * r.uDNm).toFixed(5)}</td></tr>`)}</tbody>
          </table>`
        : nothing}
      ${m.spots.length
        ? html`<table>
            <thead><tr><th>spot</th><th>d (nm)</th><th>± U (nm)</th><th>direction (°)</th><th>from</th></tr></thead>
            <tbody>${m.spots.map((s, i) => html`<tr><td>${i + 1}</td><td>${s.dNm.toFixed(5)}</td><td>${(2 * s.uDNm).toFixed(5)}</td><td>${(s.directionDeg >= 359.995 ? 0 : s.directionDeg).toFixed(2)}</td><td>${s.fromPair ? 'pair' : 'one spot'}</td></tr>`)}</tbody>
          </table>
          ${m.angles.length ? html`<p class="num">Angles (k = 2): ${m.angles.slice(0, 12).map((a) => `${a.i + 1}–${a.j + 1} ${a.angleDeg.toFixed(2)} ± ${(2 * a.uAngleDeg).toFixed(2)}°`).join('; ')}</p>` : nothing}`
        : nothing}
      ${m.notes.map((n) => html`<p class="muted">${n}</p>`)}
      <div class="row"><button ?disabled=${!this.db} @click=${this.store}>Store in the library</button></div>
      <strata-export-menu class="spacings-export" .table=${this.spacingsTable(m)} .report=${false} .fileName=${this.record?.fileName ?? 'pattern'}></strata-export-menu>
    `;
  }

  protected override render() {
    if (!this.image) return html`<p class="muted">Open a diffraction pattern (rings or spots) to calibrate the camera constant or measure d-spacings.</p>`;
    const text = (v: string, set: (s: string) => void, label: string) => html`<label>${label} <input type="text" .value=${v} @input=${(e: Event) => set((e.target as HTMLInputElement).value)} /></label>`;
    return html`
      <section>
        <h3>Camera constant from a ring standard</h3>
        <div class="row">
          <select aria-label="Ring standard" @change=${(e: Event) => (this.standardId = (e.target as HTMLSelectElement).value)}>
            ${RING_STANDARDS.map((s) => html`<option value=${s.id} ?selected=${s.id === this.standardId}>${s.name}: a = ${s.aNm} ± ${s.uANm} nm${s.status === 'from memory' ? ' (from memory)' : ''}</option>`)}
            ${(['F', 'I', 'P'] as const).map((c) => html`<option value=${`cubic-${c}`} ?selected=${this.standardId === `cubic-${c}`}>a cubic ${c} cell you enter</option>`)}
          </select>
          ${this.standardId.startsWith('cubic-') ? text(this.cellText, (v) => (this.cellText = v), 'a ± u (nm)') : nothing}
        </div>
        <div class="row">${text(this.voltageText, (v) => (this.voltageText = v), 'Voltage (kV)')}${text(this.pixelUmText, (v) => (this.pixelUmText = v), 'Detector pixel (µm)')}</div>
        <div class="row"><button ?disabled=${this.busy || !this.compute || !this.session} @click=${() => this.calibrate()}>Calibrate on this pattern</button></div>
        ${this.calibration ? this.renderCalibration(this.calibration) : html`<p class="muted">${(() => { const s = RING_STANDARDS.find((q) => q.id === this.standardId); return s ? `${s.source}; ${s.uncertaintyBasis}` : 'rings indexed by the extinction rule of the centring'; })()}</p>`}
        <div class="row">${text(this.typedK, (v) => (this.typedK = v), 'or K ± u (nm⁻¹/px)')}<button @click=${this.useTyped}>Use</button></div>
      </section>
      <section>
        <h3>d-spacings of this pattern</h3>
        ${this.camera ? html`<p class="muted">Camera: ${this.camera.detail}</p>` : html`<p class="muted">Calibrate the camera constant first (or type it).</p>`}
        <div class="row">
          <select aria-label="What to measure" @change=${(e: Event) => (this.what = (e.target as HTMLSelectElement).value as 'both' | 'rings' | 'spots')}>
            <option value="both" ?selected=${this.what === 'both'}>rings and spots</option>
            <option value="rings" ?selected=${this.what === 'rings'}>rings</option>
            <option value="spots" ?selected=${this.what === 'spots'}>spots</option>
          </select>
          <button ?disabled=${this.busy || !this.camera || !this.compute || !this.session} @click=${() => this.measure()}>Measure this pattern</button>
        </div>
        ${this.measurement ? this.renderMeasurement(this.measurement) : nothing}
      </section>
      <p class="muted">These values inform research; they do not replace an accredited calibration.</p>
    `;
  }
}

customElements.define('strata-electron-panel', StrataElectronPanel);
