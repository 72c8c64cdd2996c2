/**
 * npm test: the same services as npm start, on their own ports, data folder and database (never the
 * demo's), then every test — unit, integration (real PostgreSQL) and end-to-end (headless Chromium).
 * Works whether or not `npm start` is running. Exits with the test runner's code.
 */
import path from 'node:path';
import fs from 'node:fs';
import { spawn } from 'node:child_process';
import { mergeJsonReports, outputFileFor } from './lib/test-sets';
import {
  ROOT, HOST, appEnv, paymentsStateFile, assertPortFree, buildApp, databaseUrl, ensurePostgres, loadSecrets, readConfig,
  recreateDatabase, runNode, say, spawnService, startFakes, startIdentityProviderFake, stopLeftover, stopPostgres, stopServices, superuserUrl, waitForPort,
} from './lib/stack';

const cfg = readConfig(
  'test',
  {
    dataDir: 'TEST_DATA_DIR', appPort: 'TEST_PORT', pgPort: 'TEST_PG_PORT', smtpPort: 'TEST_SMTP_PORT',
    mailWebPort: 'TEST_MAIL_WEB_PORT', stripePort: 'TEST_STRIPE_PORT', s3Port: 'TEST_S3_PORT',
  },
  { dataDir: '.data/test', appPort: 4331, pgPort: 54339, smtpPort: 1125, mailWebPort: 1180, stripePort: 12121, s3Port: 4579, dbName: 'beamwarden_test' },
);

let pgData: string | undefined;
let pgStartedHere = false;

async function cleanup(): Promise<void> {
  // a test may have restarted the payment fake (same PID file): stop whichever one the file names
  stopLeftover(cfg, 'payments');
  await stopServices();
  if (pgData && pgStartedHere && !process.env.TEST_KEEP_PG) stopPostgres(pgData);
}
process.on('SIGINT', () => void cleanup().then(() => process.exit(130)));
process.on('SIGTERM', () => void cleanup().then(() => process.exit(143)));

if (!process.env.TEST_SKIP_TYPECHECK) runNode(['--import', 'tsx', 'scripts/check.ts'], {}, 'The TypeScript check');
await assertPortFree(cfg.appPort, 'the test app (TEST_PORT)');
const secrets = loadSecrets(cfg);
const pgInfo = await ensurePostgres(cfg, secrets);
pgData = pgInfo.pgData;
pgStartedHere = pgInfo.startedHere;

say(`Recreating the test database ${cfg.dbName}`);
await recreateDatabase(cfg, secrets, cfg.dbName);

const env = appEnv(cfg, secrets, {
  // seen by the tests only
  APP_URL: `http://${HOST}:${cfg.appPort}`,
  TEST_SUPERUSER_URL: superuserUrl(cfg, secrets),
  TEST_SCRATCH_DB_URL: databaseUrl(cfg, secrets, `${cfg.dbName}_scratch`),
  TEST_DATA_DIR: cfg.dataDir,
  TEST_PG_DATA: pgData,
  TEST_STRIPE_PORT: String(cfg.stripePort),
  TEST_S3_PORT: String(cfg.s3Port),
  TEST_SMTP_PORT: String(cfg.smtpPort),
  TEST_MAIL_WEB_PORT: String(cfg.mailWebPort),
  // the worker runs queued jobs but no clock-driven sweeps: tests run those themselves (tests/support/queue.ts)
  WORKER_SCHEDULES: 'off',
  // a provider call the payment fake does not answer (paused by a test) gives up after 3 s (worker) / 2 s (request)
  // instead of 10 s / 3 s, so the tests of a silent provider wait less; every other call is answered long before
  PAYMENTS_WORKER_TIMEOUT_MS: process.env.PAYMENTS_WORKER_TIMEOUT_MS ?? '3000',
  PAYMENTS_REQUEST_TIMEOUT_MS: process.env.PAYMENTS_REQUEST_TIMEOUT_MS ?? '2000',
  // the tests of these limits count up to them through real sign-ins and sign-ups (argon2 each) and read the value
  // they run under. The pair's limit stays below the e-mail's free failures, as by default (5 < 10): a person whose
  // address is throttled from one place still signs in from another. 8 sign-ups per address leave room for the few
  // made from 127.0.0.1 in a run (browser journeys, web-security)
  SIGN_IN_PAIR_LIMIT: process.env.SIGN_IN_PAIR_LIMIT ?? '3',
  SIGN_IN_FREE_FAILURES: process.env.SIGN_IN_FREE_FAILURES ?? '4',
  SIGN_UP_LIMIT_PER_ADDRESS: process.env.SIGN_UP_LIMIT_PER_ADDRESS ?? '8',
});

