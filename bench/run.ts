/**
 * npm run bench: booking throughput and the week-view feed against 1 M historical bookings, each as a
 * ratio to the same work done in raw SQL through `pg`. Not a test: it measures, prints, and writes
 * bench/RESULTS.md. Uses its own PostgreSQL database (beamwarden_bench) on its own ports.
 *
 * Environment (all optional): BENCH_PORT, BENCH_PG_PORT, BENCH_DATA_DIR, BENCH_HISTORY (default 1000000),
 * BENCH_REQUESTS (default 3200), BENCH_SECONDS (default 10), BENCH_CONNECTIONS (default 32),
 * BENCH_APP_NODE_ARGS (extra node options for the app, e.g. "--cpu-prof --cpu-prof-dir=.data/bench/prof"),
 * BENCH_REUSE=1 (keep the database of an earlier run when it holds the same history: its bench bookings in the
 * future are deleted and new migrations applied, which saves generating the history again).
 */
import fs from 'node:fs';
import path from 'node:path';
import pg from 'pg';
import autocannon from 'autocannon';
import {
  ROOT, HOST, appEnv, buildApp, databaseUrl, recreateDatabase, logDir, runNode, say, spawnService, waitForPort,
} from '../scripts/lib/stack';
import { addClearedPeople, benchConfig, benchStack } from './setup';
import { readStatements, resetStatements, statementStats, statementTable } from './statements';

const cfg = benchConfig('BENCH', { dataDir: '.data/bench', appPort: 4341, pgPort: 54349, smtpPort: 1135, mailWebPort: 1190, stripePort: 12131, s3Port: 4589, dbName: 'beamwarden_bench' });
const HISTORY = Number(process.env.BENCH_HISTORY ?? 1_000_000);
const REQUESTS = Number(process.env.BENCH_REQUESTS ?? 3200);
const SECONDS = Number(process.env.BENCH_SECONDS ?? 10);
const CONNECTIONS = Number(process.env.BENCH_CONNECTIONS ?? 32);
const PEOPLE = 32;
const APP = `http://${HOST}:${cfg.appPort}`;

// CPU seconds (user + system) of a process, and of PostgreSQL's processes (the children of the bench's postmaster),
// from /proc: unlike req/s these hardly move with what else runs on the machine. Linux only; null elsewhere.
const CLK_TCK = 100; // getconf CLK_TCK on Linux
function cpuOf(pid: number | undefined): number | null {
  try {
    const stat = fs.readFileSync(`/proc/${pid}/stat`, 'utf8');
    const f = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return (Number(f[11]) + Number(f[12])) / CLK_TCK;
  } catch {
    return null;
  }
}
function postgresCpu(): number | null {
  try {
    const postmaster = Number(fs.readFileSync(path.resolve(ROOT, cfg.dataDir, 'pg', 'postmaster.pid'), 'utf8').split('\n')[0]);
    // the postmaster's own CPU, with that of its children already ended (cutime + cstime), then the live children's
    let sum = 0;
    const own = fs.readFileSync(`/proc/${postmaster}/stat`, 'utf8');
    const f = own.slice(own.lastIndexOf(')') + 2).split(' ');
    sum += (Number(f[11]) + Number(f[12]) + Number(f[13]) + Number(f[14])) / CLK_TCK;
    for (const d of fs.readdirSync('/proc')) {
      if (!/^\d+$/.test(d)) continue;
      try {
        const stat = fs.readFileSync(`/proc/${d}/stat`, 'utf8');
        if (Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[1]) === postmaster) sum += cpuOf(Number(d)) ?? 0;
      } catch {
        // gone meanwhile
      }
    }
    return sum;
  } catch {
    return null;
  }
}
/** CPU used by the app process and by PostgreSQL while `work` runs. */
async function cpuDuring<T>(appPid: number | undefined | (number | undefined)[], work: () => Promise<T>): Promise<{ result: T; app: number | null; pg: number | null }> {
  const pids = Array.isArray(appPid) ? appPid : [appPid];
  const appCpu = () => pids.reduce<number | null>((sum, pid) => (sum === null ? null : ((c) => (c === null ? null : sum + c))(cpuOf(pid))), 0);
  const a0 = appCpu();
  const p0 = postgresCpu();
  const result = await work();
  const a1 = appCpu();
  const p1 = postgresCpu();
  return { result, app: a0 === null || a1 === null ? null : a1 - a0, pg: p0 === null || p1 === null ? null : p1 - p0 };
}
/** What this bench reads of an autocannon result. */
type Cannon = { requests: { total: number; average: number }; duration: number; latency: { p50: number; p99: number }; '2xx': number; statusCodeStats?: Record<string, { count: number }> };
const perRequest = (seconds: number | null, n: number) => (seconds === null || !n ? 'n/a' : `${((seconds * 1000) / n).toFixed(2)} ms`);

