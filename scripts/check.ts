/**
 * npm run check: TypeScript over the project. auth-astro ships TypeScript sources rather than
 * declarations, and they do not pass our strict settings; errors inside node_modules are reported
 * as a count but do not fail the check. Every error in our own files does.
 */
import { spawnSync } from 'node:child_process';
import path from 'node:path';

const root = path.resolve(import.meta.dirname, '..');
const r = spawnSync(process.execPath, [path.join(root, 'node_modules/typescript/bin/tsc'), '--noEmit', '-p', 'tsconfig.json', '--pretty', 'false'], {
  cwd: root,
  encoding: 'utf8',
});
const lines = `${r.stdout}${r.stderr}`.split('\n').filter(Boolean);
const errorStarts = lines.filter((l) => /^[^\s].*\(\d+,\d+\): error TS/.test(l));
const ours = errorStarts.filter((l) => !/(^|\/)node_modules\//.test(l.split('(')[0] ?? ''));
const theirs = errorStarts.length - ours.length;
for (const l of ours) console.error(l);
if (theirs) console.log(`(${theirs} error(s) inside node_modules/ ignored: packages that ship .ts sources)`);
if (ours.length) {
  console.error(`\n✖ ${ours.length} TypeScript error(s) in the project`);
  process.exit(1);
}
if (r.status !== 0 && errorStarts.length === 0) {
  console.error(lines.join('\n'));
  process.exit(r.status ?? 1);
}
console.log('✓ TypeScript: no errors in the project');
