// The calibration side panel: set the image's pixel size from its burned-in scale bar (found
// and read offline), two points on a feature of known length, a lattice standard, or a typed
// value; shows a warning when the new value disagrees with the one in use.
import { LitElement, css, html, nothing } from 'lit';
import type { Calibration, GreyImage } from '../src/image/grey-image';
import type { ImageRecord } from '../src/store/records';
import { findScaleBar, type ScaleBar } from '../src/calibration/scale-bar';
import { LABEL_CHARACTERS, parseScaleLabel, scaleBarCalibration } from '../src/calibration/label';
import { labelQuestion } from '../src/calibration/label-read';
import { readLabel } from '../src/calibration/label-read';
import { manualCalibration, typedCalibration } from '../src/calibration/manual';
import { calibrateFromStandard, LATTICE_STANDARDS, standardPeriodFromSpots, type StandardPeriod } from '../src/calibration/standards';
import { compareCalibrations } from '../src/calibration/compare';
import type { TextReader } from '../src/calibration/ocr';
import { makeProfile, matchProfile } from '../src/calibration/profiles';
import { listCalibrationProfiles, putCalibrationProfile, type LibraryDb } from '../src/store/library';
import { controlStyles, panelStyles } from './styles';
import './export-menu';
import type { ExportTable } from './export-menu';
import type { ComputeClient } from './compute-client';
import type { SpectrumView } from './compute-protocol';
import { calibrateTwoAxis, latticeSpotsOf, PROJECTED_LATTICES, userLattice } from '../src/calibration/affine';

export const panelLabel = 'Calibration';

interface LineDetail {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  widthPx: number;
}

const sig = (v: number, n = 5) => Number(v.toPrecision(n)).toString();
const pct = (v: number) => `${sig(100 * v, 2)} %`;
/** The second axis and shear of a two-axis calibration, or nothing. */
const axes = (c: Calibration) =>
  c.nmPerPxY !== undefined || c.shearDeg !== undefined
    ? html`<p class="num">along x ${sig(c.nmPerPx)}, along y ${sig(c.nmPerPxY ?? c.nmPerPx)} nm/px (stretch ${(100 * ((c.nmPerPxY ?? c.nmPerPx) / c.nmPerPx - 1)).toFixed(2)} %), shear ${(c.shearDeg ?? 0).toFixed(2)}°</p>`
    : nothing;

/**
 * `<strata-calibration-panel>`. Properties: `image` (GreyImage | null), `line` (the last line
 * drawn in the viewer, image px, or null), `rect` (the last region drawn), `compute` and `session`
 * (the compute worker and the id of the image's session there: a drawn region's spectrum is
 * computed on the image the worker holds, from the region alone, never a copy of pixels), `db`
 * (the local library, for instrument profiles). Events: `calibration-changed` {calibration},
 * `overlay-shapes` {shapes}, `status-message` {text, kind}.
 */
export class StrataCalibrationPanel extends LitElement {
  static override properties = {
    image: { attribute: false },
    line: { attribute: false },
    rect: { attribute: false },
    compute: { attribute: false },
    session: { attribute: false },
    db: { attribute: false },
    instrument: { state: true },
    magnification: { state: true },
    camera: { state: true },
    binning: { state: true },
    bar: { state: true },
    labelText: { state: true },
    ocrNote: { state: true },
    busy: { state: true },
    candidate: { state: true },
    record: { attribute: false },
    knownNm: { state: true },
    standardId: { state: true },
    customNm: { state: true },
    customUNm: { state: true },
    periodPx: { state: true },
    periodUPx: { state: true },
    typedNmPerPx: { state: true },
    typedRelPct: { state: true },
    zoneId: { state: true },
    cellText: { state: true },
    twoAxis: { state: true },
  };

  static override styles = [
    controlStyles,
    panelStyles,
    css`
      .warn { color: #f0b45a; }
      input[type='text'] { width: 8em; }
      select { max-width: 100%; }
      p { margin: 4px 0; }
    `,
  ];