runNode(['--import', 'tsx', 'scripts/migrate.ts', '--seed-if-empty'], env, 'Migrating and seeding the test database');
// a new test database: the payment fake starts empty too (it keeps its state across restarts within the run), and so
// does the mail fake's inbox (a test process's first look at it read every earlier run's mail: thousands of messages)
fs.rmSync(paymentsStateFile(cfg), { force: true });
fs.rmSync(path.join(cfg.dataDir, 'mail'), { recursive: true, force: true });
await startFakes(cfg);
Object.assign(env, await startIdentityProviderFake(cfg, 'TEST_OIDC_PORT', 9410));
buildApp(path.join(ROOT, 'dist-test'), env);

const app = spawnService(cfg, 'app', [path.join(ROOT, 'dist-test/scripts/serve.mjs')], env);
const worker = spawnService(cfg, 'worker', [path.join(ROOT, 'dist-test/scripts/worker.mjs')], env);
await waitForPort(cfg.appPort, 'the test app', app.child);
if (worker.child.exitCode !== null) console.error('✖ The worker exited early; see .data/test/logs/worker.log');

say(`Running the tests against http://${HOST}:${cfg.appPort} (logs in ${path.relative(ROOT, cfg.dataDir)}/logs)`);
const code = await runTestSets(process.argv.slice(2), { ...process.env, ...env, NODE_ENV: 'test' });

await cleanup();
say(code === 0 ? 'All tests passed' : `Tests failed (exit code ${code})`);
process.exit(code);

/**
 * The files the arguments select, in two passes (vitest.config.ts, decision record 0415): the `parallel` set (unit
 * files and the integration files that share nothing) two at a time, then the `serial` set one at a time. A pass
 * with no selected file is skipped; with none at all vitest runs once so it reports that as it always does. The
 * exit code is the first failing pass's; a JSON report (`--outputFile=x.json`) holds both passes.
 */
async function runTestSets(args: string[], testEnv: NodeJS.ProcessEnv): Promise<number> {
  const vitest = (extra: string[], set: string | undefined, quiet = false): Promise<number> =>
    new Promise((resolve) => {
      const child = spawn(process.execPath, [path.join(ROOT, 'node_modules/vitest/vitest.mjs'), ...extra], {
        cwd: ROOT, env: { ...testEnv, ...(set ? { TEST_FILE_SET: set } : {}) }, stdio: quiet ? 'ignore' : 'inherit',
      });
      child.once('exit', (c, signal) => resolve(c ?? (signal ? 1 : 0)));
    });
  const sets = ['parallel', 'serial'] as const;
  const selected: Record<string, number> = {};
  for (const set of sets) {
    const listFile = path.join(cfg.dataDir, `files-${set}.json`);
    fs.rmSync(listFile, { force: true });
    await vitest(['list', '--filesOnly', `--json=${listFile}`, ...args], set, true);
    selected[set] = fs.existsSync(listFile) ? (JSON.parse(fs.readFileSync(listFile, 'utf8')) as unknown[]).length : 0;
  }
  if (!selected.parallel && !selected.serial) return vitest(['run', ...args], undefined);
  const out = outputFileFor(args);
  const codes: number[] = [];
  for (const set of sets) {
    if (!selected[set]) continue;
    const width = process.env.TEST_PARALLEL_FILES ?? '2';
    say(set === 'parallel' ? `${selected[set]} file(s) that share nothing, ${width} at a time` : `${selected[set]} file(s) that change shared state, one at a time`);
    codes.push(await vitest(['run', ...(out ? out.argsFor(set) : args)], set));
  }
  if (out) mergeJsonReports(out.file, sets.filter((s) => selected[s]).map((s) => out.fileFor(s)));
  return codes.find((c) => c !== 0) ?? 0;
}

