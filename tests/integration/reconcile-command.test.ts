/**
 * The reconcile command as a production install runs it: the bundled `dist-test/scripts/reconcile.mjs` under plain
 * node (no tsx), against the test database and the payment fake. It keeps its run (trigger `command`), prints the
 * count, exits 0 or 1 (differences found: the payment fake lists every charge whatever the period, so another
 * file's planted charge may show) and 2 on bad arguments.
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { ROOT } from '../../scripts/lib/stack';
import { closeTestDb, testDb } from '../support/db';

afterAll(closeTestDb);

const script = path.join(ROOT, 'dist-test/scripts/reconcile.mjs');

function run(args: string[]): { status: number | null; out: string } {
  const r = spawnSync(process.execPath, [script, ...args], { cwd: ROOT, env: { ...process.env, NODE_OPTIONS: '' }, encoding: 'utf8', timeout: 120_000 });
  return { status: r.status, out: `${r.stdout}${r.stderr}` };
}

describe('node dist/scripts/reconcile.mjs', () => {
  it('is bundled by the build and needs no tsx', () => {
    expect(fs.existsSync(script)).toBe(true);
    // packages stay external (npm ci --omit=dev provides them); tsx, a devDependency, is not one of them
    expect(fs.readFileSync(script, 'utf8')).not.toMatch(/from ["']tsx|import\(["']tsx/);
  });

  it('compares a period, keeps the run and answers with its exit code', async () => {
    const before = new Date();
    const r = run(['--from', '2026-11-02', '--to', '2026-11-03']);
    expect([0, 1], r.out).toContain(r.status);
    expect(r.out).toMatch(/Reconciled 2026-11-02 – 2026-11-03: \d+ of ours, \d+ at the provider, \d+ difference\(s\)\./);
    const kept = await testDb()('reconciliation_runs').where({ trigger: 'command' }).where('created_at', '>=', before).first('id', 'mismatches');
    expect(kept).toBeTruthy();
    expect(r.status).toBe((kept.mismatches as unknown[]).length > 0 ? 1 : 0);
  });

  it('refuses bad arguments with exit code 2 and the usage', () => {
    const r = run(['--from', '2026-11-03', '--to', '2026-11-02']);
    expect(r.status).toBe(2);
    expect(r.out).toContain('node dist/scripts/reconcile.mjs');
  });
});
