/**
 * npm run backup: a pg_dump (custom format) of the Beamwarden database to
 * <BACKUP_DIR or DATA_DIR/backups>/beamwarden-<UTC timestamp>.dump, readable only by this user, and the
 * uploaded files (fault photos, safety data sheets) copied from storage into beamwarden-<stamp>.files/.
 * The files are copied after the dump: an upload is stored before its row commits, so every file the dump
 * refers to is in the copy. BACKUP_KEEP=N then keeps the newest N backups (0 or unset: all).
 * Works while `npm start` is running (a consistent snapshot; the app keeps serving); when it is not,
 * PostgreSQL is started for the backup and stopped again.
 */
import fs from 'node:fs';
import path from 'node:path';
import { ROOT, fail, say } from './lib/stack';
import { backupFiles, checkArchive, openCluster, openFileStore, pgTool, pruneBackups, userTables } from './lib/backups';

const target = await openCluster({ allowNewCluster: false });
const { cfg } = target;
try {
  const keep = Number(process.env.BACKUP_KEEP ?? '0');
  if (!Number.isInteger(keep) || keep < 0) fail('BACKUP_KEEP must be a whole number of backups to keep (0 keeps all).');
  const dir = process.env.BACKUP_DIR ? path.resolve(process.env.BACKUP_DIR) : path.join(cfg.dataDir, 'backups');
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
  const filesDir = file.replace(/\.dump$/, '.files');
  const store = await openFileStore(cfg);
  try {
    const copied = await backupFiles(store, `${filesDir}.partial`);
    fs.renameSync(`${filesDir}.partial`, filesDir);
    say(`Copied ${copied.files} uploaded file(s) (${Math.ceil(copied.bytes / 1024)} KB) from bucket ${store.bucket} into ${path.relative(ROOT, filesDir)}/`);
  } catch (err) {
    fs.rmSync(`${filesDir}.partial`, { recursive: true, force: true });
    fs.rmSync(file, { force: true });
    fail(`Copying the uploaded files failed, so this backup was removed (${(err as Error).message}).`);
  } finally {
    await store.close();
  }
  for (const removed of pruneBackups(dir, keep)) say(`Removed ${removed} (BACKUP_KEEP=${keep})`);
  say(`Restore it into an empty database with: npm run restore ${path.relative(ROOT, file)} -- --database NAME`);
} finally {
  target.done();
}
