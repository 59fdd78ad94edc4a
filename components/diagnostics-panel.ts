import { LitElement, css, html, nothing, type PropertyValues } from 'lit';
import type { LibraryDb } from '../src/store/schema';
import {
  clearDiagnostics,
  describeError,
  diagnosticsJson,
  listDiagnostics,
  logDiagnostic,
  type DiagnosticEntry,
  type NewDiagnostic,
} from '../src/store/diagnostics';
import { controlStyles, listPanelStyles } from './styles';
import { download } from './download';

export const panelLabel = 'Diagnostics';

/** Program version written into an exported log. */
const APP_VERSION = '0.1.0';

/** Sent on window when an entry was written, so an open panel can show it. */
const LOGGED_EVENT = 'strata-diagnostic-logged';

/** The page's error log: what watchErrors returns. */
export interface ErrorLog {
  /** Logs an entry (kept in memory until the library is open). */
  log(entry: NewDiagnostic): void;
  /** Stops listening for window errors. */
  dispose(): void;
}

/**
 * Logs uncaught errors and unhandled promise rejections of the page into the local diagnostics
 * store, and gives a `log` function for the rest (error messages shown, worker failures).
 * Entries that arrive before the library is open wait in memory and are written when it is.
 *
 * @param getDb the open library, or null while it is opening (or could not be opened)
 */
export function watchErrors(getDb: () => LibraryDb | null): ErrorLog {
  const pending: NewDiagnostic[] = [];
  let writing = false;
  const flush = async () => {
    const db = getDb();
    if (!db || writing) return;
    writing = true;
    try {
      while (pending.length) {
        const e = pending.shift()!;
        // Never log a failure of the log itself: that could loop.
        await logDiagnostic(db, e).catch(() => undefined);
      }
      window.dispatchEvent(new Event(LOGGED_EVENT));
    } finally {
      writing = false;
    }
  };
  const log = (entry: NewDiagnostic) => {
    if (pending.length < 200) pending.push({ ...entry, time: entry.time ?? new Date() });
    void flush();
  };
  const onError = (e: ErrorEvent) => {
    const d = describeError(e.error ?? e.message);
    log({ kind: 'error', ...d, context: e.filename ? `${e.filename}:${e.lineno}:${e.colno}` : '' });
  };
  const onRejection = (e: PromiseRejectionEvent) => log({ kind: 'unhandledrejection', ...describeError(e.reason) });
  window.addEventListener('error', onError);
  window.addEventListener('unhandledrejection', onRejection);
  const timer = window.setInterval(() => pending.length && void flush(), 2000);
  return {
    log,
    dispose() {
      window.removeEventListener('error', onError);
      window.removeEventListener('unhandledrejection', onRejection);
      window.clearInterval(timer);
    },
  };
}

/**
 * `<strata-diagnostics-panel>`: the errors logged in this browser, newest first, with their time,
 * kind, context and stack; export them as a JSON file to send with a problem report, or clear them.
 *
 * Properties: `db` (the open library). Events: `status-message` {text, kind}.
 */
export class StrataDiagnosticsPanel extends LitElement {
  static override properties = {
    db: { attribute: false },
    entries: { state: true },
  };

  db: LibraryDb | null = null;
  entries: DiagnosticEntry[] = [];

  static override styles = [
    controlStyles,
    listPanelStyles,
    css`
      ol { list-style: none; margin: 0; padding: 0; overflow-y: auto; }
      li { padding: 6px 8px; border-bottom: 1px solid var(--line); font-size: 12px; }
      .when { color: var(--muted); font-variant-numeric: tabular-nums; }
      .kind { display: inline-block; min-width: 9em; color: var(--accent-2); }
      .msg { display: block; overflow-wrap: anywhere; color: var(--text); }
      .ctx { display: block; color: var(--muted); overflow-wrap: anywhere; }
      details pre { white-space: pre-wrap; overflow-wrap: anywhere; font-size: 11px; margin: 4px 0 0; color: var(--muted); }
      p.empty { padding: 8px; color: var(--muted); }
    `,
  ];

  private onLogged = () => void this.refresh();

  override connectedCallback(): void {
    super.connectedCallback();
    window.addEventListener(LOGGED_EVENT, this.onLogged);
  }

  override disconnectedCallback(): void {
    window.removeEventListener(LOGGED_EVENT, this.onLogged);
    super.disconnectedCallback();
  }

  protected override willUpdate(changed: PropertyValues<this>): void {
    if (changed.has('db')) void this.refresh();
  }

  private async refresh(): Promise<void> {
    this.entries = this.db ? (await listDiagnostics(this.db).catch(() => [])).reverse() : [];
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.dispatchEvent(new CustomEvent('status-message', { detail: { text, kind }, bubbles: true, composed: true }));
  }

  private exportLog(): void {
    const text = diagnosticsJson([...this.entries].reverse(), { appVersion: APP_VERSION, userAgent: navigator.userAgent });
    download(`stratameter-diagnostics-${new Date().toISOString().slice(0, 19).replace(/:/g, '')}.json`, text, 'application/json');
    this.say(`Diagnostics exported: ${this.entries.length} entries.`);
  }

  private async clear(): Promise<void> {
    if (!this.db) return;
    await clearDiagnostics(this.db);
    await this.refresh();
    this.say('The diagnostics log is empty.');
  }

  override render() {
    const n = this.entries.length;
    return html`
      <div class="actions">
        <button @click=${() => void this.refresh()} title="Read the log again">Refresh</button>
        <button ?disabled=${n === 0} @click=${() => this.exportLog()} title="Save the log as a JSON file (errors only: no images or results)">Export log…</button>
        <button class="danger" ?disabled=${n === 0 || !this.db} @click=${() => void this.clear()}>Clear</button>
        <span class="count">${n} ${n === 1 ? 'entry' : 'entries'}</span>
      </div>
      ${!this.db ? html`<p class="empty">The local library is not open, so nothing is logged.</p>` : nothing}
      ${this.db && n === 0 ? html`<p class="empty">No errors logged. Errors are kept here, in this browser only, until you clear them.</p>` : nothing}
      <ol aria-label="Logged errors">
        ${this.entries.map((e) => html`<li>
          <span class="when">${e.timeIso.replace('T', ' ').slice(0, 19)}</span> <span class="kind">${e.kind}</span>
          <span class="msg">${e.message}</span>
          ${e.context ? html`<span class="ctx">${e.context}</span>` : nothing}
          ${e.stack ? html`<details><summary>Stack</summary><pre>${e.stack}</pre></details>` : nothing}
        </li>`)}
      </ol>
    `;
  }
}

customElements.define('strata-diagnostics-panel', StrataDiagnosticsPanel);
