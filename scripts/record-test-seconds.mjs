/**
 * Writes tests/support/file-seconds.json — each test file's time in a full run — from vitest's JSON report, for the
 * longest-first order of a checkout that has no vitest cache yet (tests/support/sequencer.ts):
 *
 *   npm test -- --reporter=default --reporter=json --outputFile=report.json
 *   node scripts/record-test-seconds.mjs report.json
 */
import fs from 'node:fs';
import path from 'node:path';

const root = path.resolve(import.meta.dirname, '..');
const reportFile = process.argv[2];
if (!reportFile) {
  console.error('usage: node scripts/record-test-seconds.mjs <vitest JSON report>');
  process.exit(1);
}
const report = JSON.parse(fs.readFileSync(reportFile, 'utf8'));
const seconds = {};
for (const r of report.testResults) {
  // the report may come from another checkout: keep the path from the tests folder on
  const name = r.name.split(path.sep).join('/');
  const rel = name.slice(name.lastIndexOf('/tests/') + 1);
  seconds[rel] = Math.round((r.endTime - r.startTime) / 100) / 10;
}
const sorted = Object.fromEntries(Object.entries(seconds).sort(([a], [b]) => a.localeCompare(b)));
fs.writeFileSync(path.join(root, 'tests/support/file-seconds.json'), `${JSON.stringify(sorted, null, 2)}\n`);
console.log(`${Object.keys(sorted).length} files recorded in tests/support/file-seconds.json`);
