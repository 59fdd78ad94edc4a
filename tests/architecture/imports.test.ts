// The package map, checked from the import statements themselves (so it cannot drift from the
// code): the domain folders of src/ never import the store, the command line or the app's
// components; nothing in src/ imports the test-only testing/ folder; the store, an adapter above
// the domain, never imports the command line or the components; and components/ holds lit
// element modules only, apart from a short list of worker and browser plumbing named below.
// The rules are the project's own (DEVELOPERS.md, docs/developers.md: common practice for a
// functional core with a thin shell).
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { describe, expect, test } from 'vitest';

const ROOT = resolve(__dirname, '..', '..');

/** Every .ts file below a folder of the repository (paths relative to the root, forward slashes). */
function tsFiles(folder: string): string[] {
  const out: string[] = [];
  const walk = (dir: string) => {
    for (const name of readdirSync(dir)) {
      const p = join(dir, name);
      if (statSync(p).isDirectory()) walk(p);
      else if (/\.ts$/.test(name)) out.push(relative(ROOT, p).split(sep).join('/'));
    }
  };
  walk(join(ROOT, folder));
  return out.sort();
}

/** An import of a module: the text as written and, for a relative one, the repository path it names. */
interface ImportOf {
  specifier: string;
  target: string | null;
  line: number;
}

/**
 * Every module a file imports: static `import … from`, side-effect `import '…'`, `export … from`
 * and dynamic `import('…')`, type-only ones included (a type import is still a dependency of
 * the design). Comments are removed first, so an import mentioned in a comment does not count.
 */
export function importsOf(file: string, text: string): ImportOf[] {
  const code = text.replace(/\/\*[\s\S]*?\*\//g, (m) => m.replace(/[^\n]/g, ' ')).replace(/(^|[^:'"`])\/\/.*$/gm, '$1');
  const found: ImportOf[] = [];
  const patterns = [
    /\bimport\s+(?:type\s+)?[^'"`;]*?\bfrom\s*['"]([^'"]+)['"]/g,
    /\bexport\s+(?:type\s+)?(?:\*|\{[^}]*\})\s*(?:as\s+\w+\s*)?from\s*['"]([^'"]+)['"]/g,
    /\bimport\s*['"]([^'"]+)['"]/g,
    /\bimport\s*\(\s*['"]([^'"]+)['"]\s*\)/g,
  ];
  for (const re of patterns) {
    for (const m of code.matchAll(re)) {
      const specifier = m[1];
      const line = code.slice(0, m.index).split('\n').length;
      const target = specifier.startsWith('.') ? relative(ROOT, resolve(ROOT, dirname(file), specifier)).split(sep).join('/') : null;
      found.push({ specifier, target, line });
    }
  }
  return found;
}

const DOMAIN = ['image', 'calibration', 'measure', 'sheets', 'diffraction', 'figure', 'batch'].map((f) => `src/${f}/`);
const inside = (path: string | null, folder: string) => path !== null && (path === folder.replace(/\/$/, '') || path.startsWith(folder));

/**
 * Files of components/ that are not lit element modules, each with why it may stay there: the
 * plumbing between the page and its workers, and browser-only helpers with no computation.
 */
const PLUMBING: Record<string, string> = {
  'components/compute-client.ts': "the page's side of the compute worker: posts calls, matches replies",
  'components/compute-protocol.ts': 'the types of the compute-worker calls, shared by page and worker',
  'components/compute-worker.ts': 'the compute worker: holds the image sessions, one thin handler per call into the core',
  'components/batch-pool.ts': "the page's pool of batch workers (scheduling, time limits, restarts)",
  'components/batch-protocol.ts': 'the types of the batch-worker messages',
  'components/batch-worker.ts': 'the batch worker: runs processOne on each file it is sent',
  'components/download.ts': 'saving a file from the page through a temporary link',
  'components/svg-png.ts': 'rendering an SVG figure to PNG through the browser canvas',
  'components/virtual-panels.d.ts': 'the type of the build-time panel list (no code)',
};

/** The module file an import names (a relative import written without its .ts), or null outside the tree. */
function moduleFile(target: string | null, files: Set<string>): string | null {
  if (target === null) return null;
  for (const candidate of [target, `${target}.ts`, `${target}/index.ts`]) if (files.has(candidate)) return candidate;
  return null;
}

/**
 * The import cycles among the given files: each strongly connected component of two or more
 * files, or a file importing itself (Tarjan 1972, depth-first search with low links).
 */