const { secrets, cleanup, pgData } = await benchStack(cfg, 'BENCH_PORT');
const STATEMENTS = process.env.BENCH_STATEMENTS === '1';
await statementStats(cfg, secrets, pgData, STATEMENTS);
const REUSE = process.env.BENCH_REUSE === '1';
/** An earlier run's database with the same history (its bench people and HISTORY completed bookings), when BENCH_REUSE=1. */
async function earlierHistory(): Promise<boolean> {
  if (!REUSE) return false;
  const probe = new pg.Client({ connectionString: databaseUrl(cfg, secrets) });
  try {
    await probe.connect();
    const r = await probe.query(`SELECT (SELECT count(*) FROM people WHERE email LIKE 'bench%')::int AS people,
                                        (SELECT count(*) FROM bookings WHERE state = 'completed' AND created_at < now() - interval '1 day')::int AS history`);
    return r.rows[0].people === PEOPLE && r.rows[0].history >= HISTORY;
  } catch {
    return false;
  } finally {
    await probe.end().catch(() => undefined);
  }
}
const reuse = await earlierHistory();
if (!reuse) await recreateDatabase(cfg, secrets, cfg.dbName);
const POOL = process.env.BENCH_POOL ?? '20';
const ONLY_BOOKING = process.env.BENCH_ONLY === 'booking';
const ONLY_FEED = process.env.BENCH_ONLY === 'feed';
const env = appEnv(cfg, secrets, { DATABASE_POOL_MAX: POOL });
runNode(['--import', 'tsx', 'scripts/migrate.ts', ...(reuse ? [] : ['--seed-if-empty'])], env, 'Migrating and seeding the bench database');

const pool = new pg.Pool({ connectionString: databaseUrl(cfg, secrets), max: CONNECTIONS });
const q = (text: string, values: unknown[] = []) => pool.query(text, values);

