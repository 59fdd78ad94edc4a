import { LitElement, css, html } from 'lit';

/**
 * `<strata-sw-update>`: the notice "A new version is ready — Reload". A new service worker has
 * installed in the background and is waiting; the page keeps running on the old worker and its
 * old files until the user reloads. Reload asks the waiting worker to take over
 * (`postMessage({ type: 'SKIP_WAITING' })`, the message workbox's generated worker listens for
 * when skipWaiting is off) and reloads the page once it controls it (`controllerchange`).
 *
 * Properties: `worker` (the waiting ServiceWorker).
 */
export class StrataSwUpdate extends LitElement {
  static override properties = { worker: { attribute: false }, reloading: { state: true } };

  worker: ServiceWorker | null = null;
  reloading = false;

  static override styles = css`
    :host { position: fixed; right: 16px; bottom: 16px; z-index: 1000; }
    div { display: flex; gap: 10px; align-items: center; padding: 8px 12px; border-radius: 4px;
      background: #1d2a36; color: var(--text, #e6e6e6); border: 1px solid var(--accent-2, #6ab0f3); box-shadow: 0 2px 8px #0008; font-size: 13px; }
    button { font: inherit; color: inherit; background: #2a3f52; border: 1px solid var(--accent-2, #6ab0f3); border-radius: 3px; padding: 3px 10px; cursor: pointer; }
    button:focus-visible { outline: 2px solid var(--focus, #ffd166); outline-offset: 1px; }
  `;

  private reload(): void {
    if (!this.worker || this.reloading) return;
    this.reloading = true;
    navigator.serviceWorker.addEventListener('controllerchange', () => location.reload(), { once: true });
    this.worker.postMessage({ type: 'SKIP_WAITING' });
  }

  override render() {
    return html`<div role="status">A new version is ready —
      <button @click=${() => this.reload()} ?disabled=${this.reloading}>${this.reloading ? 'Reloading…' : 'Reload'}</button></div>`;
  }
}

customElements.define('strata-sw-update', StrataSwUpdate);

/** Shows the notice for a waiting worker (once). */
function showNotice(worker: ServiceWorker): void {
  let el = document.querySelector('strata-sw-update') as StrataSwUpdate | null;
  if (!el) {
    el = document.createElement('strata-sw-update') as StrataSwUpdate;
    document.body.append(el);
  }
  el.worker = worker;
}

/**
 * Registers the service worker and watches for new versions: when one has installed while an
 * older one controls the page, the reload notice appears. Checks again when the page becomes
 * visible. Nothing happens on file: pages or where service workers are unavailable.
 *
 * @param url the worker script, relative to the page
 * @returns the registration, or null
 */
export async function registerServiceWorker(url = 'sw.js'): Promise<ServiceWorkerRegistration | null> {
  if (!('serviceWorker' in navigator) || location.protocol === 'file:') return null;
  let reg: ServiceWorkerRegistration;
  try {
    reg = await navigator.serviceWorker.register(url);
  } catch (e) {
    console.warn('service worker not registered', e);
    return null;
  }
  const offer = (w: ServiceWorker | null) => {
    // Only an update needs a reload: on the first visit nothing controls the page yet.
    if (w && navigator.serviceWorker.controller) showNotice(w);
  };
  offer(reg.waiting);
  reg.addEventListener('updatefound', () => {
    const w = reg.installing;
    w?.addEventListener('statechange', () => {
      if (w.state === 'installed') offer(reg.waiting ?? w);
    });
  });
  document.addEventListener('visibilitychange', () => {
    if (document.visibilityState === 'visible') void reg.update().catch(() => undefined);
  });
  return reg;
}
