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
  type StackConfig, ROOT, HOST, appEnv, paymentsStateFile, assertPortFree, buildApp, databaseUrl, ensurePostgres, loadSecrets, readConfig,
  recreateDatabase, runNode, say, startNode, spawnService, startFakes, startIdentityProviderFake, stopLeftover, stopPostgres, stopServices, superuserUrl, waitForPort,
} from './lib/stack';

const cfg = readConfig(
  'test',
  {
    dataDir: 'TEST_DATA_DIR', appPort: 'TEST_PORT', pgPort: 'TEST_PG_PORT', smtpPort: 'TEST_SMTP_PORT',
    mailWebPort: 'TEST_MAIL_WEB_PORT', stripePort: 'TEST_STRIPE_PORT', s3Port: 'TEST_S3_PORT',
  },
  { dataDir: '.data/test', appPort: 4331, pgPort: 54339, smtpPort: 1125, mailWebPort: 1180, stripePort: 12121, s3Port: 4579, dbName: 'beamwarden_test' },
);
/**
 * The second stack, for the serial pass (decision record 0475): its own PostgreSQL cluster, app, worker, fakes and
 * data folder, so the files that change shared state (site settings, a restarted database, a paused payment fake)
 * run beside the parallel pass instead of after it. TEST_STACKS=1 runs both passes on the first stack, one after
 * the other, as before.
 */
const serialCfg = readConfig(
  'test',
  {
    dataDir: 'TEST_SERIAL_DATA_DIR', appPort: 'TEST_SERIAL_PORT', pgPort: 'TEST_SERIAL_PG_PORT', smtpPort: 'TEST_SERIAL_SMTP_PORT',
    mailWebPort: 'TEST_SERIAL_MAIL_WEB_PORT', stripePort: 'TEST_SERIAL_STRIPE_PORT', s3Port: 'TEST_SERIAL_S3_PORT',
  },
  { dataDir: '.data/test-serial', appPort: 4341, pgPort: 54349, smtpPort: 1135, mailWebPort: 1190, stripePort: 12131, s3Port: 4589, dbName: 'beamwarden_test' },
);
const twoStacks = process.env.TEST_STACKS !== '1';

interface Stack {
  cfg: StackConfig;
  env: Record<string, string>;
}
const pgClusters: string[] = [];

async function cleanup(): Promise<void> {
  // a test may have restarted the payment fake (same PID file): stop whichever one the file names
  stopLeftover(cfg, 'payments');
  if (twoStacks) stopLeftover(serialCfg, 'payments');
  await stopServices();
  if (!process.env.TEST_KEEP_PG) for (const pgData of pgClusters) stopPostgres(pgData);
}
process.on('SIGINT', () => void cleanup().then(() => process.exit(130)));
process.on('SIGTERM', () => void cleanup().then(() => process.exit(143)));