let historySeconds = 0;
if (reuse) {
  say('Reusing the history of an earlier run (BENCH_REUSE=1): deleting its bench bookings in the future');
  await q(`DELETE FROM bookings WHERE starts_at > now() AND person_id IN (SELECT id FROM people WHERE email LIKE 'bench%')`);
  // and the jobs both sides queued (no worker runs here), so each run inserts into job tables of the same size
  await q(`DELETE FROM pgboss.job WHERE name IN ('booking.confirm', 'payments.intent')`);
  await q('VACUUM ANALYZE bookings');
} else {
  // --- the data: bench people, open-all-day rules without quotas, then the history ------------------------
  say(`Generating ${HISTORY.toLocaleString('en')} historical bookings with generate_series`);
  // cleared (advanced) on every machine group, so the clearance gate lets them book: its check is part of the work measured
  await addClearedPeople(q, 'bench', 'Bench person', PEOPLE);
  await q(`UPDATE machine_booking_rules SET horizon_days = 365, min_minutes = 15, max_minutes = 180, lead_minutes = 0, buffer_minutes = 10, slot_minutes = 15`);
  await q(`DELETE FROM machine_tier_quotas`);
  await q(`DELETE FROM opening_hours`);
  await q(`INSERT INTO opening_hours (machine_id, weekday, opens_minute, closes_minute) SELECT m.id, d, 0, 1440 FROM machines m, generate_series(1, 7) d`);
  // 17 more machines like Laser A, so the history spreads over 20 machines (about 7 years of 75-minute turns each)
  await q(`INSERT INTO machines (code, name, power_w, tube_type, wavelength_um, bed_width_mm, bed_depth_mm, beam_diameter_mm, divergence_mrad, lens_focal_mm, coolant_type)
           SELECT 'bench-' || i, 'Bench laser ' || i, power_w, tube_type, wavelength_um, bed_width_mm, bed_depth_mm, beam_diameter_mm, divergence_mrad, lens_focal_mm, coolant_type
           FROM machines, generate_series(1, 17) i WHERE code = 'laser-a'`);
  const t0 = Date.now();
  await q(`
    INSERT INTO bookings (machine_id, person_id, kind, state, starts_at, ends_at, occupied_until, checked_in_at, created_at)
    SELECT m.ids[1 + i % 20], p.ids[1 + i % array_length(p.ids, 1)], 'personal', 'completed',
           t.s, t.s + interval '1 hour', t.s + interval '70 minutes', t.s, t.s - interval '2 days'
    FROM generate_series(1, $1::int) i
    CROSS JOIN (SELECT array_agg(id ORDER BY code) AS ids FROM machines) m
    CROSS JOIN (SELECT array_agg(id) AS ids FROM people) p
    CROSS JOIN LATERAL (SELECT date_trunc('hour', now()) - interval '2 days' - (i / 20) * interval '75 minutes' AS s) t`, [HISTORY]);
  await q('ANALYZE bookings');
  historySeconds = (Date.now() - t0) / 1000;
  const span = (await q(`SELECT min(starts_at) AS a, max(starts_at) AS b, count(*)::int AS n FROM bookings`)).rows[0];
  say(`  ${span.n.toLocaleString('en')} bookings from ${span.a.toISOString().slice(0, 10)} to ${span.b.toISOString().slice(0, 10)} in ${historySeconds.toFixed(1)} s`);
}

buildApp(path.join(ROOT, 'dist-bench'), env);
// the app's log from here on: each request's line says its route, duration and SQL statements (queries)
const appLog = path.join(logDir(cfg), 'app.log');
const appLogFrom = fs.existsSync(appLog) ? fs.statSync(appLog).size : 0;
const nodeArgs = (process.env.BENCH_APP_NODE_ARGS ?? '').split(' ').filter(Boolean);
const app = spawnService(cfg, 'app', [...nodeArgs, path.join(ROOT, 'dist-bench/scripts/serve.mjs')], { ...env, LOG_FORMAT: 'json' });
await waitForPort(cfg.appPort, 'the bench app', app.child);
// BENCH_APP_PROCESSES=2: more app processes on the next ports, for the booking part (its clients split between them)
const PROCESSES = Math.max(1, Number(process.env.BENCH_APP_PROCESSES ?? 1));
const moreApps = [];
for (let i = 1; i < PROCESSES; i++) {
  const more = spawnService(cfg, `app${i + 1}`, [...nodeArgs, path.join(ROOT, 'dist-bench/scripts/serve.mjs')], { ...env, PORT: String(cfg.appPort + i), LOG_FORMAT: 'json' });
  await waitForPort(cfg.appPort + i, `bench app ${i + 1}`, more.child);
  moreApps.push(more);
}
const appPids = [app.child.pid, ...moreApps.map((a) => a.child.pid)];

// --- sign in the bench people (Auth.js credentials flow) ------------------------------------------------
async function signIn(email: string): Promise<string> {
  const jar = new Map<string, string>();
  const keep = (res: Response) => {
    for (const raw of res.headers.getSetCookie()) {
      const [pair] = raw.split(';');
      const i = pair!.indexOf('=');
      jar.set(pair!.slice(0, i), pair!.slice(i + 1));
    }
  };
  const cookie = () => [...jar].map(([k, v]) => `${k}=${v}`).join('; ');
  const r1 = await fetch(`${APP}/api/auth/csrf`);
  keep(r1);
  const { csrfToken } = (await r1.json()) as { csrfToken: string };
  const r2 = await fetch(`${APP}/api/auth/callback/credentials`, {
    method: 'POST',
    redirect: 'manual',
    headers: { 'content-type': 'application/x-www-form-urlencoded', origin: APP, cookie: cookie() },
    body: new URLSearchParams({ csrfToken, email, password: 'beamwarden-demo', callbackUrl: '/' }),
  });
  keep(r2);
  if (![...jar.keys()].some((k) => k.includes('session-token'))) throw new Error(`sign-in failed for ${email}`);
  return cookie();
}
const cookies: string[] = [];
for (let i = 1; i <= PEOPLE; i++) cookies.push(await signIn(`bench${i}@tidewater.example`));
const machines = (await q(`SELECT id FROM machines WHERE code LIKE 'laser-%' ORDER BY code`)).rows.map((r) => r.id as string);
const people = (await q(`SELECT id FROM people WHERE email LIKE 'bench%' ORDER BY email`)).rows.map((r) => r.id as string);

