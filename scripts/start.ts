/**
 * npm start: PostgreSQL, the local fakes, migrations, the demo seed (only into an empty database),
 * the app and the worker — all on 127.0.0.1. Ctrl-C stops everything this run started.
 */
import path from 'node:path';
import {
  ROOT, HOST, appEnv, assertPortFree, buildApp, ensurePostgres, loadSecrets, runNode,
  say, spawnService, startIdentityProviderFake, stopPostgres, stopServices, waitForPort, demoConfig,
  configuredServices, startUnconfiguredFakes, withConfiguredServices,
} from './lib/stack';

const cfg = demoConfig();
// a service set in the environment (DATABASE_URL, SMTP_HOST, S3_ENDPOINT, STRIPE_SECRET_KEY/STRIPE_API_BASE) is used as given
const configured = configuredServices();

let pgData: string | undefined;
let pgStartedHere = false;
let stopping = false;

async function shutdown(code: number): Promise<never> {
  if (stopping) process.exit(code);
  stopping = true;
  console.log('\n• Stopping Beamwarden…');
  await stopServices();
  if (pgData && pgStartedHere) {
    say('Stopping PostgreSQL');
    stopPostgres(pgData);
  }
  say('Stopped. Your data stays in ' + path.relative(ROOT, cfg.dataDir) + '/');
  process.exit(code);
}
process.on('SIGINT', () => void shutdown(0));
process.on('SIGTERM', () => void shutdown(0));

await assertPortFree(cfg.appPort, 'the app (PORT)');
const secrets = loadSecrets(cfg);
if (configured.database) {
  say('database: using DATABASE_URL (no local cluster)');
} else {
  const pgInfo = await ensurePostgres(cfg, secrets);
  pgData = pgInfo.pgData;
  pgStartedHere = pgInfo.startedHere;
}

const env = withConfiguredServices(appEnv(cfg, secrets), configured);
// the demo scenario is loaded only into the local cluster, never into a configured database
runNode(['--import', 'tsx', 'scripts/migrate.ts', ...(configured.database ? [] : ['--seed-if-empty'])], env, 'Migrating and seeding');
await startUnconfiguredFakes(cfg, configured);
Object.assign(env, await startIdentityProviderFake(cfg, 'OIDC_PORT', 9400));
buildApp(path.join(ROOT, 'dist'), env);

const app = spawnService(cfg, 'app', [path.join(ROOT, 'dist/scripts/serve.mjs')], env, true);
const worker = spawnService(cfg, 'worker', [path.join(ROOT, 'dist/scripts/worker.mjs')], env, true);
for (const s of [app, worker]) {
  s.child.once('exit', (code) => {
    if (!stopping) {
      console.error(`\n✖ The ${s.name} process stopped unexpectedly (code ${code}).`);
      void shutdown(1);
    }
  });
}
await waitForPort(cfg.appPort, 'the app', app.child);

const line = '─'.repeat(64);
console.log(`
${line}
  Beamwarden is running at  http://${HOST}:${cfg.appPort}

  Demo sign-ins (password: beamwarden-demo)
    admin@tidewater.example       admin
    instructor@tidewater.example  instructor
    steward@tidewater.example     steward
    member@tidewater.example      member
    newbie@tidewater.example      member, no clearance yet
    student@tidewater.example     member, student tier

  Services
    PostgreSQL      ${configured.database ? 'configured (DATABASE_URL)' : `${HOST}:${cfg.pgPort}  database ${cfg.dbName}`}
    Mail            ${configured.mail ? `configured (SMTP_HOST ${process.env.SMTP_HOST})` : `maildev http://${HOST}:${cfg.mailWebPort}  (SMTP ${cfg.smtpPort})`}
    Payments        ${configured.payments ? 'configured (STRIPE_SECRET_KEY)' : `fake http://${HOST}:${cfg.stripePort}`}
    Storage         ${configured.storage ? `configured (S3_ENDPOINT ${process.env.S3_ENDPOINT})` : `fake http://${HOST}:${cfg.s3Port}`}
    Health          http://${HOST}:${cfg.appPort}/readyz

  Data: ${path.relative(ROOT, cfg.dataDir)}/   Press Ctrl-C to stop everything.
${line}
`);
