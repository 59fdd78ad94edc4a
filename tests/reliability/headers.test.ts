import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
// @ts-expect-error plain JavaScript module without types
import { serve } from '../../scripts/serve.mjs';
import { CONTENT_SECURITY_POLICY, PAGE_POLICY, SECURITY_HEADERS, WORKER_POLICY } from '../../scripts/security-headers.mjs';

// The local server's headers (W3C CSP Level 3; OWASP Secure Headers Project, common practice).
let dir = '';
let url = '';
let close: () => void = () => {};
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'serve-'));
  await writeFile(join(dir, 'index.html'), readFileSync('public/index.html'));
  await writeFile(join(dir, 'worker.js'), 'self.onmessage = () => {};\n');
  const s = (await serve({ dir, port: 0 })) as { server: { close(): void }; url: string };
  url = s.url;
  close = () => s.server.close();
});
afterAll(async () => {
  close();
  await rm(dir, { recursive: true, force: true });
});

test("the page's meta policy is the one the server sends, which adds frame-ancestors 'none' (CSP 3 §6.4.2: a meta policy cannot set it)", () => {
  const meta = /<meta http-equiv="Content-Security-Policy" content="([^"]+)">/.exec(readFileSync('public/index.html', 'utf8'));
  expect(meta?.[1]).toBe(PAGE_POLICY);
  expect(CONTENT_SECURITY_POLICY).toBe(`${PAGE_POLICY}; frame-ancestors 'none'`);
  expect(PAGE_POLICY).toContain("'wasm-unsafe-eval'");
  expect(PAGE_POLICY).not.toMatch(/'unsafe-inline'|'unsafe-eval'/);
});

test('every response, found or not, carries the hardening headers; the page its policy, a script the workers\' policy', async () => {
  for (const path of ['', 'index.html', 'worker.js', 'missing.js', '..%2f..%2fetc%2fpasswd']) {
    const res = await fetch(url + path);
    for (const [name, value] of Object.entries(SECURITY_HEADERS)) if (name !== 'content-security-policy') expect(res.headers.get(name), `${path} ${name}`).toBe(value);
  }
  expect((await fetch(url)).headers.get('content-security-policy')).toBe(CONTENT_SECURITY_POLICY);
  // a worker's policy is its script response's (CSP 3 §4.2.2): the page's plus 'unsafe-eval' for opencv.js, the network still closed
  expect((await fetch(`${url}worker.js`)).headers.get('content-security-policy')).toBe(WORKER_POLICY);
  expect(WORKER_POLICY).toBe(PAGE_POLICY.replace("script-src 'self' 'wasm-unsafe-eval'", "script-src 'self' 'wasm-unsafe-eval' 'unsafe-eval'"));
  expect((await fetch(`${url}missing.js`)).status).toBe(404);
});