// booking k: machine k % 3, 15 minutes, slots 30 minutes apart (cool-down 10 min), from a base in the future
const HOUR = 3_600_000;
const slot = (base: number, k: number) => {
  const startsAt = new Date(base + Math.floor(k / 3) * 30 * 60_000);
  return { machineId: machines[k % 3]!, startsAt, endsAt: new Date(startsAt.getTime() + 15 * 60_000) };
};
// past the demo seed's bookings (most up to 7 days ahead; the induction class block on Laser C 8–10 days ahead took
// four of the bench's slots, answered 409 slot_taken), so no request meets a seeded slot
const seededUntil = (await q(`SELECT max(occupied_until) AS t FROM bookings WHERE occupied_until > now() AND person_id NOT IN (SELECT id FROM people WHERE email LIKE 'bench%')`)).rows[0]?.t as Date | null;
const baseApi = Math.max(Math.ceil(Date.now() / HOUR) * HOUR + 8 * 24 * HOUR, seededUntil ? Math.ceil(seededUntil.getTime() / HOUR) * HOUR : 0);
const baseSql = baseApi + 120 * 24 * HOUR;

if (ONLY_FEED) {
  // BENCH_ONLY=feed: the week feed alone (for comparing runs of it); nothing is written to bench/RESULTS.md
  if (STATEMENTS) await resetStatements(cfg, secrets);
  const f = await feedPart();
  const feedStatements = STATEMENTS ? ['', `PostgreSQL for both sides of the feed (pg_stat_statements; a unit is one API request: ${f.apiFeed.requests.total} API requests, ${f.feedCount} raw queries):`, '', ...statementTable(await readStatements(cfg, secrets), f.apiFeed.requests.total)] : [];
  console.log(['', `Run ${new Date().toISOString()} · week feed only · pool ${POOL} · ${CONNECTIONS} clients · ${f.sample.bookings.length} bookings in the week`,
    `API ${f.apiFeed.requests.average.toFixed(0)} req/s (p50 ${f.apiFeed.latency.p50} ms, p99 ${f.apiFeed.latency.p99} ms) ÷ raw SQL ${f.sqlFeedRps.toFixed(0)} queries/s = ${(f.apiFeed.requests.average / f.sqlFeedRps).toFixed(2)}`,
    `CPU per feed: app ${perRequest(f.apiFeedRun.app, f.apiFeed.requests.total)}, PostgreSQL ${perRequest(f.apiFeedRun.pg, f.apiFeed.requests.total)} per API request; PostgreSQL ${perRequest(f.sqlFeedRun.pg, f.feedCount)} per raw-SQL query`,
    ...feedStatements, ''].join('\n'));
  await pool.end();
  await cleanup();
  process.exit(0);
}

