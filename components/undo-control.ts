/**
 * `<strata-undo-control>`: Undo and Redo buttons that say what they would undo or redo.
 * Properties: `undoLabel`, `redoLabel` (the step's words; empty: nothing to undo or redo).
 * Events: `undo`, `redo` (the shell moves the image's history and restores the state).
 * Keys (handled by the shell on the page): Ctrl+Z undo, Ctrl+Shift+Z or Ctrl+Y redo.
 */
import { LitElement, css, html } from 'lit';
import { controlStyles } from './styles';

export class StrataUndoControl extends LitElement {
  static override properties = {
    undoLabel: { type: String, attribute: 'undo-label' },
    redoLabel: { type: String, attribute: 'redo-label' },
  };

  undoLabel = '';
  redoLabel = '';

  static override styles = [controlStyles, css`
    :host { display: inline-flex; gap: 4px; }
  `];

  override render() {
    return html`
      <button class="undo" ?disabled=${!this.undoLabel} @click=${() => this.dispatchEvent(new CustomEvent('undo', { bubbles: true, composed: true }))}
        title=${this.undoLabel ? `Undo: ${this.undoLabel} (Ctrl+Z)` : 'Nothing to undo'} aria-label=${this.undoLabel ? `Undo ${this.undoLabel}` : 'Undo'}>↶ Undo</button>
      <button class="redo" ?disabled=${!this.redoLabel} @click=${() => this.dispatchEvent(new CustomEvent('redo', { bubbles: true, composed: true }))}
        title=${this.redoLabel ? `Redo: ${this.redoLabel} (Ctrl+Shift+Z)` : 'Nothing to redo'} aria-label=${this.redoLabel ? `Redo ${this.redoLabel}` : 'Redo'}>↷ Redo</button>`;
  }
}

customElements.define('strata-undo-control', StrataUndoControl);

declare global {
  interface HTMLElementTagNameMap {
    'strata-undo-control': StrataUndoControl;
  }
}