  image: GreyImage | null = null;
  line: LineDetail | null = null;
  /** The region last drawn on the viewer (image px), for measuring a lattice standard. */
  rect: { x: number; y: number; width: number; height: number } | null = null;
  /** The compute worker client the shell gives every panel. */
  compute: ComputeClient | null = null;
  /** The id of the image's session in the compute worker (null until the image is open there). */
  session: string | null = null;
  db: LibraryDb | null = null;
  instrument = '';
  magnification = '';
  camera = '';
  binning = '1';
  bar: ScaleBar | null = null;
  labelText = '';
  ocrNote = '';
  busy = false;
  candidate: Calibration | null = null;
  /** The image's library record (for the export's file name). */
  record: ImageRecord | null = null;
  knownNm = '';
  standardId = LATTICE_STANDARDS[0].id;
  /** The spacing typed for the 'custom' standard, nm. */
  customNm = '';
  /** Its standard uncertainty, nm (required: a spacing without one cannot calibrate honestly). */
  customUNm = '';
  /** The spot family measured in the drawn region, while the period fields still show it. */
  private family: StandardPeriod | null = null;
  periodPx = '';
  periodUPx = '';
  typedNmPerPx = '';
  typedRelPct = '5';
  /** The zone-axis lattice for a two-axis calibration, or 'user' for a cell typed in cellText. */
  zoneId = PROJECTED_LATTICES[0].id;
  /** A user cell: "d1±u1, d2±u2, angle" (nm, nm, degrees between the plane normals). */
  cellText = '';
  /** The last two-axis fit, shown with its distortion figures. */
  twoAxis: ReturnType<typeof calibrateTwoAxis> | null = null;