// --- 1. booking creation: API under autocannon -------------------------------------------------------------
say(`Booking creation through the API: ${REQUESTS} requests, ${CONNECTIONS} connections`);
let k = 0;
const statementRows: string[] = [];
if (STATEMENTS) await resetStatements(cfg, secrets);
const createOn = (i: number): Promise<Cannon> => autocannon({
  url: `http://${HOST}:${cfg.appPort + i}`,
  connections: Math.ceil(CONNECTIONS / PROCESSES),
  amount: Math.ceil(REQUESTS / PROCESSES),
  requests: [
    {
      method: 'POST',
      path: '/api/bookings',
      setupRequest: (req: Record<string, unknown>) => {
        const n = k++;
        const s = slot(baseApi, n);
        return {
          ...req,
          headers: { 'content-type': 'application/json', origin: `http://${HOST}:${cfg.appPort + i}`, cookie: cookies[n % PEOPLE]! },
          body: JSON.stringify({ machineId: s.machineId, startsAt: s.startsAt.toISOString(), endsAt: s.endsAt.toISOString(), materials: [], notes: '' }),
        };
      },
    },
  ],
});
/** The processes' autocannon results as one: counts added, the longest duration, the mean p50 and the worst p99. */
const mergeCannons = (parts: Cannon[]): Cannon => parts.length === 1 ? parts[0]! : {
  requests: { total: parts.reduce((a, p) => a + p.requests.total, 0), average: parts.reduce((a, p) => a + p.requests.average, 0) },
  duration: Math.max(...parts.map((p) => p.duration)),
  latency: { p50: Math.round(parts.reduce((a, p) => a + p.latency.p50, 0) / parts.length), p99: Math.max(...parts.map((p) => p.latency.p99)) },
  '2xx': parts.reduce((a, p) => a + p['2xx'], 0),
  statusCodeStats: parts.reduce<Record<string, { count: number }>>((all, p) => {
    for (const [code, v] of Object.entries(p.statusCodeStats ?? {})) all[code] = { count: (all[code]?.count ?? 0) + v.count };
    return all;
  }, {}),
};
const apiCreateRun = await cpuDuring(appPids, async () => mergeCannons(await Promise.all(Array.from({ length: PROCESSES }, (_, i) => createOn(i)))));
const apiCreate = apiCreateRun.result;
if (STATEMENTS) statementRows.push('', `PostgreSQL per API booking (pg_stat_statements, ${apiCreate['2xx']} bookings; times are wall clock inside PostgreSQL):`, '', ...statementTable(await readStatements(cfg, secrets), apiCreate['2xx'] || 1));
const created = Number((await q(`SELECT count(*)::int AS n FROM bookings WHERE state = 'reserved' AND starts_at >= $1 AND starts_at < $2`, [new Date(baseApi), new Date(baseSql)])).rows[0].n);

// --- 1'. the same work in raw SQL through pg: lock, clearance, failed payment, rule reads, overlap, quota, insert,
// audit, and the two jobs the API queues with every booking (its confirmation e-mail and its card hold), as plain
// inserts with the queues' retry policies. The API reads the rules from memory (under a stamp) and also reads the
// person and their roles for the session, and what the hold notice needs; the raw side reads the rules every time.

