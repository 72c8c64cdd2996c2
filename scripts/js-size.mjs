/**
 * npm run bench:js — how much JavaScript each page of the built app sends to the browser, gzipped.
 *
 * Reads the build only (run `npm run build` first; no server, no database): for every page it finds the
 * islands in the page's server module (their `client:component-path`), maps each to its browser chunk through
 * the server manifest, adds the UI framework's client renderer, and follows the chunks' static imports. Chunks
 * reached only through `import()` are listed apart as "on demand" (loaded when the screen needs them).
 *
 *   node scripts/js-size.mjs                 one line per page with islands
 *   node scripts/js-size.mjs book            that page's chunks one by one (eager, then on demand)
 *   node scripts/js-size.mjs --json          the same as JSON
 *   ASTRO_OUT_DIR=dist-test node scripts/js-size.mjs   another build folder
 *
 * Sizes are gzip level 9 of each file on its own (what a server with compression sends), in kB of 1000 bytes.
 * Astro's small island loader is inline in the HTML and not counted.
 */
import fs from 'node:fs';
import path from 'node:path';
import zlib from 'node:zlib';

const root = path.resolve(import.meta.dirname, '..');
const outDir = path.resolve(root, process.env.ASTRO_OUT_DIR ?? 'dist');
const args = process.argv.slice(2);
const asJson = args.includes('--json');
const wanted = args.filter((a) => !a.startsWith('--'));
const serverDir = path.join(outDir, 'server');
const clientDir = path.join(outDir, 'client');

if (!fs.existsSync(serverDir)) {
  console.error(`No build in ${path.relative(root, outDir) || '.'}: run npm run build first.`);
  process.exit(1);
}

const manifestFile = fs.readdirSync(serverDir).find((f) => /^manifest_.*\.mjs$/.test(f));
if (!manifestFile) throw new Error('the server manifest was not found in the build');
const manifestText = fs.readFileSync(path.join(serverDir, manifestFile), 'utf8');
const entryMatch = /"entryModules":(\{[^}]*\})/.exec(manifestText);
if (!entryMatch) throw new Error('entryModules not found in the server manifest');
/** module id (absolute source path, or a renderer's client entry) -> "_astro/x.hash.js" */
const entryModules = JSON.parse(entryMatch[1]);
const renderers = Object.entries(entryModules)
  .filter(([k]) => /^@astrojs\/[a-z]+\/client\.js$/.test(k))
  .map(([, v]) => v);

/** files under dir, recursively */
const walk = (dir) =>
  fs.readdirSync(dir, { withFileTypes: true }).flatMap((d) => (d.isDirectory() ? walk(path.join(dir, d.name)) : [path.join(dir, d.name)]));

/** the island source paths rendered by a server module and the local chunks it imports (not Astro's own runtime) */
function islandsOf(file, seen = new Set()) {
  if (seen.has(file)) return [];
  seen.add(file);
  const text = fs.readFileSync(file, 'utf8');
  const found = [...text.matchAll(/"client:component-path": "([^"]+)"/g)].map((m) => m[1]);
  for (const m of text.matchAll(/(?:from|import)\s*['"](\.{1,2}\/[^'"]+\.mjs)['"]/g)) {
    const next = path.resolve(path.dirname(file), m[1]);
    if (next.includes(`${path.sep}chunks${path.sep}astro${path.sep}`) || !fs.existsSync(next)) continue;
    found.push(...islandsOf(next, seen));
  }
  return found;
}

const sizes = new Map();
/** { bytes, gzip } of a client chunk ("_astro/x.js") */
function sizeOf(chunk) {
  if (!sizes.has(chunk)) {
    const buf = fs.readFileSync(path.join(clientDir, chunk));
    sizes.set(chunk, { bytes: buf.length, gzip: zlib.gzipSync(buf, { level: 9 }).length });
  }
  return sizes.get(chunk);
}

/** a chunk's static and dynamic imports, as "_astro/…" names */
function importsOf(chunk) {
  const text = fs.readFileSync(path.join(clientDir, chunk), 'utf8');
  const dir = path.posix.dirname(chunk);
  const rel = (p) => path.posix.normalize(path.posix.join(dir, p));
  const dynamic = new Set([...text.matchAll(/import\(\s*["'](\.{1,2}\/[^"']+\.js)["']\s*\)/g)].map((m) => rel(m[1])));
  const staticImports = new Set([...text.matchAll(/(?:from\s*|import\s*)["'](\.{1,2}\/[^"']+\.js)["']/g)].map((m) => rel(m[1])));
  return { staticImports: [...staticImports], dynamicImports: [...dynamic].filter((c) => !staticImports.has(c)) };
}

