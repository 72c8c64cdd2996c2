/**
 * What both benches (run.ts, controllers.ts) do first and last: their own PostgreSQL cluster (started here when it is
 * not running, stopped again at the end or on Ctrl-C) and the bench people they book and badge with.
 */
import type pg from 'pg';
import { assertPortFree, ensurePostgres, loadSecrets, readConfig, stopPostgres, stopServices, type StackConfig } from '../scripts/lib/stack';

/** A bench's ports and data folder, each from `<prefix>_PORT`, `<prefix>_PG_PORT`, … `<prefix>_DATA_DIR` or its default. */
export function benchConfig(prefix: string, defaults: Parameters<typeof readConfig>[2]): StackConfig {
  return readConfig(
    'bench',
    {
      dataDir: `${prefix}_DATA_DIR`, appPort: `${prefix}_PORT`, pgPort: `${prefix}_PG_PORT`, smtpPort: `${prefix}_SMTP_PORT`,
      mailWebPort: `${prefix}_MAIL_WEB_PORT`, stripePort: `${prefix}_STRIPE_PORT`, s3Port: `${prefix}_S3_PORT`,
    },
    defaults,
  );
}

/** Checks the bench app's port is free (named by `portVar` in the message) and makes sure the cluster runs. */
export async function benchStack(cfg: StackConfig, portVar: string) {
  let pgData: string | undefined;
  let pgStartedHere = false;
  async function cleanup() {
    await stopServices();
    if (pgData && pgStartedHere) stopPostgres(pgData);
  }
  process.on('SIGINT', () => void cleanup().then(() => process.exit(130)));

  await assertPortFree(cfg.appPort, `the bench app (${portVar})`);
  const secrets = loadSecrets(cfg);
  const info = await ensurePostgres(cfg, secrets);
  pgData = info.pgData;
  pgStartedHere = info.startedHere;
  return { secrets, cleanup, pgData: info.pgData };
}

/**
 * `count` people `<prefix><i>@tidewater.example` named `<name> <i>` with the demo member's password, on the
 * commercial tier, members, cleared (advanced) on every machine group so the clearance gate lets them through.
 */
export async function addClearedPeople(q: (text: string, values?: unknown[]) => Promise<pg.QueryResult>, prefix: string, name: string, count: number): Promise<void> {
  await q(`INSERT INTO people (email, name, password_hash, tier)
           SELECT $2::text || i || '@tidewater.example', $3::text || ' ' || i, (SELECT password_hash FROM people WHERE email = 'member@tidewater.example'), 'commercial'
           FROM generate_series(1, $1::int) i`, [count, prefix, name]);
  await q(`INSERT INTO role_grants (person_id, role) SELECT id, 'member' FROM people WHERE email LIKE $1::text || '%'`, [prefix]);
  await q(`INSERT INTO clearances (person_id, group_id, state, level, quiz_passed_at, cleared_at, expires_at)
           SELECT p.id, g.id, 'cleared', 'advanced', now(), now(), now() + interval '1 year'
           FROM people p CROSS JOIN machine_groups g WHERE p.email LIKE $1::text || '%'`, [prefix]);
}