say(`Booking creation in raw SQL: ${REQUESTS} transactions, ${CONNECTIONS} clients`);
async function sqlBooking(n: number): Promise<void> {
  const s = slot(baseSql, n);
  const person = people[n % PEOPLE]!;
  const c = await pool.connect();
  try {
    await c.query('BEGIN');
    await c.query(`SELECT id, status FROM machines WHERE id = $1 FOR SHARE`, [s.machineId]);
    await c.query(`SELECT EXISTS (SELECT 1 FROM charges WHERE person_id = $1 AND state = 'payment failed')`, [person]);
    await c.query(`SELECT c.state, c.level, c.expires_at FROM machines m JOIN clearances c ON c.group_id = m.group_id AND c.person_id = $2 WHERE m.id = $1`, [s.machineId, person]);
    await c.query(`SELECT * FROM machine_booking_rules WHERE machine_id = $1`, [s.machineId]);
    await c.query(`SELECT * FROM opening_hours WHERE machine_id = $1`, [s.machineId]);
    await c.query(`SELECT * FROM closures WHERE (machine_id = $1 OR machine_id IS NULL) AND starts_at < $3 AND ends_at > $2`, [s.machineId, s.startsAt, s.endsAt]);
    await c.query(`SELECT pg_advisory_xact_lock(hashtextextended('bookings.person:' || $1, 0))`, [person]);
    await c.query(`SELECT id FROM bookings WHERE machine_id = $1 AND state IN ('reserved','checked in') AND tstzrange(starts_at, occupied_until, '[)') && tstzrange($2, $3, '[)') LIMIT 1`, [s.machineId, s.startsAt, new Date(s.endsAt.getTime() + 600_000)]);
    await c.query(`SELECT coalesce(sum(extract(epoch FROM ends_at - starts_at) / 60), 0) FROM bookings WHERE person_id = $1 AND machine_id = $2 AND kind IN ('personal','hold') AND state IN ('reserved','checked in','completed','no-show') AND starts_at >= $3 AND starts_at < $4`, [person, s.machineId, new Date(s.startsAt.getTime() - 7 * 24 * HOUR), s.startsAt]);
    const r = await c.query(`INSERT INTO bookings (machine_id, person_id, starts_at, ends_at, occupied_until) VALUES ($1, $2, $3, $4, $5) RETURNING id`, [s.machineId, person, s.startsAt, s.endsAt, new Date(s.endsAt.getTime() + 600_000)]);
    await c.query(`INSERT INTO audit_log (actor_id, kind, subject_type, subject_id, summary) VALUES ($1, 'booking.created', 'booking', $2, 'bench')`, [person, r.rows[0].id]);
    await c.query(`INSERT INTO pgboss.job (name, data, retry_limit, retry_delay, retry_backoff, expire_in, policy)
                   VALUES ('booking.confirm', json_build_object('bookingId', $1::uuid), 30, 10, true, interval '300 seconds', 'standard'),
                          ('payments.intent', json_build_object('kind', 'booking.hold', 'bookingId', $1::uuid), 14, 2, true, interval '120 seconds', 'standard')`, [r.rows[0].id]);
    await c.query('COMMIT');
  } catch (e) {
    await c.query('ROLLBACK');
    throw e;
  } finally {
    c.release();
  }
}
let next = 0;
if (STATEMENTS) await resetStatements(cfg, secrets);
const tSql = Date.now();
const sqlCreateRun = await cpuDuring(undefined, () => Promise.all(Array.from({ length: CONNECTIONS }, async () => {
  for (let n = next++; n < REQUESTS; n = next++) await sqlBooking(n);
})));
const sqlCreateSeconds = (Date.now() - tSql) / 1000;
if (STATEMENTS) statementRows.push('', `PostgreSQL per raw-SQL booking transaction (pg_stat_statements, ${REQUESTS} transactions):`, '', ...statementTable(await readStatements(cfg, secrets), REQUESTS));

if (ONLY_BOOKING) {
  // BENCH_ONLY=booking: the booking part alone (for comparing runs of it); nothing is written to bench/RESULTS.md
  const rps = apiCreate.requests.total / (apiCreate.duration || 1);
  const tps = REQUESTS / sqlCreateSeconds;
  console.log(['', `Run ${new Date().toISOString()} · booking creation only · pool ${POOL} · ${CONNECTIONS} clients · ${PROCESSES} app process${PROCESSES > 1 ? 'es' : ''}`,
    `API ${rps.toFixed(0)} req/s (p50 ${apiCreate.latency.p50} ms, p99 ${apiCreate.latency.p99} ms, ${apiCreate['2xx']} × 2xx, ${created} rows) ÷ raw SQL ${tps.toFixed(0)} tx/s = ${(rps / tps).toFixed(2)}`,
    `CPU per booking: app ${perRequest(apiCreateRun.app, apiCreate.requests.total)}, PostgreSQL ${perRequest(apiCreateRun.pg, apiCreate.requests.total)} per API request; PostgreSQL ${perRequest(sqlCreateRun.pg, REQUESTS)} per raw-SQL transaction`,
    ...statementRows, ''].join('\n'));
  await pool.end();
  await cleanup();
  process.exit(0);
}

