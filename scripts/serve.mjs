// Serves dist/ on 127.0.0.1 only (never on other interfaces) and prints the URL.
// Every response carries the security headers of scripts/security-headers.mjs (a
// Content-Security-Policy with frame-ancestors 'none', nosniff, no referrer...).
// Usage: node scripts/serve.mjs [--port N] [--dir DIR]
import { createServer } from 'node:http';
import { SECURITY_HEADERS, WORKER_POLICY } from './security-headers.mjs';
import { readFile, stat } from 'node:fs/promises';
import { extname, join, normalize, resolve } from 'node:path';

const TYPES = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json',
  '.webmanifest': 'application/manifest+json',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.tif': 'image/tiff',
  '.tiff': 'image/tiff',
  '.txt': 'text/plain; charset=utf-8',
  '.xy': 'text/plain; charset=utf-8',
  '.wasm': 'application/wasm',
  '.gz': 'application/gzip',
  '.map': 'application/json',
};

/** Starts the static server; resolves to { server, url }. */
export function serve({ dir = 'dist', port = 8173, host = '127.0.0.1' } = {}) {
  const root = resolve(dir);
  const server = createServer(async (req, res) => {
    for (const [name, value] of Object.entries(SECURITY_HEADERS)) if (name !== 'content-security-policy') res.setHeader(name, value);
    try {
      const url = new URL(req.url ?? '/', 'http://localhost');
      let path = decodeURIComponent(url.pathname);
      if (path.endsWith('/')) path += 'index.html';
      const file = normalize(join(root, path));
      if (!file.startsWith(root)) {
        res.writeHead(403, { 'content-type': 'text/plain' }).end('forbidden');
        return;
      }
      const info = await stat(file).catch(() => null);
      if (!info || !info.isFile()) {
        res.writeHead(404, { 'content-type': 'text/plain' }).end('not found');
        return;
      }
      const body = await readFile(file);
      const type = TYPES[extname(file).toLowerCase()] ?? 'application/octet-stream';
      // A document gets the page's policy (with frame-ancestors); a script gets the workers' policy,
      // which governs a worker started from it (opencv.js needs 'unsafe-eval' there).
      if (type.startsWith('text/html')) res.setHeader('content-security-policy', SECURITY_HEADERS['content-security-policy']);
      else if (type.startsWith('text/javascript')) res.setHeader('content-security-policy', WORKER_POLICY);
      res.writeHead(200, {
        'content-type': type,
        'cache-control': path === '/sw.js' || path === '/index.html' ? 'no-cache' : 'public, max-age=0',
      });
      res.end(body);
    } catch (e) {
      // the reason goes to the console of whoever runs the server, not to the page
      console.error(`serve: ${req.url}: ${e instanceof Error ? e.message : String(e)}`);
      if (!res.headersSent) res.writeHead(500, { 'content-type': 'text/plain' });
      res.end('the server could not send this file');
    }
  });
  return new Promise((resolvePromise, reject) => {
    server.once('error', reject);
    server.listen(port, host, () => {
      const address = server.address();
      resolvePromise({ server, url: `http://${host}:${address.port}/` });
    });
  });
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const args = process.argv.slice(2);
  const portArg = args.indexOf('--port');
  const dirArg = args.indexOf('--dir');
  const port = portArg >= 0 ? Number(args[portArg + 1]) : Number(process.env.PORT ?? 8173);
  const dir = dirArg >= 0 ? args[dirArg + 1] : 'dist';
  const { url } = await serve({ dir, port });
  console.log(`Stratameter is running at ${url}  (Ctrl+C to stop)`);
}
