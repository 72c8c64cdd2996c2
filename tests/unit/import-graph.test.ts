/**
 * The import graph of src/ is layered and has no cycles (type-only imports count too).
 *
 *   pure        src/lib/*.ts            no I/O: never imports src/lib/server, knex, pg or node: modules
 *   server      src/lib/server/**       infrastructure → entities → workflows → cascades → web; a module imports
 *                                       its own layer or the ones below, never a page or a component
 *   components  src/components/**       islands and Astro components: pure modules only, never the server
 *   pages       src/pages/**, layouts   call server modules; never knex or pg directly
 *
 * A new server module must be put in a layer in LAYERS below, so its place is a decision, not an accident.
 */
import fs from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';

const ROOT = path.resolve(import.meta.dirname, '..', '..');
const SRC = path.join(ROOT, 'src');

// Order matters: each layer may import itself and those before it.
const LAYERS: Array<[string, string[]]> = [
  ['infrastructure', ['db', 'pg-types', 'env', 'errors', 'log', 'audit', 'jobs', 'mail', 'storage', 'passwords', 'file-types', 'images', 'client-address', 'security-headers', 'request-limits', 'payment-intents']],
  ['entities', ['settings', 'people', 'machines', 'prices', 'materials', 'clearances/*', 'booking-rules', 'quizzes', 'hazard', 'labels', 'institution', 'badges']],
  ['workflows', ['bookings/*', 'payments/*', 'machine-sessions', 'faults/*', 'material-requests', 'upkeep', 'reports', 'utilisation-report', 'induction-sessions/*', 'controllers/*', 'reconciliation', 'sign-in', 'account-export']],
  ['cascades', ['cascades/*', 'accounts', 'sign-up']],
  ['web', ['http', 'health', 'session', 'guards', 'auth-forms', 'billing-pages', 'report-routes', 'charge-json', 'fault-json', 'worker']],
];

function layerOf(serverModule: string): number {
  for (const [i, [, names]] of LAYERS.entries()) {
    for (const n of names) {
      if (n.endsWith('/*') ? serverModule.startsWith(n.slice(0, -1)) : serverModule === n) return i;
    }
  }
  return -1;
}

function walk(dir: string): string[] {
  return fs.readdirSync(dir, { withFileTypes: true }).flatMap((e) => {
    const full = path.join(dir, e.name);
    if (e.isDirectory()) return walk(full);
    return /\.(ts|tsx|astro|mjs|js)$/.test(e.name) && !e.name.endsWith('.d.ts') ? [full] : [];
  });
}