// --- 2. the week-view feed of one machine (Laser A), a week deep in the history -----------------------------
/** The week feed through the API under autocannon, then the same rows in raw SQL, each for SECONDS. */
async function feedPart() {
  const weekFrom = new Date(Date.now() - 400 * 24 * HOUR);
  const weekTo = new Date(weekFrom.getTime() + 7 * 24 * HOUR);
  const feedPath = `/api/bookings?machineId=${machines[0]}&from=${weekFrom.toISOString()}&to=${weekTo.toISOString()}`;
  const sample = await (await fetch(`${APP}${feedPath}`, { headers: { cookie: cookies[0]! } })).json() as { bookings: unknown[] };
  say(`Week-view feed through the API for ${SECONDS} s (${sample.bookings.length} bookings in the week)`);
  const apiFeedRun = await cpuDuring(app.child.pid, (): Promise<Cannon> => autocannon({ url: `${APP}${feedPath}`, connections: CONNECTIONS, duration: SECONDS, headers: { cookie: cookies[0]! } }));
  const apiFeed = apiFeedRun.result;

  say(`Week-view feed in raw SQL for ${SECONDS} s`);
  let feedCount = 0;
  const until = Date.now() + SECONDS * 1000;
  const sqlFeedRun = await cpuDuring(undefined, () => Promise.all(Array.from({ length: CONNECTIONS }, async () => {
    while (Date.now() < until) {
      await q(`SELECT b.*, p.name AS person_name FROM bookings b JOIN people p ON p.id = b.person_id
               WHERE b.machine_id = $1 AND tstzrange(b.starts_at, b.occupied_until, '[)') && tstzrange($2, $3, '[)')
                 AND (b.state IN ('reserved','checked in','completed') OR (b.person_id = $4 AND b.state = 'no-show'))
               ORDER BY b.starts_at`, [machines[0], weekFrom, weekTo, people[0]]);
      feedCount++;
    }
  })));
  const sqlFeedRps = feedCount / SECONDS;
  return { sample, apiFeedRun, apiFeed, sqlFeedRun, feedCount, sqlFeedRps };
}
const { sample, apiFeedRun, apiFeed, sqlFeedRun, feedCount, sqlFeedRps } = await feedPart();

// --- 3. the reports (admin) over the same history: each answered alone, one after another ------------------
// periods in site dates (the app's zone): the default four weeks, and a whole year of the history
const siteZone = (await q(`SELECT time_zone FROM site_settings WHERE id = 1`)).rows[0]?.time_zone ?? 'UTC';
const siteDate = (d: Date) => new Intl.DateTimeFormat('en-CA', { timeZone: siteZone, year: 'numeric', month: '2-digit', day: '2-digit' }).format(d);
const adminCookie = await signIn('admin@tidewater.example');
const REPORTS = ['utilisation', 'revenue', 'clearances', 'faults', 'no-shows'] as const;
const PERIODS = [
  { label: '4 weeks', from: siteDate(new Date(Date.now() - 27 * 24 * HOUR)), to: siteDate(new Date()) },
  { label: '1 year', from: siteDate(new Date(Date.now() - 364 * 24 * HOUR)), to: siteDate(new Date()) },
];
const RUNS = 10;
say(`Reports: ${REPORTS.length} reports × ${PERIODS.length} periods, ${RUNS} requests each, one at a time`);
const reportRows: string[] = [];
for (const period of PERIODS) {
  for (const name of REPORTS) {
    const times: number[] = [];
    let status = 0;
    for (let i = 0; i < RUNS; i++) {
      const t = performance.now();
      const res = await fetch(`${APP}/api/reports/${name}?from=${period.from}&to=${period.to}`, { headers: { cookie: adminCookie } });
      await res.text();
      times.push(performance.now() - t);
      status = res.status;
    }
    times.sort((a, b) => a - b);
    const median = times[Math.floor(times.length / 2)]!;
    const worst = times[times.length - 1]!;
    reportRows.push(`| ${name} | ${period.label} (${period.from} to ${period.to}) | ${status} | ${median.toFixed(0)} ms | ${worst.toFixed(0)} ms | ${worst < 300 ? 'yes' : 'no'} |`);
  }
}

