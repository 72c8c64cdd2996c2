/**
 * npm start: PostgreSQL, the local fakes, migrations, the demo seed (only into an empty database),
 * the app and the worker — all on 127.0.0.1. Ctrl-C stops everything this run started.
 */
import path from 'node:path';
import {
  ROOT, HOST, appEnv, assertPortFree, buildApp, ensurePostgres, loadSecrets, runNode,
  say, spawnService, startFakes, startIdentityProviderFake, stopPostgres, stopServices, waitForPort, demoConfig,
} from './lib/stack';

const cfg = demoConfig();

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
const pgInfo = await ensurePostgres(cfg, secrets);
pgData = pgInfo.pgData;
pgStartedHere = pgInfo.startedHere;

const env = appEnv(cfg, secrets);
runNode(['--import', 'tsx', 'scripts/migrate.ts', '--seed-if-empty'], env, 'Migrating and seeding');
await startFakes(cfg);
Object.assign(env, await startIdentityProviderFake(cfg, 'OIDC_PORT', 9400));
buildApp(path.join(ROOT, 'dist'), env);

const app = spawnService(cfg, 'app', [path.join(ROOT, 'dist/server/entry.mjs')], env, true);
const worker = spawnService(cfg, 'worker', ['--import', 'tsx', path.join(ROOT, 'scripts/worker.ts')], env, true);
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

  Local services (loopback only)
    PostgreSQL      ${HOST}:${cfg.pgPort}  database ${cfg.dbName}
    Mail (maildev)  http://${HOST}:${cfg.mailWebPort}  (SMTP ${cfg.smtpPort})
    Payments fake   http://${HOST}:${cfg.stripePort}
    Storage fake    http://${HOST}:${cfg.s3Port}

  Data: ${path.relative(ROOT, cfg.dataDir)}/   Press Ctrl-C to stop everything.
${line}
`);