  private reader: Promise<TextReader> | null = null;
  private shownImage: GreyImage | null = null;

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    const r = this.reader;
    this.reader = null;
    void r?.then((x) => x.close()).catch(() => undefined);
  }

  protected override willUpdate(): void {
    // a new image: forget the previous one's bar and candidate (the calibration itself stays on the image)
    if (this.image !== this.shownImage && (this.image?.data !== this.shownImage?.data)) {
      this.bar = null;
      this.labelText = '';
      this.ocrNote = '';
      this.candidate = null;
    }
    this.shownImage = this.image;
  }

  private emit(type: string, detail: unknown): void {
    this.dispatchEvent(new CustomEvent(type, { detail, bubbles: true, composed: true }));
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.emit('status-message', { text, kind });
  }

  /**
   * Finds the bar (over the whole image, or only inside the drawn region when `inRegion`, with the
   * contrast checks relaxed there for a bar drawn on a busy picture) and reads its label.
   */
  private async findBar(inRegion = false): Promise<void> {
    const image = this.image;
    if (!image) return;
    this.busy = true;
    try {
      const r = this.rect;
      const box = inRegion && r ? ([Math.max(0, Math.round(r.x)), Math.max(0, Math.round(r.y)), Math.round(r.width), Math.round(r.height)] as [number, number, number, number]) : undefined;
      const bar = findScaleBar(image, box ? { searchBox: box } : {});
      this.bar = bar;
      this.candidate = null;
      if (!bar) {
        this.ocrNote = box
          ? 'No scale bar in the drawn region: draw it snugly around the bar and its label.'
          : 'No scale bar found. Draw a region around it with the Region tool and search there, or use two points on a feature of known length or a standard.';
        this.emit('overlay-shapes', { shapes: [] });
        return;
      }
      const shapes: unknown[] = [{ kind: 'line', x0: bar.x0, y0: bar.y0, x1: bar.x1, y1: bar.y1, widthPx: bar.thicknessPx, label: `${sig(bar.lengthPx)} px`, tone: 'accent' }];
      if (bar.labelBox) {
        const [x, y, width, height] = bar.labelBox;
        shapes.push({ kind: 'rect', x, y, width, height, label: 'label', tone: 'info' });
      }
      if (bar.stripBox) {
        const [x, y, width, height] = bar.stripBox;
        shapes.push({ kind: 'rect', x, y, width, height, label: 'information strip', tone: 'warn' });
      }
      this.emit('overlay-shapes', { shapes });
      if (!bar.labelBox) {
        this.ocrNote = 'No label found next to the bar: type it.';
        return;
      }
      this.ocrNote = 'Reading the label…';
      if (!this.reader) {
        const { createTextReader } = await import('../src/calibration/ocr');
        this.reader = createTextReader({ whitelist: LABEL_CHARACTERS });
      }
      const reader = await this.reader;
      // two readers (OCR over several crops and scales, and the glyph reader) must agree on a
      // round value; otherwise the user is asked, with what was read and why
      const reading = await readLabel(image, bar, reader);
      if (reading.status === 'read' && reading.label) {
        this.labelText = reading.label.text;
        const conf = Math.max(0, ...reading.attempts.filter((a) => a.reader === 'ocr' && a.nm === reading.label!.nm).map((a) => a.confidence));
        this.ocrNote = `Read "${reading.label.text}" by both readers (OCR confidence ${conf.toFixed(2)}). Check it against the image.`;
        this.candidate = scaleBarCalibration(bar, reading.label.nm);
      } else {
        this.labelText = '';
        this.candidate = null;
        this.ocrNote = labelQuestion(reading);
      }
    } catch (e) {
      this.ocrNote = `Label reading failed: ${(e as Error).message}. Type the label.`;
    } finally {
      this.busy = false;
    }
  }

  private onLabelInput(e: Event): void {
    this.labelText = (e.target as HTMLInputElement).value;
    const p = parseScaleLabel(this.labelText);
    this.candidate = p && this.bar ? scaleBarCalibration(this.bar, p.nm) : null;
  }

  private fromLine(): void {
    try {
      if (!this.line) throw new Error('draw a line over a feature of known length first');
      const lengthPx = Math.hypot(this.line.x1 - this.line.x0, this.line.y1 - this.line.y0);
      this.candidate = manualCalibration({ lengthPx, knownLengthNm: Number(this.knownNm), note: 'line drawn on the image' });
    } catch (e) {
      this.say((e as Error).message, 'error');
    }
  }

  /**
   * The power spectrum of a drawn region (rounded to whole pixels) of the session's image, in the
   * compute worker: the request carries the session id and the region, never pixels.
   */
  private regionSpectrum(r: { x: number; y: number; width: number; height: number }): Promise<SpectrumView> {
    if (!this.compute || !this.session) throw new Error('the image is not open in the compute worker yet');
    return this.compute.call('spectrum', {
      sessionId: this.session,
      rect: { x: Math.round(r.x), y: Math.round(r.y), width: Math.round(r.width), height: Math.round(r.height) },
      settings: { window: 'hann', tukeyAlpha: 0.3, alpha: 0.001 },
      displayPx: 64,
      prepareSpots: false,
    });
  }

  /**
   * Measures the strongest periodicity in the drawn region (power spectrum in the compute worker)
   * and fills in the standard's period in px with its uncertainty.
   */
  private async measureStandardRegion(): Promise<void> {
    const r = this.rect;
    if (!r || !this.image || !this.compute || !this.session) return;
    this.busy = true;
    try {
      const res = await this.regionSpectrum(r);
      const family = standardPeriodFromSpots(res.spots.filter((t) => t.flags.length === 0));
      if (!family) {
        this.say('No significant periodicity in the drawn region: choose a region on the standard\'s fringes.', 'error');
        return;
      }
      this.periodPx = family.periodPx.toPrecision(7);
      this.periodUPx = Math.hypot(family.statisticalPx, family.spreadPx).toPrecision(3);
      this.family = family;
      this.say(`Period of the strongest spot's family in the region: ${this.periodPx} ± ${this.periodUPx} px from ${family.spots} spot${family.spots === 1 ? '' : 's'}${family.spreadPx > 0 ? ` (they differ by more than their precision: spread ${family.spreadPx.toPrecision(2)} px)` : ''}. Check that it is the reflection chosen above.`, 'info');
      this.fromStandard();
    } catch (e) {
      this.say((e as Error).message, 'error');
    } finally {
      this.busy = false;
    }
  }

  private fromStandard(): void {
    try {
      const p = Number(this.periodPx);
      const u = this.periodUPx.trim() === '' ? 0.01 * p : Number(this.periodUPx);
      const standard = this.standardId === 'custom'
        ? { dNm: Number(this.customNm), uncertaintyNm: Number(this.customUNm), name: `spacing ${this.customNm} ± ${this.customUNm} nm` }
        : this.standardId;
      if (this.standardId === 'custom' && !(Number(this.customNm) > 0)) throw new Error(`type the known spacing in nm, got "${this.customNm}"`);
      if (this.standardId === 'custom' && (this.customUNm.trim() === '' || !(Number(this.customUNm) >= 0))) throw new Error(`type the spacing's standard uncertainty in nm (its ±), got "${this.customUNm}"`);
      const f = this.family;
      const measured = f && f.periodPx.toPrecision(7) === this.periodPx && Math.hypot(f.statisticalPx, f.spreadPx).toPrecision(3) === this.periodUPx.trim()
        ? f
        : { periodPx: p, uncertaintyPx: u };
      this.candidate = calibrateFromStandard(measured, standard);
    } catch (e) {
      this.say((e as Error).message, 'error');
    }
  }

  /**
   * Measures the drawn region's spots (power spectrum in the compute worker) and fits the two-axis
   * pixel metric to the chosen zone-axis lattice.
   */
  private async measureTwoAxis(): Promise<void> {
    const r = this.rect;
    if (!r || !this.image || !this.compute || !this.session) return;
    this.busy = true;
    try {
      let lattice: string | ReturnType<typeof userLattice> = this.zoneId;
      if (this.zoneId === 'user') {
        const m = /^\s*([\d.]+)\s*(?:±|\+-)\s*([\d.]+)\s*,\s*([\d.]+)\s*(?:±|\+-)\s*([\d.]+)\s*,\s*([\d.]+)\s*$/.exec(this.cellText);
        if (!m) throw new Error(`type the cell as d1±u1, d2±u2, angle (nm, nm, degrees), e.g. 0.3135±0.0003, 0.3135±0.0003, 70.53; got "${this.cellText}"`);
        lattice = userLattice(Number(m[1]), Number(m[2]), Number(m[3]), Number(m[4]), Number(m[5]));
      }
      const res = await this.regionSpectrum(r);
      const fit = calibrateTwoAxis(latticeSpotsOf(res.measurement.periodicities), lattice);
      this.twoAxis = fit;
      this.candidate = fit.calibration;
    } catch (e) {
      this.twoAxis = null;
      this.say((e as Error).message, 'error');
    } finally {
      this.busy = false;
    }
  }

  private fromTyped(): void {
    try {
      this.candidate = typedCalibration(Number(this.typedNmPerPx), Number(this.typedRelPct) / 100);
    } catch (e) {
      this.say((e as Error).message, 'error');
    }
  }

  private setting() {
    const magnification = Number(this.magnification);
    const binning = Number(this.binning || '1');
    return { instrument: this.instrument, magnification, camera: this.camera, binning };
  }

  private async saveProfile(): Promise<void> {
    try {
      if (!this.db) throw new Error('the local library is not available');
      const cal = this.image?.calibration;
      if (!cal) throw new Error('set a pixel size for this image first');
      const profile = makeProfile({ id: crypto.randomUUID(), setting: this.setting(), calibration: cal, createdIso: new Date().toISOString() });
      await putCalibrationProfile(this.db, profile);
      this.say(`Profile saved: ${profile.name}`);
    } catch (e) {
      this.say((e as Error).message, 'error');
    }
  }

  private async useProfile(): Promise<void> {
    try {
      if (!this.db) throw new Error('the local library is not available');
      const m = matchProfile(await listCalibrationProfiles(this.db), this.setting());
      if (!m) throw new Error('no saved profile for this instrument, camera and magnification');
      this.candidate = m.calibration;
    } catch (e) {
      this.say((e as Error).message, 'error');
    }
  }

  /** The calibration in use for the export menu: the pixel size (and second axis, shear) and each uncertainty part. */
  private calibrationTable(c: Calibration): ExportTable {
    const header = ['quantity', 'value', 'unit', 'relativeStandardUncertaintyK1', 'type', 'source'];
    const rows: (string | number | null)[][] = [['nmPerPx', c.nmPerPx, 'nm/px', c.relUncertainty, null, c.source]];
    if (c.nmPerPxY !== undefined) rows.push(['nmPerPxY', c.nmPerPxY, 'nm/px', null, null, c.source]);
    if (c.shearDeg !== undefined) rows.push(['shearDeg', c.shearDeg, 'deg', null, null, c.source]);
    for (const part of c.parts ?? []) rows.push([`part: ${part.name}`, null, null, part.rel, part.type, c.source]);
    return {
      noun: 'row', name: 'calibration', header, rows,
      notes: [`${c.detail}`, 'relative standard uncertainties (k = 1); the pixel size\'s is the root-sum-square of its parts. Results inform research; they do not replace an accredited calibration.'],
      json: { calibration: c, uncertaintyNote: 'relUncertainty and parts[].rel are relative standard uncertainties (k = 1)' },
    };
  }

  private apply(): void {
    if (!this.candidate) return;
    this.emit('calibration-changed', { calibration: this.candidate });
    this.say(`Pixel size set: ${sig(this.candidate.nmPerPx)} nm/px ± ${pct(this.candidate.relUncertainty)} (${this.candidate.source})`);
  }

  protected override render() {
    const img = this.image;
    if (!img) return html`<p class="muted">Open an image to calibrate it.</p>`;
    const cur = img.calibration;
    const cand = this.candidate;
    const cmp = cur && cand ? compareCalibrations(cur, cand) : null;
    const input = (v: string, set: (s: string) => void, label: string, type = 'number') =>
      html`<label>${label} <input type=${type} .value=${v} @input=${(e: Event) => set((e.target as HTMLInputElement).value)} /></label>`;
    return html`
      <section>
        <h3>In use</h3>
        ${cur
          ? html`<p class="num">${sig(cur.nmPerPx)} nm per pixel ± ${pct(cur.relUncertainty)} <span class="muted">(${cur.source})</span></p>${axes(cur)}
              <p class="muted">${cur.detail}</p>
              <strata-export-menu .table=${this.calibrationTable(cur)} .report=${false} .fileName=${this.record?.fileName ?? ''}></strata-export-menu>`
          : html`<p class="muted">None: lengths are in pixels until you set one.</p>`}
      </section>
      <section>
        <h3>Scale bar</h3>
        <div class="row"><button ?disabled=${this.busy} @click=${() => this.findBar()}>Find and read the scale bar</button>
          <button ?disabled=${this.busy || !this.rect} @click=${() => this.findBar(true)} title="Draw a region around the bar and its label with the Region tool: for a bar drawn on a busy picture">Search the drawn region</button></div>
        ${this.bar
          ? html`<p class="num">Bar ${sig(this.bar.lengthPx)} ± ${sig(this.bar.uncertaintyPx, 2)} px (${this.bar.polarity})</p>
              <div class="row"><label>Label <input type="text" .value=${this.labelText} placeholder="e.g. 200 nm" @input=${this.onLabelInput} /></label></div>`
          : nothing}
        ${this.ocrNote ? html`<p class="muted">${this.ocrNote}</p>` : nothing}
      </section>
      <section>
        <h3>Feature of known length</h3>
        <p class="muted">${this.line ? `Line drawn: ${sig(Math.hypot(this.line.x1 - this.line.x0, this.line.y1 - this.line.y0))} px` : 'Draw a line along the feature in the viewer.'}</p>
        <div class="row">${input(this.knownNm, (s) => (this.knownNm = s), 'Length (nm)')}<button ?disabled=${!this.line} @click=${this.fromLine}>Compute</button></div>
      </section>
      <section>
        <h3>Lattice standard</h3>
        <div class="row">
          <select aria-label="Standard" @change=${(e: Event) => (this.standardId = (e.target as HTMLSelectElement).value)}>
            ${LATTICE_STANDARDS.map((s) => html`<option value=${s.id} ?selected=${s.id === this.standardId}>${s.name}: ${sig(s.dNm)} ± ${sig(s.uncertaintyNm, 2)} nm${s.status === 'from memory' ? ' (from memory)' : ''}</option>`)}
            <option value="custom" ?selected=${this.standardId === 'custom'}>another spacing (type it)</option>
          </select>
          ${this.standardId === 'custom' ? html`${input(this.customNm, (v) => (this.customNm = v), 'Known spacing (nm)')}${input(this.customUNm, (v) => (this.customUNm = v), '± (nm, k = 1)')}` : nothing}
        </div>
        <div class="row">${input(this.periodPx, (s) => (this.periodPx = s), 'Period (px)')}${input(this.periodUPx, (s) => (this.periodUPx = s), '± (px)')}<button @click=${this.fromStandard}>Compute</button></div>
        <div class="row"><button ?disabled=${!this.rect || !this.compute || !this.session || this.busy} @click=${() => this.measureStandardRegion()}
          title="Draw a region on the standard's fringes with the Region tool, then measure its strongest period here">Measure the drawn region</button></div>
        <p class="muted">${this.standardId === 'custom' ? 'a spacing you know for this specimen, e.g. from its diffraction pattern, with its standard uncertainty' : (() => { const l = LATTICE_STANDARDS.find((s) => s.id === this.standardId); return l ? `${l.source}; uncertainty: ${l.uncertaintyBasis}` : ''; })()}</p>
      </section>
      <section>
        <h3>Two axes (scan distortion)</h3>
        <div class="row">
          <select aria-label="Zone-axis lattice" @change=${(e: Event) => (this.zoneId = (e.target as HTMLSelectElement).value)}>
            ${PROJECTED_LATTICES.map((l) => html`<option value=${l.id} ?selected=${l.id === this.zoneId}>${l.name}: ${l.label1} ${sig(l.d1Nm)} nm, ${l.label2} ${sig(l.d2Nm)} nm, ${sig(l.angleDeg, 4)}°${l.status === 'from memory' ? ' (from memory)' : ''}</option>`)}
            <option value="user" ?selected=${this.zoneId === 'user'}>a cell you enter</option>
          </select>
          ${this.zoneId === 'user' ? input(this.cellText, (v) => (this.cellText = v), 'd1±u1, d2±u2, angle', 'text') : nothing}
        </div>
        <div class="row"><button ?disabled=${!this.rect || !this.compute || !this.session || this.busy} @click=${() => this.measureTwoAxis()}
          title="Draw a region on the lattice image with the Region tool: two or more non-parallel spots of the lattice are fitted">Measure the drawn region (two axes)</button></div>
        ${this.twoAxis
          ? html`<p class="num">x ${sig(this.twoAxis.nmPerPxX)} ± ${sig(2 * this.twoAxis.uNmPerPxX, 2)} nm/px, y ${sig(this.twoAxis.nmPerPxY)} ± ${sig(2 * this.twoAxis.uNmPerPxY, 2)} nm/px</p>
              <p class="num">stretch (y/x − 1) ${this.twoAxis.stretchPct.toFixed(3)} ± ${(2 * this.twoAxis.uStretchPct).toFixed(3)} %, shear ${this.twoAxis.shearDeg.toFixed(3)} ± ${(2 * this.twoAxis.uShearDeg).toFixed(3)}°</p>
              <p class="muted">± is U = 2u (k = 2) from the spots' periods and directions; ${this.twoAxis.indexed.length} spots indexed, Birge ratio ${this.twoAxis.birgeRatio.toFixed(2)}. Published scan distortions: 0.4–3.6 % stretch, up to about 1° shear.</p>`
          : html`<p class="muted">${(() => { const l = PROJECTED_LATTICES.find((q) => q.id === this.zoneId); return l ? `${l.source}; ${l.derivation}` : 'a zone-axis cell of your own: the two basis spacings with their standard uncertainties and the angle between their plane normals'; })()}</p>`}
      </section>
      <section>
        <h3>Typed value</h3>
        <div class="row">${input(this.typedNmPerPx, (s) => (this.typedNmPerPx = s), 'nm/px')}${input(this.typedRelPct, (s) => (this.typedRelPct = s), '± %')}<button @click=${this.fromTyped}>Compute</button></div>
      </section>
      <section>
        <h3>Instrument profile</h3>
        <div class="row">
          ${input(this.instrument, (v) => (this.instrument = v), 'Instrument', 'text')}
          ${input(this.magnification, (v) => (this.magnification = v), 'Magnification')}
        </div>
        <div class="row">
          ${input(this.camera, (v) => (this.camera = v), 'Camera', 'text')}
          ${input(this.binning, (v) => (this.binning = v), 'Binning')}
        </div>
        <div class="row">
          <button ?disabled=${!this.db || !cur} @click=${this.saveProfile}>Save the pixel size in use</button>
          <button ?disabled=${!this.db} @click=${this.useProfile}>Use the saved profile</button>
        </div>
      </section>
      ${cand
        ? html`<section>
            <h3>New pixel size</h3>
            <p class="num">${sig(cand.nmPerPx)} nm per pixel ± ${pct(cand.relUncertainty)} <span class="muted">(${cand.source})</span></p>${axes(cand)}
            <p class="muted">${cand.detail}</p>
            ${cmp?.warning ? html`<p class="warn" role="alert">${cmp.warning}</p>` : nothing}
            <div class="row"><button class="on" @click=${this.apply}>Use for this image</button></div>
          </section>`
        : nothing}
    `;
  }
}

customElements.define('strata-calibration-panel', StrataCalibrationPanel);
