// The security headers of every response of the app, shared by scripts/serve.mjs and checked
// against the page's own meta policy by tests/reliability/headers.test.ts.

/**
 * The page's Content-Security-Policy, exactly as the meta tag in public/index.html states it:
 * only the app's own origin, WebAssembly compilation for opencv.js, workers from the app (and
 * blob: for the service worker's helpers), no inline script, no plugins, no form targets.
 */
export const PAGE_POLICY =
  "default-src 'self'; script-src 'self' 'wasm-unsafe-eval'; worker-src 'self' blob:; style-src 'self'; img-src 'self' blob: data:; connect-src 'self' blob: data:; font-src 'self'; object-src 'none'; base-uri 'self'; form-action 'none'";

/**
 * The header form adds what a meta tag cannot carry: frame-ancestors (W3C CSP Level 3 §6.4.2:
 * not supported in a <meta> policy), so no other site can frame the app.
 */
export const CONTENT_SECURITY_POLICY = `${PAGE_POLICY}; frame-ancestors 'none'`;

/**
 * The policy of the app's workers (sent with every script: a worker's policy is its script
 * response's, W3C CSP Level 3 §4.2.2): the page's, with 'unsafe-eval' added, since opencv.js
 * compiles helpers from text inside its worker and stops without it. The network stays closed to
 * anything but the app's own origin.
 */
export const WORKER_POLICY = PAGE_POLICY.replace("script-src 'self' 'wasm-unsafe-eval'", "script-src 'self' 'wasm-unsafe-eval' 'unsafe-eval'");

/** Every header sent with every response (OWASP Secure Headers Project, common practice); documents get CONTENT_SECURITY_POLICY, scripts WORKER_POLICY. */
export const SECURITY_HEADERS = Object.freeze({
  'content-security-policy': CONTENT_SECURITY_POLICY,
  // the same for browsers without frame-ancestors (RFC 7034)
  'x-frame-options': 'DENY',
  // a file is never read as another type than it is served as
  'x-content-type-options': 'nosniff',
  // nothing of the app's address goes to another site
  'referrer-policy': 'no-referrer',
  // no other window shares the app's browsing context group
  'cross-origin-opener-policy': 'same-origin',
  // no other site may embed the app's files
  'cross-origin-resource-policy': 'same-origin',
  // features the app never uses stay off
  'permissions-policy': 'camera=(), microphone=(), geolocation=(), usb=(), serial=(), bluetooth=(), payment=(), interest-cohort=()',
});