const IMPORT = /(?:import|export)\s[^'"`;]*?from\s*['"]([^'"]+)['"]|import\s*\(\s*['"]([^'"]+)['"]\s*\)|import\s+['"]([^'"]+)['"]/g;
const EXTS = ['', '.ts', '.tsx', '.astro', '.mjs', '.js', '/index.ts', '/index.tsx'];

function resolveSpec(from: string, spec: string): string | null {
  let base: string;
  if (spec.startsWith('.')) base = path.resolve(path.dirname(from), spec);
  else if (spec.startsWith('@lib/')) base = path.join(SRC, 'lib', spec.slice(5));
  else if (spec.startsWith('@/')) base = path.join(SRC, spec.slice(2));
  else return null;
  for (const e of EXTS) {
    const p = base.replace(/\.js$/, '') + e;
    if (fs.existsSync(p) && fs.statSync(p).isFile()) return p;
  }
  return null;
}

interface Edge { from: string; to: string | null; spec: string }

function edgesOf(file: string): Edge[] {
  const text = fs.readFileSync(file, 'utf8');
  return [...text.matchAll(IMPORT)].map((m) => {
    const spec = (m[1] ?? m[2] ?? m[3])!;
    return { from: file, to: resolveSpec(file, spec), spec };
  });
}

const files = walk(SRC);
const edges = files.flatMap(edgesOf);
const rel = (f: string) => path.relative(SRC, f).split(path.sep).join('/');

function cycles(): string[][] {
  const graph = new Map<string, string[]>();
  for (const f of files) graph.set(f, []);
  for (const e of edges) if (e.to && graph.has(e.to)) graph.get(e.from)!.push(e.to);
  // Tarjan's strongly connected components
  let index = 0;
  const idx = new Map<string, number>(), low = new Map<string, number>(), stack: string[] = [], on = new Set<string>();
  const found: string[][] = [];
  const visit = (v: string) => {
    idx.set(v, index); low.set(v, index); index++; stack.push(v); on.add(v);
    for (const w of graph.get(v)!) {
      if (!idx.has(w)) { visit(w); low.set(v, Math.min(low.get(v)!, low.get(w)!)); }
      else if (on.has(w)) low.set(v, Math.min(low.get(v)!, idx.get(w)!));
    }
    if (low.get(v) === idx.get(v)) {
      const c: string[] = [];
      let w: string;
      do { w = stack.pop()!; on.delete(w); c.push(w); } while (w !== v);
      if (c.length > 1 || graph.get(v)!.includes(v)) found.push(c.map(rel).sort());
    }
  };
  for (const v of graph.keys()) if (!idx.has(v)) visit(v);
  return found;
}

const serverModule = (f: string) => rel(f).replace(/^lib\/server\//, '').replace(/\.(ts|tsx)$/, '');
const isServer = (f: string) => rel(f).startsWith('lib/server/');
const isPure = (f: string) => /^lib\/[^/]+\.(ts|tsx)$/.test(rel(f));

describe('the import graph of src/', () => {
  it('has no import cycles', () => {
    expect(cycles()).toEqual([]);
  });

  it('puts every server module in a layer', () => {
    const unplaced = files.filter(isServer).map(serverModule).filter((m) => layerOf(m) < 0);
    expect(unplaced, 'add these to LAYERS in tests/unit/import-graph.test.ts').toEqual([]);
  });

  it('imports only downwards between server layers', () => {
    const upward = edges
      .filter((e) => e.to && isServer(e.from) && isServer(e.to))
      .filter((e) => layerOf(serverModule(e.to!)) > layerOf(serverModule(e.from)))
      .map((e) => `${rel(e.from)} → ${rel(e.to!)}`);
    expect(upward).toEqual([]);
  });

  it('keeps pure modules free of I/O and of the server', () => {
    const bad = edges
      .filter((e) => isPure(e.from))
      .filter((e) => (e.to && isServer(e.to)) || /^(knex|pg|pg-boss|nodemailer|node:fs|node:net|node:child_process|fs|net)$/.test(e.spec))
      .map((e) => `${rel(e.from)} → ${e.spec}`);
    expect(bad).toEqual([]);
  });

  it('never lets a server module import a page or a component, nor a component the server', () => {
    const bad = edges
      .filter((e) => e.to)
      .filter((e) => (isServer(e.from) && /^(pages|components|layouts)\//.test(rel(e.to!))) || (rel(e.from).startsWith('components/') && rel(e.from).endsWith('.tsx') && isServer(e.to!)))
      .map((e) => `${rel(e.from)} → ${rel(e.to!)}`);
    expect(bad).toEqual([]);
  });

  it('keeps knex and pg out of pages, layouts and components', () => {
    const bad = edges
      .filter((e) => /^(pages|layouts|components)\//.test(rel(e.from)) && /^(knex|pg)$/.test(e.spec))
      .map((e) => `${rel(e.from)} → ${e.spec}`);
    expect(bad).toEqual([]);
  });

  it('takes zod through src/lib/zod.ts, which keeps its eval probe out of the browser', () => {
    const bad = edges.filter((e) => /^zod(\/|$)/.test(e.spec) && rel(e.from) !== 'lib/zod.ts').map((e) => `${rel(e.from)} → ${e.spec}`);
    expect(bad).toEqual([]);
    expect(edges.filter((e) => e.to && rel(e.to) === 'lib/zod.ts').length).toBeGreaterThan(20);
  });

  it('can see a cycle and an upward import when there is one (the checks are not vacuous)', () => {
    expect(edges.length).toBeGreaterThan(200);
    expect(layerOf('db')).toBeLessThan(layerOf('bookings/create'));
    expect(layerOf('cascades/retire-machine')).toBeGreaterThan(layerOf('bookings/create'));
  });
});
