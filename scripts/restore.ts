/**
 * npm run restore FILE [-- --database NAME]: restores a backup made by `npm run backup` into an EMPTY
 * database, in one transaction (all or nothing), then puts back the uploaded files saved beside it
 * (beamwarden-<stamp>.files/) that the storage bucket is missing; files already there are left as they are.
 *
 * The target is PG_DATABASE (default `beamwarden`, the demo's) or --database NAME. A target that does
 * not exist is created here, owned by the app role. A target that holds any table is refused: restore
 * never mixes a backup into live data or overwrites it. To replace a damaged database, restore into a
 * new name and start the app on it (`PG_DATABASE=NAME npm start`), or stop `npm start`, drop the old
 * database yourself, and restore.
 */
import fs from 'node:fs';
import path from 'node:path';
import { ROOT, ensureDatabase, fail, say } from './lib/stack';
import { checkArchive, openCluster, openFileStore, pgTool, restoreFiles, userTables } from './lib/backups';

const args = process.argv.slice(2);
let file: string | undefined;
let database: string | undefined;
for (let i = 0; i < args.length; i++) {
  const a = args[i]!;
  if (a === '--database') database = args[++i];
  else if (a.startsWith('--database=')) database = a.slice('--database='.length);
  else if (a.startsWith('--')) fail(`Unknown option ${a}. Usage: npm run restore FILE [-- --database NAME]`);
  else if (!file) file = a;
  else fail('Give one backup file. Usage: npm run restore FILE [-- --database NAME]');
}
if (!file) fail('Which backup? Usage: npm run restore FILE [-- --database NAME] (backups are in .data/backups/).');
const archive = path.resolve(process.cwd(), file);
if (!fs.existsSync(archive) || !fs.statSync(archive).isFile()) fail(`${file} does not exist.`);
if (database !== undefined && !/^[a-z_][a-z0-9_]{0,62}$/.test(database)) {
  fail('A database name uses lower-case letters, digits and _ (at most 63), starting with a letter or _.');
}

// A cluster that does not exist yet is created: restoring onto a new machine is the point of a backup.
const target = await openCluster({ allowNewCluster: true });
const name = database ?? target.cfg.dbName;
try {
  checkArchive(target, archive);
  const created = await ensureDatabase(target.cfg, target.secrets, name);
  if (created) say(`Created the empty database ${name}`);
  const existing = await userTables(target, name);
  if (existing.length > 0) {
    fail(
      `The database ${name} already holds ${existing.length} table(s) (${existing.slice(0, 4).join(', ')}${existing.length > 4 ? ', …' : ''}).\n` +
        '  Restore writes only into an empty database, so nothing is mixed or overwritten. Either:\n' +
        `    - restore into a new database:  npm run restore ${path.relative(ROOT, archive)} -- --database ${name}_restored\n` +
        `      and start the app on it:      PG_DATABASE=${name}_restored npm start\n` +
        `    - or stop npm start, drop ${name} yourself, and run this again.`,
    );
  }
  say(`Restoring ${path.relative(ROOT, archive)} into ${name} on 127.0.0.1:${target.cfg.pgPort}`);
  const r = pgTool(target, 'pg_restore', ['--no-owner', '--no-privileges', '--exit-on-error', '--single-transaction', `--dbname=${name}`, archive], name);
  if (r.status !== 0) fail(`pg_restore failed; nothing was restored (one transaction):\n${r.out}`);
  const tables = await userTables(target, name);
  say(`Restored ${tables.length} tables into ${name}.${name !== target.cfg.dbName ? ` Start the app on it with PG_DATABASE=${name} npm start.` : ''}`);
  const filesDir = archive.replace(/\.dump$/, '.files');
  if (fs.existsSync(path.join(filesDir, 'manifest.json'))) {
    const store = await openFileStore(target.cfg);
    try {
      const r = await restoreFiles(store, filesDir);
      say(`Restored ${r.restored} uploaded file(s) into bucket ${store.bucket} (${r.present} were already there)`);
    } finally {
      await store.close();
    }
  } else {
    say('This backup has no uploaded files beside it (made before files were backed up): only the database was restored.');
  }
} finally {
  target.done();
}
