// No import cycles in src/, server/ or shared/: the test builds the import graph from the source
// (static imports, re-exports and lazy `import()` alike — a lazily loaded page that imports its
// loader back is still a cycle) and fails naming each cycle it finds. Type-only imports are
// erased by TypeScript and do not count.
import { readdirSync, readFileSync, statSync, existsSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';

const ROOT = path.resolve(import.meta.dirname, '../..');
const FOLDERS = ['src', 'server', 'shared'];

function sources(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    const full = path.join(dir, name);
    if (statSync(full).isDirectory()) out.push(...sources(full));
    else if (/\.(ts|vue|mjs)$/.test(name) && !name.endsWith('.d.ts')) out.push(full);
  }
  return out;
}

/** Value imports of a file: `import x from`, `import {a} from`, `import 'x'`, `export … from`, `import('x')`. */
export function importsOf(code: string): string[] {
  const found: string[] = [];
  const statement =
    /(?:^|[;\n])\s*(import|export)\s+(type\s+)?([^'";]*?)\s*from\s*['"]([^'"]+)['"]/g;
  for (const m of code.matchAll(statement)) {
    if (m[2]) continue; // import type … / export type …
    const clause = m[3].trim();
    // `import { type A, type B } from` is erased too.
    const braces = /^\{([^}]*)\}$/.exec(clause);
    if (
      braces &&
      braces[1].split(',').every((part) => part.trim() === '' || /^type\s/.test(part.trim()))
    )
      continue;
    found.push(m[4]);
  }
  for (const m of code.matchAll(/(?:^|[;\n])\s*import\s+['"]([^'"]+)['"]/g)) found.push(m[1]);
  for (const m of code.matchAll(/\bimport\(\s*['"]([^'"]+)['"]\s*\)/g)) found.push(m[1]);
  return found;
}

function resolve(from: string, spec: string): string | null {
  if (!spec.startsWith('.')) return null;
  const base = path.resolve(path.dirname(from), spec);
  const candidates = [
    base,
    base.replace(/\.js$/, '.ts'),
    base.replace(/\.mjs$/, '.mts'),
    `${base}.ts`,
    `${base}.vue`,
    path.join(base, 'index.ts'),
  ];
  return candidates.find((c) => existsSync(c) && statSync(c).isFile()) ?? null;
}

/** The script part of an SFC (both `<script>` blocks), or the file itself. */
function codeOf(file: string): string {
  const text = readFileSync(file, 'utf8');
  if (!file.endsWith('.vue')) return text;
  return [...text.matchAll(/<script[^>]*>([\s\S]*?)<\/script>/g)].map((m) => m[1]).join('\n');
}

function graph(): Map<string, string[]> {
  const g = new Map<string, string[]>();
  for (const folder of FOLDERS) {
    for (const file of sources(path.join(ROOT, folder))) {
      const deps = importsOf(codeOf(file))
        .map((spec) => resolve(file, spec))
        .filter((d): d is string => d !== null);
      g.set(file, [...new Set(deps)]);
    }
  }
  return g;
}

/** Every strongly connected component with more than one file (or a file importing itself). */
function cycles(g: Map<string, string[]>): string[][] {
  let index = 0;
  const idx = new Map<string, number>();
  const low = new Map<string, number>();
  const stack: string[] = [];
  const on = new Set<string>();
  const out: string[][] = [];
  const visit = (v: string) => {
    idx.set(v, index);
    low.set(v, index++);
    stack.push(v);
    on.add(v);
    for (const w of g.get(v) ?? []) {
      if (!idx.has(w)) {
        visit(w);
        low.set(v, Math.min(low.get(v)!, low.get(w)!));
      } else if (on.has(w)) low.set(v, Math.min(low.get(v)!, idx.get(w)!));
    }
    if (low.get(v) === idx.get(v)) {
      const comp: string[] = [];
      let w: string;
      do {
        w = stack.pop()!;
        on.delete(w);
        comp.push(w);
      } while (w !== v);
      if (comp.length > 1 || (g.get(v) ?? []).includes(v))
        out.push(comp.map((f) => path.relative(ROOT, f)).sort());
    }
  };
  for (const v of g.keys()) if (!idx.has(v)) visit(v);
  return out;
}

describe('import graph', () => {
  it('reads value imports and skips type-only ones', () => {
    const code = [
      "import { a } from './a.js';",
      "import type { B } from './b.js';",
      "import { type C, type D } from './c.js';",
      "import { type E, f } from './e.js';",
      "export { g } from './g.js';",
      "import './side.css';",
      "const V = () => import('./View.vue');",
    ].join('\n');
    expect(importsOf(code).sort()).toEqual([
      './View.vue',
      './a.js',
      './e.js',
      './g.js',
      './side.css',
    ]);
  });

  it('finds a planted cycle', () => {
    const g = new Map([
      ['/x/a.ts', ['/x/b.ts']],
      ['/x/b.ts', ['/x/c.ts']],
      ['/x/c.ts', ['/x/a.ts']],
      ['/x/d.ts', ['/x/a.ts']],
    ]);
    expect(cycles(g).length).toBe(1);
    expect(cycles(g)[0].length).toBe(3);
  });

  it('keeps services free of the socket layer, even for types (server/ws imports services)', () => {
    const offenders = sources(path.join(ROOT, 'server/services')).filter((f) =>
      /from\s+['"]\.\.\/ws\//.test(readFileSync(f, 'utf8')),
    );
    expect(offenders.map((f) => path.relative(ROOT, f))).toEqual([]);
  });

  it('has no cycle in src/, server/ or shared/', () => {
    const g = graph();
    expect(g.size).toBeGreaterThan(100);
    expect(cycles(g)).toEqual([]);
  });
});