/** the chunks a set of entries loads at once, and those only reached through import() */
function closure(entries) {
  const eager = new Set();
  const stack = [...entries];
  const lazyRoots = new Set();
  while (stack.length) {
    const c = stack.pop();
    if (eager.has(c)) continue;
    eager.add(c);
    const { staticImports, dynamicImports } = importsOf(c);
    stack.push(...staticImports);
    dynamicImports.forEach((d) => lazyRoots.add(d));
  }
  const lazy = new Set();
  const lstack = [...lazyRoots];
  while (lstack.length) {
    const c = lstack.pop();
    if (eager.has(c) || lazy.has(c)) continue;
    lazy.add(c);
    const { staticImports, dynamicImports } = importsOf(c);
    lstack.push(...staticImports, ...dynamicImports);
  }
  return { eager: [...eager], lazy: [...lazy] };
}

const pagesDir = path.join(serverDir, 'pages');
const pages = walk(pagesDir)
  .filter((f) => f.endsWith('.astro.mjs') && !f.includes(`${path.sep}api${path.sep}`))
  .map((f) => {
    const route = '/' + path.relative(pagesDir, f).replace(/\.astro\.mjs$/, '').replace(/\\/g, '/').replace(/(^|\/)index$/, '');
    const islands = [...new Set(islandsOf(f))];
    return { route: route === '/' ? '/' : route.replace(/\/$/, ''), islands };
  })
  .filter((p) => p.islands.length > 0)
  .map((p) => {
    const entries = p.islands.map((src) => {
      const chunk = entryModules[src];
      if (!chunk) throw new Error(`no browser chunk for ${src} in the manifest`);
      return chunk;
    });
    const { eager, lazy } = closure([...renderers.filter((r) => r), ...entries]);
    const sum = (list) => list.reduce((a, c) => a + sizeOf(c).gzip, 0);
    return {
      route: p.route,
      islands: p.islands.map((s) => path.basename(s)),
      eagerGzip: sum(eager),
      lazyGzip: sum(lazy),
      eager: eager.map((c) => ({ chunk: path.posix.basename(c), ...sizeOf(c) })).sort((a, b) => b.gzip - a.gzip),
      lazy: lazy.map((c) => ({ chunk: path.posix.basename(c), ...sizeOf(c) })).sort((a, b) => b.gzip - a.gzip),
    };
  })
  .sort((a, b) => b.eagerGzip - a.eagerGzip);

const kb = (n) => (n / 1000).toFixed(1).padStart(7);
const chosen = wanted.length ? pages.filter((p) => wanted.some((w) => p.route === w || p.route === `/${w.replace(/^\//, '')}`)) : pages;
if (wanted.length && chosen.length === 0) {
  console.error(`No page with islands matches ${wanted.join(', ')}. Pages: ${pages.map((p) => p.route).join(' ')}`);
  process.exit(1);
}

if (asJson) {
  console.log(JSON.stringify(chosen, null, 2));
} else if (!wanted.length) {
  console.log(`JavaScript per page (${path.relative(root, outDir)}), gzip kB: at first load, and loaded on demand`);
  console.log(`${'page'.padEnd(28)} ${'first'.padStart(7)} ${'demand'.padStart(7)}  islands`);
  for (const p of chosen) console.log(`${p.route.padEnd(28)} ${kb(p.eagerGzip)} ${kb(p.lazyGzip)}  ${p.islands.join(', ')}`);
} else {
  for (const p of chosen) {
    console.log(`${p.route} — islands: ${p.islands.join(', ')}`);
    console.log(`  at first load: ${kb(p.eagerGzip).trim()} kB gzip`);
    for (const c of p.eager) console.log(`    ${c.chunk.padEnd(40)} ${kb(c.bytes)} raw ${kb(c.gzip)} gzip`);
    console.log(`  on demand: ${kb(p.lazyGzip).trim()} kB gzip`);
    for (const c of p.lazy) console.log(`    ${c.chunk.padEnd(40)} ${kb(c.bytes)} raw ${kb(c.gzip)} gzip`);
  }
}
