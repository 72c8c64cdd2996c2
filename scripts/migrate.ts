/**
 * Migrates the database to the latest schema, installs the job queues, and (with --seed-if-empty)
 * loads the demo scenario when the database holds nobody yet.
 */
import fs from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import knexFactory, { type Knex } from 'knex';
import config from '../knexfile';
import { installQueues } from '../src/lib/server/jobs';

const url = process.env.DATABASE_URL;
if (!url) {
  console.error('DATABASE_URL is not set');
  process.exit(1);
}
/**
 * Under tsx the migrations are read from migrations/*.ts; bundled (node dist/scripts/migrate.mjs, see
 * scripts/bundle.mjs) they are the compiled dist/migrations/*.mjs, recorded under their .ts names so both
 * ways see the same history.
 */
const bundled = import.meta.url.endsWith('.mjs');
const compiledDir = path.resolve(import.meta.dirname, '..', 'migrations');
const migrationSource: Knex.MigrationSource<string> = {
  getMigrations: async () => fs.readdirSync(compiledDir).filter((f) => f.endsWith('.mjs')).sort(),
  getMigrationName: (f) => f.replace(/\.mjs$/, '.ts'),
  getMigration: async (f) => (await import(pathToFileURL(path.join(compiledDir, f)).href)) as Knex.Migration,
};
const knex = bundled
  ? knexFactory({ client: config.client, connection: url, pool: config.pool, migrations: { tableName: 'knex_migrations', migrationSource } })
  : knexFactory({ ...config, connection: url });
if (bundled && process.argv.includes('--seed-if-empty')) {
  console.error('The demo seed runs only from the source checkout (npm start); the production migrate does not seed.');
  process.exit(1);
}
try {
  const [, applied] = (await knex.migrate.latest()) as [number, string[]];
  console.log(applied.length ? `• Applied ${applied.length} migration(s)` : '• The schema is up to date');
  const boss = await installQueues(url);
  await boss.stop({ graceful: false, wait: true });
  if (process.argv.includes('--seed-if-empty')) {
    const [{ count }] = (await knex('people').count({ count: '*' })) as [{ count: string | number }];
    if (Number(count) === 0) {
      // every seed file in one transaction: the demo is loaded whole or not at all
      const dir = path.resolve(import.meta.dirname, '..', 'seeds');
      const files = fs.readdirSync(dir).filter((f) => f.endsWith('.ts')).sort();
      await knex.transaction(async (trx) => {
        for (const f of files) {
          const mod = (await import(pathToFileURL(path.join(dir, f)).href)) as { seed: (k: typeof trx) => Promise<void> };
          await mod.seed(trx);
        }
      });
      console.log(`• Seeded the demo scenario (${files.length} seed file(s))`);
    } else {
      console.log('• The database already holds people; the demo seed was not run');
    }
  }
} finally {
  await knex.destroy();
}
