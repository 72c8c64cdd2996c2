/**
 * Every page and API route of the app, found by walking src/pages at test time (so a new route cannot be
 * missed): its pattern as Astro serves it (`/api/machines/[id]/rules`) and its HTTP methods — the
 * `export const GET/POST/PUT/PATCH/DELETE` of an API file, GET for an .astro page.
 */
import fs from 'node:fs';
import path from 'node:path';

export const PAGES_DIR = path.resolve(import.meta.dirname, '..', '..', 'src', 'pages');
const METHODS = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE'] as const;
export type Method = (typeof METHODS)[number];

export interface RouteFile {
  /** e.g. `/api/machines/[id]/rules`, `/account/receipts/[id]`, `/` */
  pattern: string;
  /** relative to src/pages, e.g. `api/machines/[id]/rules.ts` */
  file: string;
  kind: 'page' | 'api';
  methods: Method[];
}

function walk(dir: string): string[] {
  const out: string[] = [];
  for (const entry of fs.readdirSync(dir, { withFileTypes: true })) {
    const full = path.join(dir, entry.name);
    if (entry.isDirectory()) out.push(...walk(full));
    else out.push(full);
  }
  return out;
}

export function listRoutes(): RouteFile[] {
  const routes: RouteFile[] = [];
  for (const full of walk(PAGES_DIR)) {
    const file = path.relative(PAGES_DIR, full).split(path.sep).join('/');
    const base = path.basename(file);
    if (base.startsWith('_')) continue; // Astro ignores files starting with _
    const isPage = /\.(astro|md|mdx|html)$/.test(file);
    const isEndpoint = /\.(ts|js|mjs)$/.test(file) && !/\.d\.ts$/.test(file);
    if (!isPage && !isEndpoint) continue;
    let pattern = '/' + file.replace(/\.(astro|md|mdx|html|ts|js|mjs)$/, '');
    pattern = pattern.replace(/\/index$/, '') || '/';
    if (isPage) {
      routes.push({ pattern, file, kind: 'page', methods: ['GET'] });
      continue;
    }
    const src = fs.readFileSync(full, 'utf8');
    const found = new Set<Method>();
    for (const m of src.matchAll(/export\s+(?:const|let|async\s+function|function)\s+(GET|POST|PUT|PATCH|DELETE|ALL)\b/g)) {
      if (m[1] === 'ALL') METHODS.forEach((x) => found.add(x));
      else found.add(m[1] as Method);
    }
    routes.push({ pattern, file, kind: pattern.startsWith('/api/') ? 'api' : 'page', methods: METHODS.filter((x) => found.has(x)) });
  }
  return routes.sort((a, b) => a.pattern.localeCompare(b.pattern));
}

/** The dynamic parameters of a pattern with the segment before each: `machines/[id]` → {name:'id', key:'machines/[id]'}. */
export function paramsOf(pattern: string): { name: string; key: string; raw: string }[] {
  const segs = pattern.split('/').filter(Boolean);
  const out: { name: string; key: string; raw: string }[] = [];
  segs.forEach((seg, i) => {
    const m = /\[(?:\.\.\.)?([A-Za-z0-9_]+)\]/.exec(seg);
    if (m) out.push({ name: m[1]!, key: `${segs[i - 1] ?? ''}/${m[0]}`, raw: m[0] });
  });
  return out;
}

/** Replaces each [param] (or [...rest]) in a pattern by its value. */
export function fillPattern(pattern: string, values: Record<string, string>): string {
  return pattern.replace(/\[(?:\.\.\.)?([A-Za-z0-9_]+)\]/g, (_, name: string) => {
    const v = values[name];
    if (v === undefined) throw new Error(`no value for [${name}] in ${pattern}`);
    return encodeURIComponent(v);
  });
}
