import { LitElement, css, html } from 'lit';

/** The application shell: header, work area and status line. */
export class StrataApp extends LitElement {
  static override styles = css`
    :host { display: flex; flex-direction: column; height: 100vh; }
    header { display: flex; align-items: center; gap: 12px; padding: 8px 14px; background: var(--panel); border-bottom: 1px solid var(--line); }
    h1 { font-size: 16px; margin: 0; letter-spacing: 0.04em; }
    main { flex: 1; display: grid; place-items: center; color: var(--muted); }
  `;

  override connectedCallback(): void {
    super.connectedCallback();
    if ('serviceWorker' in navigator && location.protocol !== 'file:') {
      navigator.serviceWorker.register('sw.js').catch((e) => console.warn('service worker not registered', e));
    }
  }

  override render() {
    return html`
      <header><h1>Stratameter</h1></header>
      <main><p>Open a micrograph to begin.</p></main>
    `;
  }
}

customElements.define('strata-app', StrataApp);
