/**
 * npm run backup: a pg_dump (custom format) of the Beamwarden database to
 * <DATA_DIR>/backups/beamwarden-<UTC timestamp>.dump, readable only by this user.
 * Works while `npm start` is running (a consistent snapshot; the app keeps serving); when it is not,
 * PostgreSQL is started for the backup and stopped again.
 */
import fs from 'node:fs';
import path from 'node:path';
import { ROOT, fail, say } from './lib/stack';
import { checkArchive, openCluster, pgTool, userTables } from './lib/backups';

const target = await openCluster({ allowNewCluster: false });
const { cfg } = target;
try {
  const dir = path.join(cfg.dataDir, 'backups');
  fs.mkdirSync(dir, { recursive: true, mode: 0o700 });
  const stamp = new Date().toISOString().replace(/[-:]/g, '').replace(/\.\d+Z$/, 'Z');
  const file = path.join(dir, `beamwarden-${stamp}.dump`);
  const partial = `${file}.partial`;
  say(`Backing up database ${cfg.dbName} on 127.0.0.1:${cfg.pgPort}`);
  const tables = await userTables(target, cfg.dbName);
  fs.writeFileSync(partial, '', { mode: 0o600 });
  const r = pgTool(target, 'pg_dump', ['--format=custom', '--compress=6', '--no-owner', '--no-privileges', `--file=${partial}`], cfg.dbName);
  if (r.status !== 0) {
    fs.rmSync(partial, { force: true });
    fail(`pg_dump failed:\n${r.out}`);
  }
  checkArchive(target, partial);
  fs.renameSync(partial, file);
  fs.chmodSync(file, 0o600);
  const kb = Math.ceil(fs.statSync(file).size / 1024);
  say(`Wrote ${path.relative(ROOT, file)} (${kb} KB, ${tables.length} tables)`);
  say(`Restore it into an empty database with: npm run restore ${path.relative(ROOT, file)} -- --database NAME`);
} finally {
  target.done();
}
