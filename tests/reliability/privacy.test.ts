// No data leaves the machine: the page's Content-Security-Policy allows only the app's own
// origin (plus compiling WebAssembly), the page has no inline script, the UI never writes file
// names as HTML, and no code names another origin to fetch from.
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { compareBatchWithDiffraction, diffractionOverlaySvg } from '../../src/diffraction/cross-check';
import { histogramSvg } from '../../src/figure/batch-figure';

/** The CSP of an HTML page's meta tag, as directive → sources. */
export function cspOf(html: string): Map<string, string[]> {
  const m = /<meta\s+http-equiv="Content-Security-Policy"\s+content="([^"]+)"/i.exec(html);
  if (!m) throw new Error('no Content-Security-Policy meta tag');
  const out = new Map<string, string[]>();
  for (const part of m[1].split(';')) {
    const [name, ...sources] = part.trim().split(/\s+/);
    if (name) out.set(name, sources);
  }
  return out;
}

/** Sources that let data reach another origin or run code that was not shipped (CSP Level 3, W3C). */
function foreignSources(sources: string[]): string[] {
  const ok = new Set(["'self'", "'none'", "'wasm-unsafe-eval'", 'blob:', 'data:']);
  return sources.filter((s) => !ok.has(s));
}

const html = readFileSync('public/index.html', 'utf8');

describe('Content-Security-Policy of the page', () => {
  const csp = cspOf(html);
  test('every directive allows only the page\'s own origin, blob: and data: (CSP Level 3 source lists)', () => {
    for (const [name, sources] of csp) {
      if (name === 'form-action' || name === 'object-src') expect(sources, name).toEqual(["'none'"]);
      else expect(foreignSources(sources), name).toEqual([]);
    }
    expect(csp.get('default-src')).toEqual(["'self'"]);
    expect(csp.get('connect-src')).not.toContain('*');
  });
  test("scripts: own files and WebAssembly compilation only; no 'unsafe-eval', no 'unsafe-inline'", () => {
    expect(csp.get('script-src')).toEqual(["'self'", "'wasm-unsafe-eval'"]);
    for (const [, sources] of csp) {
      expect(sources).not.toContain("'unsafe-eval'");
      expect(sources).not.toContain("'unsafe-inline'");
    }
  });
  test('the page has no inline script and no inline event handler', () => {
    for (const m of html.matchAll(/<script\b([^>]*)>([\s\S]*?)<\/script>/gi)) {
      expect(m[1], 'a script without src').toMatch(/\bsrc=/);
      expect(m[2].trim()).toBe('');
    }
    expect(html).not.toMatch(/\son[a-z]+\s*=/i);
  });
});

function filesIn(dir: string, ext: RegExp): string[] {
  return readdirSync(dir, { recursive: true, withFileTypes: true })
    .filter((d) => d.isFile() && ext.test(d.name))
    .map((d) => join(d.parentPath ?? (d as unknown as { path: string }).path, d.name));
}

/**
 * The raw-markup uses that are known and checked: the batch panel shows the histograms that
 * histogramSvg writes and the overlay that diffractionOverlaySvg writes, whose only text is
 * escaped (tested below).
 */
const CHECKED_RAW_MARKUP = [
  /^components\/batch-panel\.ts: *(import \{ unsafeSVG \}|<div class="hists">\$\{Object\.values\(hists\)\.map\(\(s\) => unsafeSVG\(s\)\)\})/,
  /^components\/batch-panel\.ts: *<div class="hists">\$\{unsafeSVG\(cmp\.svg\)\}<\/div>`$/,
];

describe('file names and other user text are never written as HTML', () => {
  test('no component uses innerHTML, outerHTML, insertAdjacentHTML, document.write, unsafeHTML or unsafeSVG beyond the checked ones (lit escapes text bindings)', () => {
    const offenders: string[] = [];
    for (const f of filesIn('components', /\.ts$/)) {
      const text = readFileSync(f, 'utf8');
      for (const [i, line] of text.split('\n').entries()) {
        if (!/\.(innerHTML|outerHTML)\s*=|insertAdjacentHTML|document\.write|unsafeHTML|unsafeSVG/.test(line)) continue;
        const where = `${f}:${line.trim()}`;
        if (!CHECKED_RAW_MARKUP.some((re) => re.test(where))) offenders.push(`${f}:${i + 1}: ${line.trim()}`);
      }
    }
    expect(offenders).toEqual([]);
  });

  test('histogramSvg escapes its title and axis label (XML 1.0 §2.4: < and & must be escaped in text)', () => {
    const svg = histogramSvg([1, 2, 2, 3], { title: 'film <img src=x onerror=alert(1)> & "co"', xLabel: '<script>x</script>' });
    expect(svg).not.toMatch(/<img|<script/);
    expect(svg).toContain('film &lt;img src=x onerror=alert(1)&gt; &amp; &quot;co&quot;');
  });
});

test('diffractionOverlaySvg escapes the set name and the line labels (XML 1.0 §2.4)', () => {
  const side = { lines: [{ dNm: 1.25, dUncNm: 0.001, label: '<img src=x onerror=alert(1)>' }], series: [] };
  const c = compareBatchWithDiffraction([], side);
  const svg = diffractionOverlaySvg(c, side, 'set "a" <script>x</script> & b');
  expect(svg).not.toMatch(/<img|<script/);
  expect(svg).toContain('set &quot;a&quot; &lt;script&gt;x&lt;/script&gt; &amp; b');
});

describe('no code fetches from another origin', () => {
  test('no fetch, import, worker or XMLHttpRequest of an absolute http(s) URL in components/ or src/', () => {
    const offenders: string[] = [];
    for (const f of [...filesIn('components', /\.ts$/), ...filesIn('src', /\.ts$/)]) {
      for (const [i, line] of readFileSync(f, 'utf8').split('\n').entries()) {
        if (/(fetch|import|Worker|open|sendBeacon|EventSource|WebSocket)\s*\(\s*['"`]\s*(https?:|wss?:)?\/\//.test(line)) offenders.push(`${f}:${i + 1}`);
      }
    }
    expect(offenders).toEqual([]);
  });
});
