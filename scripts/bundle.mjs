/**
 * Bundles the server wrapper, the worker, the migration runner, backup/restore and reconcile (TypeScript) into plain ESM under
 * <outDir>/scripts/, and each migration into <outDir>/migrations/, so production runs them with node alone
 * (no tsx). Packages stay external: `npm ci --omit=dev` provides them. Run by `npm run build` after astro build.
 *   node scripts/bundle.mjs [outDir]   (default: dist)
 */
import fs from 'node:fs';
import path from 'node:path';
import { build } from 'esbuild';

const root = path.resolve(import.meta.dirname, '..');
const outDir = path.resolve(root, process.argv[2] ?? 'dist');

await build({
  entryPoints: ['serve', 'worker', 'migrate', 'backup', 'restore', 'reconcile'].map((n) => path.join(root, 'scripts', `${n}.ts`)),
  outdir: path.join(outDir, 'scripts'),
  outExtension: { '.js': '.mjs' },
  bundle: true,
  platform: 'node',
  format: 'esm',
  target: 'node20',
  packages: 'external',
  tsconfig: path.join(root, 'tsconfig.json'),
  define: { __BEAMWARDEN_MIGRATIONS__: JSON.stringify(fs.readdirSync(path.join(root, 'migrations')).filter((f) => f.endsWith('.ts')).sort()) },
  logLevel: 'warning',
});

const migrations = fs.readdirSync(path.join(root, 'migrations')).filter((f) => f.endsWith('.ts'));
fs.rmSync(path.join(outDir, 'migrations'), { recursive: true, force: true });
await build({
  entryPoints: migrations.map((f) => path.join(root, 'migrations', f)),
  outdir: path.join(outDir, 'migrations'),
  outExtension: { '.js': '.mjs' },
  bundle: false,
  platform: 'node',
  format: 'esm',
  target: 'node20',
  logLevel: 'warning',
});
console.log(`• Bundled serve, worker, migrate, backup, restore and reconcile (${migrations.length} migrations) into ${path.relative(root, outDir)}/`);
