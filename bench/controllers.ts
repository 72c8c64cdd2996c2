/**
 * npm run bench -- controllers: how fast the controller API answers a badge while 20 controllers hold their state
 * long-polls open, and how fast a change reaches every waiting box. Not a test: it measures and prints, and appends
 * nothing to bench/RESULTS.md (copy the table into bench/README.md by hand). Own database (beamwarden_bench_ctrl)
 * and ports.
 *
 * Environment (all optional): BENCH_CTRL_PORT, BENCH_CTRL_PG_PORT, BENCH_CTRL_DATA_DIR, BENCH_CTRL_CONTROLLERS
 * (default 20), BENCH_CTRL_ROUNDS (denials per controller, default 50), BENCH_CTRL_CYCLES (walk-up check-in and
 * release cycles per controller, default 10).
 */
import { createHash, randomBytes } from 'node:crypto';
import path from 'node:path';
import { performance } from 'node:perf_hooks';
import pg from 'pg';
import {
  ROOT, HOST, appEnv, buildApp, databaseUrl, recreateDatabase, runNode, say, spawnService, waitForPort,
} from '../scripts/lib/stack';
import { addClearedPeople, benchConfig, benchStack } from './setup';

const cfg = benchConfig('BENCH_CTRL', { dataDir: '.data/bench-controllers', appPort: 4343, pgPort: 54351, smtpPort: 1137, mailWebPort: 1192, stripePort: 12133, s3Port: 4591, dbName: 'beamwarden_bench_ctrl' });
const N = Number(process.env.BENCH_CTRL_CONTROLLERS ?? 20);
const ROUNDS = Number(process.env.BENCH_CTRL_ROUNDS ?? 50);
const CYCLES = Number(process.env.BENCH_CTRL_CYCLES ?? 10);
const APP = `http://${HOST}:${cfg.appPort}`;

const { secrets, cleanup } = await benchStack(cfg, 'BENCH_CTRL_PORT');
await recreateDatabase(cfg, secrets, cfg.dbName);
const env = appEnv(cfg, secrets, { DATABASE_POOL_MAX: '20' });
runNode(['--import', 'tsx', 'scripts/migrate.ts', '--seed-if-empty'], env, 'Migrating and seeding the controller bench database');

const pool = new pg.Pool({ connectionString: databaseUrl(cfg, secrets), max: 4 });
const q = (text: string, values: unknown[] = []) => pool.query(text, values);
const sha = (s: string) => createHash('sha256').update(s).digest('hex');

// --- N machines like Laser B (air-cooled: no chiller reading), open all day; one controller, person and badge each ---
say(`Adding ${N} machines, controllers, people and badges`);
await q(`INSERT INTO machines (code, name, group_id, required_level, power_w, tube_type, wavelength_um, bed_width_mm, bed_depth_mm, beam_diameter_mm, divergence_mrad, lens_focal_mm, coolant_type)
         SELECT 'gate-' || i, 'Gate laser ' || i, group_id, required_level, power_w, tube_type, wavelength_um, bed_width_mm, bed_depth_mm, beam_diameter_mm, divergence_mrad, lens_focal_mm, coolant_type
         FROM machines, generate_series(1, $1::int) i WHERE code = 'laser-b'`, [N]);
await q(`INSERT INTO opening_hours (machine_id, weekday, opens_minute, closes_minute) SELECT m.id, d, 0, 1440 FROM machines m, generate_series(1, 7) d WHERE m.code LIKE 'gate-%'`);
await addClearedPeople(q, 'gate', 'Gate person', N);
const machines = (await q(`SELECT id, code FROM machines WHERE code LIKE 'gate-%' ORDER BY code`)).rows as { id: string; code: string }[];
const people = (await q(`SELECT id FROM people WHERE email LIKE 'gate%' ORDER BY email`)).rows as { id: string }[];
const boxes: { token: string; badge: string; machineId: string }[] = [];
for (let i = 0; i < N; i++) {
  const token = `bwc_${randomBytes(32).toString('base64url')}`;
  const badge = randomBytes(7).toString('hex').toUpperCase();
  await q(`INSERT INTO controllers (machine_id, name, token_hash) VALUES ($1, $2, $3)`, [machines[i]!.id, `Bench box ${i + 1}`, sha(token)]);
  await q(`INSERT INTO badges (person_id, badge_hash, last_four) VALUES ($1, $2, $3)`, [people[i]!.id, sha(`beamwarden-badge:${badge}`), badge.slice(-4)]);
  boxes.push({ token, badge, machineId: machines[i]!.id });
}

buildApp(path.join(ROOT, 'dist-bench'), env);
const app = spawnService(cfg, 'app', [path.join(ROOT, 'dist-bench/scripts/serve.mjs')], env);
await waitForPort(cfg.appPort, 'the bench app', app.child);

async function call(token: string, method: string, p: string, body?: unknown): Promise<{ ms: number; status: number; data: any }> {
  const t = performance.now();
  const res = await fetch(`${APP}${p}`, { method, headers: { authorization: `Bearer ${token}`, ...(body ? { 'content-type': 'application/json' } : {}) }, body: body ? JSON.stringify(body) : undefined });
  const data = await res.json();
  return { ms: performance.now() - t, status: res.status, data };
}

