/**
 * Migrates the database to the latest schema, installs the job queues, and (with --seed-if-empty)
 * loads the demo scenario when the database holds nobody yet.
 */
import fs from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import knexFactory from 'knex';
import config from '../knexfile';
import { installQueues } from '../src/lib/server/jobs';

const url = process.env.DATABASE_URL;
if (!url) {
  console.error('DATABASE_URL is not set');
  process.exit(1);
}
const knex = knexFactory({ ...config, connection: url });
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