// --- statements per request, from the app's log lines ------------------------------------------------------
const perRoute = new Map<string, { n: number; queries: number; ms: number }>();
const logText = fs.readFileSync(appLog).subarray(appLogFrom).toString('utf8');
for (const raw of logText.split('\n')) {
  if (!raw.startsWith('{')) continue;
  let l: { event?: string; method?: string; route?: string; status?: number; queries?: number; durationMs?: number };
  try {
    l = JSON.parse(raw);
  } catch {
    continue;
  }
  if (l.event !== 'request' || !l.route?.startsWith('/api/') || l.route.startsWith('/api/auth/')) continue;
  const key = `${l.method} ${l.route} → ${l.status}`;
  const e = perRoute.get(key) ?? { n: 0, queries: 0, ms: 0 };
  e.n++;
  e.queries += l.queries ?? 0;
  e.ms += l.durationMs ?? 0;
  perRoute.set(key, e);
}
const routeRows = [...perRoute].filter(([, e]) => e.n >= 10).sort((a, b) => b[1].n - a[1].n)
  .map(([k, e]) => `| ${k} | ${e.n} | ${(e.queries / e.n).toFixed(1)} | ${(e.ms / e.n).toFixed(1)} ms |`);

// --- results -----------------------------------------------------------------------------------------------
const apiCreateRps = apiCreate.requests.total / (apiCreate.duration || 1);
const sqlCreateTps = REQUESTS / sqlCreateSeconds;
const apiFeedRps = apiFeed.requests.average;
/** Answers other than 2xx by status, e.g. "409 × 3" (autocannon's statusCodeStats), or "none". */
const others = (r: { statusCodeStats?: Record<string, { count: number }> }) =>
  Object.entries(r.statusCodeStats ?? {}).filter(([code]) => !code.startsWith('2')).map(([code, v]) => `${code} × ${v.count}`).join(', ') || 'none';
const lines = [
  `Run ${new Date().toISOString()} · Node ${process.version} · ${HISTORY.toLocaleString('en')} historical bookings (${reuse ? 'reused from an earlier run' : `generated in ${historySeconds.toFixed(1)} s`}) · ${CONNECTIONS} concurrent clients`,
  '',
  '| work | API (Astro + Knex) | raw SQL through pg | API ÷ SQL |',
  '| --- | --- | --- | --- |',
  `| booking creation (${REQUESTS} bookings) | ${apiCreateRps.toFixed(0)} req/s, p50 ${apiCreate.latency.p50} ms, p99 ${apiCreate.latency.p99} ms; ${apiCreate['2xx']} × 2xx, other: ${others(apiCreate)}, ${created} rows | ${sqlCreateTps.toFixed(0)} tx/s | ${(apiCreateRps / sqlCreateTps).toFixed(2)} |`,
  `| week-view feed (Laser A, ${sample.bookings.length} bookings in the week) | ${apiFeedRps.toFixed(0)} req/s, p50 ${apiFeed.latency.p50} ms, p99 ${apiFeed.latency.p99} ms; non-2xx: ${others(apiFeed)} | ${sqlFeedRps.toFixed(0)} queries/s | ${(apiFeedRps / sqlFeedRps).toFixed(2)} |`,
  '',
  `CPU per request (from /proc; moves far less with the machine's other load than req/s): booking creation — app ${perRequest(apiCreateRun.app, apiCreate.requests.total)}, PostgreSQL ${perRequest(apiCreateRun.pg, apiCreate.requests.total)} per API request; PostgreSQL ${perRequest(sqlCreateRun.pg, REQUESTS)} per raw-SQL transaction. Week feed — app ${perRequest(apiFeedRun.app, apiFeed.requests.total)}, PostgreSQL ${perRequest(apiFeedRun.pg, apiFeed.requests.total)} per API request; PostgreSQL ${perRequest(sqlFeedRun.pg, feedCount)} per raw-SQL query.`,
  '',
  `Reports on the same ${HISTORY.toLocaleString('en')}-booking history, all machines, ${RUNS} requests each (goal: under 300 ms):`,
  '',
  '| report | period | status | median | slowest | under 300 ms |',
  '| --- | --- | --- | --- | --- | --- |',
  ...reportRows,
  '',
  'SQL statements per request (from the app log; the mean time is inside the app, not queueing in front of it):',
  '',
  '| request | count | statements (mean) | time in the app (mean) |',
  '| --- | --- | --- | --- |',
  ...routeRows,
  ...statementRows,
];
console.log('\n' + lines.join('\n') + '\n');
fs.writeFileSync(path.join(ROOT, 'bench/RESULTS.md'), `# Latest bench run\n\n${lines.join('\n')}\n`);
await pool.end();
await cleanup();
process.exit(0);