const pct = (xs: number[], p: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.max(0, Math.ceil((p / 100) * s.length) - 1))]!;
};
const row = (what: string, xs: number[]) => `| ${what} | ${xs.length} | ${pct(xs, 50).toFixed(1)} ms | ${pct(xs, 99).toFixed(1)} ms | ${Math.max(...xs).toFixed(1)} ms |`;

// --- 20 controllers long-polling their state the whole time ---------------------------------------------
let polling = true;
const cutSeen = new Map<number, number>();
const pollers = boxes.map(async (b, i) => {
  while (polling) {
    const r = await call(b.token, 'GET', '/api/controller/state?wait=25').catch(() => null);
    if (r?.data?.state === 'cut' && r.data.reason === 'machine_out_of_service' && !cutSeen.has(i)) cutSeen.set(i, performance.now());
  }
});
// warm-up: one call per box (the first answer of a long-poll comes at once), JIT and pools
for (const b of boxes) await call(b.token, 'POST', '/api/controller/authorize', { badge: 'FFFF0000' });
await new Promise((r) => setTimeout(r, 500));

// --- denials: a cleared person with no booking, walk-ups off (the whole rule chain down to the opening hours) ---
say(`Authorise, denied (no booking): ${N} controllers × ${ROUNDS}`);
const denied: number[] = [];
await Promise.all(boxes.map(async (b) => {
  for (let k = 0; k < ROUNDS; k++) {
    const r = await call(b.token, 'POST', '/api/controller/authorize', { badge: b.badge });
    if (r.data.allow !== false || r.data.reason !== 'no_booking') throw new Error(`unexpected answer ${JSON.stringify(r.data)}`);
    denied.push(r.ms);
  }
}));
const unknown: number[] = [];
await Promise.all(boxes.map(async (b, i) => {
  for (let k = 0; k < ROUNDS; k++) unknown.push((await call(b.token, 'POST', '/api/controller/authorize', { badge: `AB${i}${k}CDEF` })).ms);
}));

// --- allows: walk-up check-in (booking + session through sessions.checkIn), badge again, release ---------
await q(`UPDATE site_settings SET walk_ups_allowed = true`);
say(`Authorise, allowed (walk-up check-in): ${N} controllers × ${CYCLES} cycles`);
const allowCheckIn: number[] = [];
const again: number[] = [];
const released: number[] = [];
await Promise.all(boxes.map(async (b) => {
  for (let k = 0; k < CYCLES; k++) {
    const a = await call(b.token, 'POST', '/api/controller/authorize', { badge: b.badge });
    if (!a.data.allow) throw new Error(`walk-up refused: ${JSON.stringify(a.data)}`);
    allowCheckIn.push(a.ms);
    again.push((await call(b.token, 'POST', '/api/controller/authorize', { badge: b.badge })).ms);
    await call(b.token, 'POST', '/api/controller/heartbeat', { sessionId: a.data.sessionId, beamSeconds: 30 });
    const r = await call(b.token, 'POST', '/api/controller/release', { sessionId: a.data.sessionId, beamSeconds: 45 });
    if (r.status !== 200) throw new Error(`release failed: ${JSON.stringify(r.data)}`);
    released.push(r.ms);
  }
}));

// --- a change reaching every waiting box: all 20 machines out of service in one statement ---------------
await new Promise((r) => setTimeout(r, 1000));
const tChange = performance.now();
await q(`UPDATE machines SET status = 'out of service' WHERE code LIKE 'gate-%'`);
const deadline = Date.now() + 10_000;
while (cutSeen.size < N && Date.now() < deadline) await new Promise((r) => setTimeout(r, 10));
const reach = [...cutSeen.values()].map((t) => t - tChange);
polling = false;

const lines = [
  `Controller bench, ${new Date().toISOString().slice(0, 16)}Z, ${N} controllers long-polling GET /api/controller/state?wait=25 throughout (one request in flight per controller otherwise)`,
  '',
  '| call | requests | p50 | p99 | slowest |',
  '| --- | --- | --- | --- | --- |',
  row('authorise → deny `no_booking` (cleared person, no booking, walk-ups off)', denied),
  row('authorise → deny `unknown_badge` (listed for the stewards)', unknown),
  row('authorise → allow, walk-up check-in (booking + session + audit)', allowCheckIn),
  row('authorise → allow, badge again on the open session', again),
  row('release (check-out, measured beam time, charge attempt)', released),
  reach.length ? row(`out of service → \`cut\` reaching the waiting long-polls (${reach.length} of ${N})`, reach) : `| out of service → cut | 0 of ${N} arrived in 10 s | | | |`,
];
console.log(`\n${lines.join('\n')}\n`);
await Promise.race([Promise.all(pollers), new Promise((r) => setTimeout(r, 30_000))]);
await pool.end();
await cleanup();
process.exit(0);