export function importCycles(imports: Map<string, string[]>): string[][] {
  const index = new Map<string, number>();
  const low = new Map<string, number>();
  const onStack = new Set<string>();
  const stack: string[] = [];
  const cycles: string[][] = [];
  let next = 0;
  const visit = (f: string) => {
    index.set(f, next);
    low.set(f, next);
    next++;
    stack.push(f);
    onStack.add(f);
    for (const g of imports.get(f) ?? []) {
      if (!index.has(g)) {
        visit(g);
        low.set(f, Math.min(low.get(f)!, low.get(g)!));
      } else if (onStack.has(g)) low.set(f, Math.min(low.get(f)!, index.get(g)!));
    }
    if (low.get(f) === index.get(f)) {
      const component: string[] = [];
      let g: string;
      do {
        g = stack.pop()!;
        onStack.delete(g);
        component.push(g);
      } while (g !== f);
      if (component.length > 1 || (imports.get(f) ?? []).includes(f)) cycles.push(component.sort());
    }
  };
  for (const f of [...imports.keys()].sort()) if (!index.has(f)) visit(f);
  return cycles;
}

const violations = (files: string[], rule: (imp: ImportOf) => boolean): string[] =>
  files.flatMap((f) => importsOf(f, readFileSync(join(ROOT, f), 'utf8')).filter(rule).map((i) => `${f}:${i.line} imports '${i.specifier}'`));

describe('import statements follow the package map', () => {
  const src = tsFiles('src');
  const components = tsFiles('components');

  test('the reader finds every kind of import, and none in comments (so the rules below can fail)', () => {
    const text = [
      "import { a } from '../store/library';",
      "import type { B } from '../../components/viewer';",
      "import '../cli/main';",
      "export { c } from '../store/records';",
      "export * from '../../testing/random';",
      "const m = await import('../cli/batch');",
      "// import { x } from '../store/nothing';",
      "/* import { y } from '../cli/nothing'; */",
    ].join('\n');
    const found = importsOf('src/measure/example.ts', text).map((i) => i.target);
    expect(found.sort()).toEqual(['components/viewer', 'src/cli/batch', 'src/cli/main', 'src/store/library', 'src/store/records', 'testing/random'].sort());
  });

  test('the domain folders import nothing from store/, cli/ or components/', () => {
    const domain = src.filter((f) => DOMAIN.some((d) => f.startsWith(d)));
    expect(domain.length).toBeGreaterThan(50);
    expect(violations(domain, (i) => inside(i.target, 'src/store/') || inside(i.target, 'src/cli/') || inside(i.target, 'components/'))).toEqual([]);
  });

  test('nothing in src/ imports testing/ (encoders and generators are for tests, benchmarks and the demo)', () => {
    expect(violations(src, (i) => inside(i.target, 'testing/'))).toEqual([]);
  });

  test('the store imports neither the command line nor the components', () => {
    const store = src.filter((f) => f.startsWith('src/store/'));
    expect(store.length).toBeGreaterThan(3);
    expect(violations(store, (i) => inside(i.target, 'src/cli/') || inside(i.target, 'components/'))).toEqual([]);
  });

  test('components/ holds lit element modules only, besides the named plumbing', () => {
    const notLit = components.filter((f) => {
      if (f in PLUMBING) return false;
      const text = readFileSync(join(ROOT, f), 'utf8');
      const usesLit = importsOf(f, text).some((i) => i.specifier === 'lit' || i.specifier.startsWith('lit/'));
      return !usesLit;
    });
    expect(notLit).toEqual([]);
  });

  test('no file of src/ imports itself through other files (type-only and dynamic imports count)', () => {
    const files = new Set(src);
    const imports = new Map(src.map((f) => [f, importsOf(f, readFileSync(join(ROOT, f), 'utf8')).map((i) => moduleFile(i.target, files)).filter((g): g is string => g !== null)]));
    expect(importCycles(imports)).toEqual([]);
  });

  test('the cycle finder finds a loop of three files and a file importing itself, and no loop in a chain', () => {
    const graph = new Map([
      ['a', ['b']],
      ['b', ['c']],
      ['c', ['a', 'd']],
      ['d', []],
      ['e', ['e']],
      ['f', ['d']],
    ]);
    expect(importCycles(graph)).toEqual([['a', 'b', 'c'], ['e']]);
    expect(importCycles(new Map([['a', ['b']], ['b', ['c']], ['c', []]]))).toEqual([]);
  });

  test('every plumbing file named above exists (the list cannot go stale)', () => {
    expect(Object.keys(PLUMBING).filter((f) => !components.includes(f))).toEqual([]);
  });
});