/** PostgreSQL with a new test database, the fakes and the test settings of one stack (the app is started later). */
async function prepareStack(c: StackConfig, oidcPortVar: string, oidcDefault: number): Promise<Stack> {
  await assertPortFree(c.appPort, `the test app (${c === cfg ? 'TEST_PORT' : 'TEST_SERIAL_PORT'})`);
  const secrets = loadSecrets(c);
  const pgInfo = await ensurePostgres(c, secrets, { durable: false });
  if (pgInfo.startedHere) pgClusters.push(pgInfo.pgData);

  say(`Recreating the test database ${c.dbName} on port ${c.pgPort}`);
  await recreateDatabase(c, secrets, c.dbName);

  const env = appEnv(c, secrets, {
    // seen by the tests only
    APP_URL: `http://${HOST}:${c.appPort}`,
    TEST_SUPERUSER_URL: superuserUrl(c, secrets),
    TEST_SCRATCH_DB_URL: databaseUrl(c, secrets, `${c.dbName}_scratch`),
    TEST_DATA_DIR: c.dataDir,
    TEST_PG_DATA: pgInfo.pgData,
    TEST_PORT: String(c.appPort),
    TEST_STRIPE_PORT: String(c.stripePort),
    TEST_S3_PORT: String(c.s3Port),
    TEST_SMTP_PORT: String(c.smtpPort),
    TEST_MAIL_WEB_PORT: String(c.mailWebPort),
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

  runNode(['--import', 'tsx', 'scripts/migrate.ts', '--seed-if-empty'], env, `Migrating and seeding the test database on port ${c.pgPort}`);
  // a new test database: the payment fake starts empty too (it keeps its state across restarts within the run), and so
  // does the mail fake's inbox (a test process's first look at it read every earlier run's mail: thousands of messages)
  fs.rmSync(paymentsStateFile(c), { force: true });
  fs.rmSync(path.join(c.dataDir, 'mail'), { recursive: true, force: true });
  await startFakes(c);
  Object.assign(env, await startIdentityProviderFake(c, oidcPortVar, oidcDefault));
  return { cfg: c, env };
}

/** The app and the worker of a stack, from the one build. */
async function startApp(stack: Stack): Promise<void> {
  const app = spawnService(stack.cfg, 'app', [path.join(ROOT, 'dist-test/scripts/serve.mjs')], stack.env);
  const worker = spawnService(stack.cfg, 'worker', [path.join(ROOT, 'dist-test/scripts/worker.mjs')], stack.env);
  await waitForPort(stack.cfg.appPort, 'the test app', app.child);
  if (worker.child.exitCode !== null) console.error(`✖ The worker exited early; see ${path.relative(ROOT, stack.cfg.dataDir)}/logs/worker.log`);
}

// the type check (single-threaded, ~30 CPU-s) runs beside starting the stacks and the build, which leave a core
// partly idle; the tests start only once it has passed
const typeCheck = process.env.TEST_SKIP_TYPECHECK ? Promise.resolve(true) : startNode(['--import', 'tsx', 'scripts/check.ts'], {}, 'The TypeScript check');
const main = await prepareStack(cfg, 'TEST_OIDC_PORT', 9410);
const sets = await selectedSets(process.argv.slice(2), { ...process.env, ...main.env, NODE_ENV: 'test' });
const serial = twoStacks && sets.parallel > 0 && sets.serial > 0 ? await prepareStack(serialCfg, 'TEST_SERIAL_OIDC_PORT', 9420) : main;
buildApp(path.join(ROOT, 'dist-test'), main.env);
if (!(await typeCheck)) {
  await cleanup();
  process.exit(1);
}
await startApp(main);
if (serial !== main) await startApp(serial);

say(
  serial === main
    ? `Running the tests against http://${HOST}:${cfg.appPort} (logs in ${path.relative(ROOT, cfg.dataDir)}/logs)`
    : `Running the tests: the parallel set against http://${HOST}:${cfg.appPort} and, at the same time, the serial set against http://${HOST}:${serialCfg.appPort} (its lines start with "serial │"; logs in ${path.relative(ROOT, cfg.dataDir)}/logs and ${path.relative(ROOT, serialCfg.dataDir)}/logs)`,
);
const code = await runTestSets(process.argv.slice(2), sets, { ...process.env, ...main.env, NODE_ENV: 'test' }, { ...process.env, ...serial.env, NODE_ENV: 'test' }, serial !== main);

await cleanup();
say(code === 0 ? 'All tests passed' : `Tests failed (exit code ${code})`);
process.exit(code);

/** Runs vitest with these arguments; `prefix` prints its output line by line after the prefix (a pass running beside another). */
function vitest(extra: string[], env: NodeJS.ProcessEnv, set: string | undefined, output: 'inherit' | 'ignore' | { prefix: string } = 'inherit'): Promise<number> {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, [path.join(ROOT, 'node_modules/vitest/vitest.mjs'), ...extra], {
      cwd: ROOT, env: { ...env, ...(set ? { TEST_FILE_SET: set } : {}) }, stdio: typeof output === 'string' ? output : ['ignore', 'pipe', 'pipe'],
    });
    if (typeof output === 'object') {
      for (const [from, to] of [[child.stdout, process.stdout], [child.stderr, process.stderr]] as const) {
        let rest = '';
        from!.setEncoding('utf8');
        from!.on('data', (chunk: string) => {
          const lines = (rest + chunk).split('\n');
          rest = lines.pop() ?? '';
          for (const line of lines) to.write(`${output.prefix}${line}\n`);
        });
        from!.on('end', () => rest && to.write(`${output.prefix}${rest}\n`));
      }
    }
    child.once('exit', (c, signal) => resolve(c ?? (signal ? 1 : 0)));
  });
}

/** How many files the arguments select in each set. */
async function selectedSets(args: string[], env: NodeJS.ProcessEnv): Promise<Record<'parallel' | 'serial', number>> {
  const selected = { parallel: 0, serial: 0 };
  for (const set of ['parallel', 'serial'] as const) {
    const listFile = path.join(cfg.dataDir, `files-${set}.json`);
    fs.rmSync(listFile, { force: true });
    await vitest(['list', '--filesOnly', `--json=${listFile}`, ...args], env, set, 'ignore');
    selected[set] = fs.existsSync(listFile) ? (JSON.parse(fs.readFileSync(listFile, 'utf8')) as unknown[]).length : 0;
  }
  return selected;
}

/**
 * The selected files in two passes (vitest.config.ts, decision record 0415): the `parallel` set (unit files and the
 * integration and browser files that share nothing) two at a time, and the `serial` set one at a time — on two
 * stacks at the same time, or on one stack one after the other. A pass with no selected file is skipped; with none
 * at all vitest runs once so it reports that as it always does. The exit code is the first failing pass's; a JSON
 * report (`--outputFile=x.json`) holds both passes.
 */
async function runTestSets(args: string[], selected: Record<'parallel' | 'serial', number>, mainEnv: NodeJS.ProcessEnv, serialEnv: NodeJS.ProcessEnv, together: boolean): Promise<number> {
  if (!selected.parallel && !selected.serial) return vitest(['run', ...args], mainEnv, undefined);
  const out = outputFileFor(args);
  const width = process.env.TEST_PARALLEL_FILES ?? '2';
  const pass = (set: 'parallel' | 'serial', output: 'inherit' | { prefix: string } = 'inherit'): Promise<number> => {
    say(set === 'parallel' ? `${selected[set]} file(s) that share nothing, ${width} at a time` : `${selected[set]} file(s) that change shared state, one at a time`);
    return vitest(['run', ...(out ? out.argsFor(set) : args)], set === 'serial' ? serialEnv : mainEnv, set, output);
  };
  const sets = (['parallel', 'serial'] as const).filter((s) => selected[s]);
  const codes = together
    ? await Promise.all([pass('parallel'), pass('serial', { prefix: 'serial │ ' })])
    : await sets.reduce<Promise<number[]>>(async (done, set) => [...(await done), await pass(set)], Promise.resolve([]));
  if (out) mergeJsonReports(out.file, sets.map((s) => out.fileFor(s)));
  return codes.find((c) => c !== 0) ?? 0;
}
