/**
 * npm run reconcile -- --from YYYY-MM-DD --to YYYY-MM-DD [--csv file]
 * Compares our card charges and refunds with the payment provider's for those site days (both included), keeps the
 * run (Admin › Reconciliation), e-mails the admins when something differs, prints the differences (or writes them as
 * CSV). Exit code 0 when everything agrees, 1 when something differs, 2 on bad arguments.
 * Uses DATABASE_URL and the STRIPE_* settings when set; otherwise those of `npm start` (the demo stack, running).
 */
import fs from 'node:fs';
import { parseArgs } from 'node:util';
import { appEnv, demoConfig, loadSecrets } from './lib/stack';

const { values } = parseArgs({ options: { from: { type: 'string' }, to: { type: 'string' }, csv: { type: 'string' } } });
const day = /^\d{4}-\d{2}-\d{2}$/;
if (!values.from || !values.to || !day.test(values.from) || !day.test(values.to) || values.to < values.from) {
  console.error('Usage: npm run reconcile -- --from YYYY-MM-DD --to YYYY-MM-DD [--csv file]   (site days, both included)\n       in a production install: node dist/scripts/reconcile.mjs --from … --to … [--csv file]');
  process.exit(2);
}
if (!process.env.DATABASE_URL) {
  const cfg = demoConfig();
  for (const [k, v] of Object.entries(appEnv(cfg, loadSecrets(cfg)))) process.env[k] ??= v;
}
const { periodOfDays, runReconciliation, runCsv } = await import('../src/lib/server/reconciliation');
const { MISMATCH_TEXT } = await import('../src/lib/reconcile');
const { closeDb } = await import('../src/lib/server/db');
const { stopJobs } = await import('../src/lib/server/jobs');
const { from, to } = await periodOfDays(values.from, values.to);
const run = await runReconciliation(from, to, 'command');
console.log(`Reconciled ${values.from} – ${values.to}: ${run.oursCount} of ours, ${run.providerCount} at the provider, ${run.mismatches.length} difference(s).`);
for (const m of run.mismatches) console.log(`  ${m.object} ${m.providerId}${m.ourId ? ` (ours ${m.ourId})` : ''}: ${MISMATCH_TEXT[m.kind]} — ours: ${m.ours}; provider: ${m.provider}`);
if (values.csv) fs.writeFileSync(values.csv, runCsv(run));
await stopJobs();
await closeDb();
process.exit(run.mismatches.length ? 1 : 0);
