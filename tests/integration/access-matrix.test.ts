/**
 * Every route × every role. The routes come from walking src/pages (tests/support/routes.ts), so a new
 * route cannot be missed: it fails this test until it has a row in MATRIX below. Each cell is the answer
 * expected for signed-out, member, instructor, steward and admin (a status, or a class such as '4xx').
 *
 * How a call is made:
 * - dynamic parameters come from ID_SOURCES (a real id from the seeded test database) for reads; writes
 *   use a well-formed id that does not exist (so an allowed role gets 404 and nothing is changed), unless
 *   the row says `ids: 'real'`. A row may say `ids: 'missing'` to read with a missing id too.
 * - writes send a valid but empty JSON body `{}`, so an allowed role gets a validation answer (400/415/422)
 *   and never performs the write.
 *
 * Adding a route: add one line to MATRIX, e.g. `'GET /api/faults': api(200),` (any signed-in person),
 * `'POST /api/faults': api(422, 'steward', 'admin'),` (those roles get 422 for `{}`, others 403), or
 * `'GET /machines/[id]': page(),` for a page. A new kind of [id] also needs a line in ID_SOURCES.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { APP_URL } from '../support/env';
import { fillPattern, listRoutes, paramsOf, type Method, type RouteFile } from '../support/routes';

type Who = 'out' | 'member' | 'instructor' | 'steward' | 'admin';
const WHO: Who[] = ['out', 'member', 'instructor', 'steward', 'admin'];
type Expect = number | '2xx' | '3xx' | '4xx';
type Cells = Record<Who, Expect>;
interface Row extends Cells {
  /** 'real' ids from ID_SOURCES, or 'missing' (a well-formed id nobody has). Default: real for GET, missing for writes. */
  ids?: 'real' | 'missing';
  /** a query string the route needs to answer at all, e.g. '?from=…&to=…' */
  query?: string;
}
type StaffRole = Exclude<Who, 'out'>;

/** Any signed-in person gets `ok`; signed out 401. With roles: those roles get `ok`, other people 403. */
function api(ok: Expect, ...roles: StaffRole[]): Row {
  return cells(401, ok, roles, 403);
}
/** A page: signed out → 303 to /signin; listed roles (or anyone signed in) 200; others the 403 page. */
function page(...roles: StaffRole[]): Row {
  return cells(303, 200, roles, 403);
}
/** The same answer for everyone, signed in or not. */
function everyone(status: Expect): Row {
  return { out: status, member: status, instructor: status, steward: status, admin: status };
}
function cells(out: Expect, ok: Expect, roles: StaffRole[], denied: Expect): Row {
  const c = (r: StaffRole) => (roles.length === 0 || roles.includes(r) ? ok : denied);
  return { out, member: c('member'), instructor: c('instructor'), steward: c('steward'), admin: c('admin') };
}
const missing = (row: Row): Row => ({ ...row, ids: 'missing' });
const WEEK = `?from=${encodeURIComponent('2026-01-05T00:00:00Z')}&to=${encodeURIComponent('2026-01-12T00:00:00Z')}`;

// prettier-ignore
const MATRIX: Record<string, Row> = {
  // pages
  'GET /': page(),
  'GET /403': everyone(403),
  'GET /404': everyone(404),
  'GET /500': everyone(500),
  'GET /healthz': everyone(200),
  'GET /readyz': everyone(200),
  'GET /account': page(),
  'GET /account/receipts/[id]': missing({ ...page(), member: 404, instructor: 404, steward: 404, admin: 404 }),
  'GET /admin': page('admin'),
  'GET /admin/audit': page('admin'),
  'GET /admin/reconciliation': page('admin'),
  'GET /admin/machine-groups': page('admin', 'instructor'),
  'GET /admin/machines': page('admin'),
  'GET /admin/materials': page('admin'),
  'GET /admin/people': page('admin'),
  'GET /admin/pricing': page('admin'),
  'GET /admin/site': page('admin'),
  'GET /book': page('member', 'instructor', 'steward', 'admin'),
  'GET /book/claim': page('member', 'instructor', 'steward', 'admin'),
  'GET /clearances': page('member', 'instructor', 'steward'),
  'GET /clearances/quiz/[id]': page('member', 'instructor', 'steward'),
  'GET /hazard': page(),
  // public: safety information reached from the machine's QR page, which is public too
  'GET /hazard/[id]': everyone(200),
  'GET /materials': page(),
  'GET /materials/requests': page('steward', 'admin'),
  'GET /quizzes': page('instructor'),
  'GET /signin': { ...everyone(303), out: 200 },
  'GET /signoffs': page('instructor'),
  'GET /signout': everyone(303),
  'POST /signout': everyone(303),
  'GET /signup': { ...everyone(303), out: 200 },
  'GET /forgot-password': everyone(200),
  'GET /reset-password': everyone(404),
  'GET /confirm-email': everyone(200),

  // Auth.js (the [...auth] parameter is filled with `session`)
  'GET /api/auth/[...auth]': everyone(200),
  'POST /api/auth/[...auth]': everyone('4xx'),

  // API
  'GET /api/account': api(200),
  'POST /api/account/password-reset': everyone(422),
  'POST /api/account/password-reset/confirm': everyone(422),
  'POST /api/account/password': api(422),
  'POST /api/account/confirmation': everyone(422),
  'POST /api/account/close': api(422),
  'GET /api/account/export': api(200),
  'GET /api/account/export.zip': api(200),
  'GET /api/institution-sign-in': api(200, 'admin'),
  'PUT /api/institution-sign-in': api(422, 'admin'),
  'POST /api/account/card': api(422),
  'GET /api/account/charges': api(200),
  'GET /api/audit': api(200, 'admin'),
  'GET /api/audit.csv': api(200, 'admin'),
  'GET /api/audit/facets': api(200, 'admin'),
  'GET /api/bookings': { ...api(200), query: WEEK },
  'POST /api/bookings': api(422),
  'POST /api/bookings/[id]/cancel': api(404),
  'GET /api/calendar-feed': api(200),
  // rotates / revokes the caller's own private feed address only
  'POST /api/calendar-feed': api(201),
  'DELETE /api/calendar-feed': api(200),
  'GET /api/calendar/[token].ics': everyone(404),
  'POST /api/charges/[id]/refund': api(422, 'steward', 'admin'),
  'POST /api/class-blocks': api(422, 'instructor'),
  'GET /api/clearances': api(200, 'instructor'),
  'POST /api/clearances/[id]/reinstate': api(422, 'instructor'),
  'POST /api/clearances/[id]/suspend': api(422, 'instructor'),
  'GET /api/clearances/me': api(200),
  'DELETE /api/closures/[id]': api(404, 'admin'),
  'GET /api/machine-groups': api(200),
  'PATCH /api/machine-groups/[id]': api(404, 'admin', 'instructor'),
  'GET /api/machines': api(200),
  'POST /api/machines': api(422, 'admin'),
  'GET /api/machines/[id]': api(200, 'admin'),
  'PATCH /api/machines/[id]': api(422, 'admin'),
  'POST /api/machines/[id]/retire': api(422, 'admin'),
  'GET /api/machines/[id]/availability': api('4xx'),
  'GET /api/machines/[id]/closures': { ...api(200), query: WEEK },
  'POST /api/machines/[id]/closures': api(422, 'admin'),
  'GET /api/machines/[id]/hazard': api(200),
  'GET /api/machines/[id]/rules': api(200),
  'PUT /api/machines/[id]/rules': api(422, 'admin'),
  'GET /api/material-requests': api(200),
  'POST /api/material-requests': api('4xx'),
  'POST /api/material-requests/[id]/decision': api(422, 'steward', 'admin'),
  'GET /api/material-requests/[id]/sds': missing(api(404)),
  'GET /api/material-rules': api(200, 'admin'),
  'POST /api/material-rules': api(422, 'admin'),
  'PUT /api/material-rules/[id]': api(422, 'admin'),
  'PUT /api/material-rules/[id]/overrides/[machineId]': api(422, 'admin'),
  'DELETE /api/material-rules/[id]/overrides/[machineId]': api(404, 'admin'),
  'GET /api/materials': api(200),
  'GET /api/me': api(200),
  'GET /api/people': api(200, 'admin'),
  'POST /api/people': api(422, 'admin'),
  'POST /api/people/[id]/deactivate': api(404, 'admin'),
  'POST /api/people/[id]/reactivate': api(404, 'admin'),
  'POST /api/people/[id]/invitation': api(404, 'admin'),
  'PUT /api/people/[id]/roles': api(422, 'admin'),
  'PUT /api/people/[id]/tier': api(422, 'admin'),
  'GET /api/pricing/versions': api(200, 'admin'),
  'POST /api/pricing/versions': api(422, 'admin'),
  'GET /api/quizzes': api(200, 'instructor'),
  'POST /api/quizzes': api(422, 'instructor'),
  'GET /api/quizzes/[id]': api(200, 'instructor'),
  // starts an attempt (a write): called with a missing quiz id
  'POST /api/quizzes/[id]/attempt': api(404),
  'POST /api/quizzes/[id]/attempts/[attemptId]': api(422),
  'PATCH /api/quizzes/[id]/attempts/[attemptId]': api(422),
  'DELETE /api/quizzes/[id]/draft': api(404, 'instructor'),
  'GET /api/induction-sessions': api(200),
  'POST /api/induction-sessions': api(422, 'instructor', 'admin'),
  'POST /api/induction-sessions/[id]/seats': api(404),
  'DELETE /api/induction-sessions/[id]/seats/mine': api(404),
  'POST /api/induction-sessions/[id]/waitlist': api(404),
  'GET /api/induction-sessions/[id]/roster': api(200, 'instructor'),
  'POST /api/induction-sessions/[id]/attendance': api(422, 'instructor'),
  'POST /api/induction-sessions/[id]/signoffs': api(422, 'instructor'),
  'POST /api/induction-sessions/[id]/cancel': api(422, 'instructor', 'admin'),
  'PUT /api/quizzes/[id]/draft': api(422, 'instructor'),
  'POST /api/quizzes/[id]/publish': api(404, 'instructor'),
  'GET /api/reports/recharge.csv': api('4xx', 'admin'),
  'GET /api/reconciliation': api(200, 'admin'),
  'POST /api/reconciliation': api(422, 'admin'),
  'GET /api/reconciliation/[id]/csv': api(404, 'admin'),
  'GET /api/signoffs': api(200, 'instructor'),
  'POST /api/signoffs': api(422, 'instructor'),
  'GET /api/site': api(200, 'admin'),
  'PUT /api/site': api(422, 'admin'),
  'POST /api/tools/check-materials': api(422),
  'GET /api/tools/cut-estimate': api(422),
  'GET /api/tools/hazard': api(422),
  'POST /api/tools/quote': api(422),
  'POST /api/tools/screen-material': api(422),
  'POST /api/waitlist': api(422),
  'POST /api/waitlist/claim': api(422),
  'POST /api/webhooks/payments': everyone(400),
  // at the machine, faults, upkeep, reports
  'GET /admin/labels': page('admin'),
  'GET /faults': page('steward', 'admin'),
  'GET /m/[code]': everyone(200), // the QR page is public (status, today's bookings without names, hazards)
  'GET /m/[code]/fault': page(),
  'GET /reports': page('admin', 'instructor'),
  'GET /upkeep': page('steward', 'admin'),
  'POST /api/bookings/[id]/check-in': api('4xx'),
  'POST /api/bookings/[id]/check-out': api('4xx'),
  'GET /api/faults': api(200, 'steward', 'admin'),
  'POST /api/faults/[id]/notes': api('4xx', 'steward', 'admin'),
  'GET /api/faults/[id]/photos/[n]': missing(api(404)),
  'POST /api/faults/[id]/resolve': api('4xx', 'steward', 'admin'),
  'POST /api/faults/[id]/triage': api('4xx', 'steward', 'admin'),
  'POST /api/machines/[id]/faults': api('4xx'),
  'GET /api/machines/[id]/label.png': api(200, 'steward', 'admin'),
  'GET /api/machines/[id]/label.svg': api(200, 'steward', 'admin'),
  'GET /api/machines/[id]/qr.png': api(200),
  'GET /api/machines/[id]/qr.svg': api(200),
  'POST /api/machines/[id]/status': api('4xx', 'steward', 'admin'),
  'GET /api/machines/[id]/upkeep': api(200, 'steward', 'admin'),
  'POST /api/machines/[id]/upkeep': api('4xx', 'steward', 'admin'),
  'GET /api/machines/[id]/upkeep/due': api(200, 'steward', 'admin'),
  'GET /api/machines/[id]/upkeep/intervals': api(200, 'steward', 'admin'),
  'PUT /api/machines/[id]/upkeep/intervals': api('4xx', 'admin'),
  'GET /api/reports/clearances': api(200, 'admin', 'instructor'),
  'GET /api/reports/clearances.csv': api(200, 'admin', 'instructor'),
  'GET /api/reports/faults': api(200, 'admin'),
  'GET /api/reports/faults.csv': api(200, 'admin'),
  'GET /api/reports/no-shows': api(200, 'admin'),
  'GET /api/reports/no-shows.csv': api(200, 'admin'),
  'GET /api/reports/revenue': api(200, 'admin'),
  'GET /api/reports/revenue.csv': api(200, 'admin'),
  'GET /api/reports/utilisation': api(200, 'admin'),
  'GET /api/reports/utilisation.csv': api(200, 'admin'),
  'POST /api/sessions/[id]/review': api('4xx', 'steward', 'admin'),
  // controllers at the machines and badges (device calls carry a token, never a session)
  'GET /badges': page('steward', 'admin'),
  'GET /controller-api': everyone(200),
  'GET /api/openapi.json': everyone(200),
  'POST /api/controller/authorize': everyone(401),
  'POST /api/controller/heartbeat': everyone(401),
  'POST /api/controller/release': everyone(401),
  'GET /api/controller/state': everyone(401),
  'GET /api/controllers': api(200, 'admin'),
  'POST /api/controllers': api(422, 'admin'),
  'PUT /api/controllers/walk-ups': api(422, 'admin'),
  'POST /api/controllers/[id]/rotate': api(404, 'admin'),
  'POST /api/controllers/[id]/revoke': api(404, 'admin'),
  'GET /api/people/[id]/badges': api(200, 'steward', 'admin'),
  'POST /api/people/[id]/badges': api(422, 'steward', 'admin'),
  'DELETE /api/badges/[id]': api(404, 'steward', 'admin'),
  'GET /api/badges/unknown': api(200, 'steward', 'admin'),
  'POST /api/badges/unknown/[id]/assign': api(422, 'steward', 'admin'),
  'GET /api/badges/people': { ...api(200, 'steward', 'admin'), query: '?q=tidewater' },
};

/**
 * Where a real value for a [param] comes from, keyed by `<segment before>/[param]`. A query returning no
 * row makes the route fall back to… nothing: the test fails and asks for `ids: 'missing'` on the row.
 */
const ID_SOURCES: Record<string, string | (() => Promise<string | undefined>)> = {
  'auth/[...auth]': 'session',
  'calendar/[token]': 'tok_no_such_feed_token_0000000000',
  'bookings/[id]': () => firstId('bookings'),
  'charges/[id]': () => firstId('charges'),
  'receipts/[id]': () => firstId('charges'),
  'clearances/[id]': () => inDemoGroups('clearances'),
  'closures/[id]': () => firstId('closures'),
  'hazard/[id]': () => machineInUse(),
  'machine-groups/[id]': () => inDemoGroups('machine_groups'),
  'machines/[id]': () => machineInUse(),
  'overrides/[machineId]': () => machineInUse(),
  'material-requests/[id]': () => firstId('material_requests'),
  'material-rules/[id]': () => firstId('materials'),
  'people/[id]': () => firstId('people'),
  'quizzes/[id]': () => inDemoGroups('quizzes'),
  'quiz/[id]': () => inDemoGroups('quizzes'),
  'attempts/[attemptId]': () => inDemoGroups('quiz_attempts'),
  'induction-sessions/[id]': () => inDemoGroups('induction_sessions'),
  'm/[code]': 'laser-a',
  'faults/[id]': () => firstId('faults'),
  'photos/[n]': '0',
  'sessions/[id]': () => firstId('machine_sessions'),
  'controllers/[id]': () => firstId('controllers'),
  'badges/[id]': () => firstId('badges'),
  'unknown/[id]': () => firstId('unknown_badge_sightings'),
  // runs exist only once a file has made one: a well-formed id nobody has (404 for admins)
  'reconciliation/[id]': '00000000-0000-4000-8000-00000000dead',
};
const MISSING_ID = '00000000-0000-4000-8000-00000000dead';

/**
 * A machine in use: the demo's Laser A, which no file retires (other files add machines of their own and retire them,
 * at the same time as this file runs; a retired one answers 404 on most routes), else the first one in use.
 */
async function machineInUse(): Promise<string | undefined> {
  const row = (await testDb()('machines').whereNull('retired_at').select('id').orderByRaw("code = 'laser-a' DESC, id").first()) as { id: string } | undefined;
  return row?.id;
}

async function firstId(table: string): Promise<string | undefined> {
  const row = (await testDb()(table).select('id').orderBy('id').first()) as { id: string } | undefined;
  return row?.id;
}

/**
 * The first row of a demo machine group (or of its quiz, clearances, attempts, sessions): browser journeys that run
 * beside this file make a group of their own with such rows and remove it when they end.
 */
async function inDemoGroups(table: 'machine_groups' | 'clearances' | 'quizzes' | 'quiz_attempts' | 'induction_sessions'): Promise<string | undefined> {
  const demo = testDb()('machine_groups').whereIn('code', ['glass-tube', 'rf-laser']);
  const q = table === 'machine_groups' ? demo.clone() : testDb()(table).whereIn('group_id', demo.clone().select('id'));
  const row = (await q.select(`${table}.id`).orderBy(`${table}.id`).first()) as { id: string } | undefined;
  return row?.id;
}

const cookies: Partial<Record<Who, string>> = {};

beforeAll(async () => {
  for (const who of WHO) {
    if (who === 'out') continue;
    cookies[who] = (await Client.as(who)).cookieHeader();
  }
});
afterAll(closeTestDb);

interface Call {
  key: string;
  route: RouteFile;
  method: Method;
  url: string;
}

/** One request, cookies not kept (a sign-out answer cannot end the session of the next call). */
async function call(who: Who, c: Call): Promise<Response> {
  const headers = new Headers();
  if (cookies[who as Exclude<Who, 'out'>]) headers.set('cookie', cookies[who as Exclude<Who, 'out'>]!);
  let body: string | undefined;
  if (c.method !== 'GET') {
    headers.set('origin', APP_URL());
    headers.set('content-type', 'application/json');
    body = '{}';
  }
  return fetch(new URL(c.url, APP_URL()), { method: c.method, headers, body, redirect: 'manual' });
}

function matches(status: number, want: Expect): boolean {
  if (typeof want === 'number') return status === want;
  return Math.floor(status / 100) === Number(want[0]);
}

async function pool<T>(items: T[], size: number, fn: (t: T) => Promise<void>): Promise<void> {
  let next = 0;
  await Promise.all(
    Array.from({ length: size }, async () => {
      while (next < items.length) await fn(items[next++]!);
    }),
  );
}

const routes = listRoutes();
const discovered = routes.flatMap((r) => r.methods.map((m) => ({ key: `${m} ${r.pattern}`, route: r, method: m })));

describe('access matrix', () => {
  it('finds the routes under src/pages', () => {
    expect(discovered.length).toBeGreaterThan(80);
    expect(discovered.map((d) => d.key)).toContain('GET /api/me');
    expect(discovered.map((d) => d.key)).toContain('GET /account/receipts/[id]');
  });

  it('has a row for every route, and no row for a route that is gone', () => {
    const keys = new Set(discovered.map((d) => d.key));
    const problems: string[] = [];
    for (const d of discovered) {
      if (!MATRIX[d.key]) {
        problems.push(
          `Route ${d.key} (src/pages/${d.route.file}) has no row in MATRIX in tests/integration/access-matrix.test.ts — ` +
            `add e.g. '${d.key}': ${d.route.kind === 'page' ? 'page(/* roles */)' : d.method === 'GET' ? 'api(200 /*, roles */)' : 'api(422 /*, roles */)'},`,
        );
      }
    }
    for (const key of Object.keys(MATRIX)) {
      if (!keys.has(key)) problems.push(`MATRIX row '${key}' in tests/integration/access-matrix.test.ts names no route under src/pages — remove or rename it.`);
    }
    expect(problems, problems.join('\n')).toEqual([]);
  });

  it('answers every route for every role as the table says', async () => {
    const calls: Call[] = [];
    const problems: string[] = [];
    for (const d of discovered) {
      const row = MATRIX[d.key];
      if (!row) continue; // reported by the test above
      const mode = row.ids ?? (d.method === 'GET' ? 'real' : 'missing');
      const values: Record<string, string> = {};
      for (const p of paramsOf(d.route.pattern)) {
        const src = ID_SOURCES[p.key];
        if (src === undefined) {
          problems.push(`Route ${d.key}: no value for ${p.raw} — add '${p.key}' to ID_SOURCES in tests/integration/access-matrix.test.ts`);
          continue;
        }
        if (typeof src === 'string') values[p.name] = src;
        else if (mode === 'missing') values[p.name] = MISSING_ID;
        else {
          const id = await src();
          if (id === undefined) problems.push(`Route ${d.key}: the test database has no row for ${p.key}; mark its MATRIX row with missing(…)`);
          else values[p.name] = id;
        }
      }
      if (Object.keys(values).length === paramsOf(d.route.pattern).length) {
        calls.push({ ...d, url: fillPattern(d.route.pattern, values) + (row.query ?? '') });
      }
    }
    const actual = new Map<string, Partial<Record<Who, number>>>();
    const jobs = calls.flatMap((c) => WHO.map((who) => ({ c, who })));
    await pool(jobs, 6, async ({ c, who }) => {
      const res = await call(who, c);
      const text = await res.text();
      (actual.get(c.key) ?? actual.set(c.key, {}).get(c.key)!)[who] = res.status;
      const want = MATRIX[c.key]![who];
      if (!matches(res.status, want)) {
        problems.push(`${c.key} as ${who}: expected ${want}, got ${res.status} (${c.method} ${c.url}) ${text.slice(0, 160).replace(/\s+/g, ' ')}`);
      }
      if (res.status >= 500 && !(c.key === 'GET /500')) problems.push(`${c.key} as ${who}: a server error`);
    });
    if (process.env.MATRIX_PRINT) {
      for (const [k, v] of [...actual].sort()) console.log(`  '${k}': ${JSON.stringify(v)},`);
    }
    expect(problems.sort(), problems.sort().join('\n')).toEqual([]);
    // the size of the matrix, for the note
    console.log(`access matrix: ${calls.length} route-methods × ${WHO.length} roles = ${jobs.length} calls`);
  }, 120_000);
});

describe('object-level access: one member and another member’s records', () => {
  async function personId(email: string): Promise<string> {
    const row = (await testDb()('people').where({ email }).first('id')) as { id: string };
    return row.id;
  }

  it('a member cannot cancel another member’s booking (404, the booking unchanged); the feed hides the owner', async () => {
    const owner = await personId('member@tidewater.example');
    const booking = (await testDb()('bookings')
      .where({ person_id: owner, state: 'reserved' })
      .where('ends_at', '>', new Date())
      .orderBy('starts_at')
      .first('id', 'starts_at', 'machine_id')) as { id: string; starts_at: Date; machine_id: string } | undefined;
    expect(booking, 'the demo member has a future booking in the seeds').toBeDefined();
    const other = await Client.as('student');
    const res = await other.send('POST', `/api/bookings/${booking!.id}/cancel`, {});
    expect([403, 404]).toContain(res.status);
    const after = (await testDb()('bookings').where({ id: booking!.id }).first('state')) as { state: string };
    expect(after.state).toBe('reserved');

    const from = new Date(booking!.starts_at.getTime() - 3600_000).toISOString();
    const to = new Date(booking!.starts_at.getTime() + 3600_000).toISOString();
    const feed = (await (await other.get(`/api/bookings?machineId=${booking!.machine_id}&from=${encodeURIComponent(from)}&to=${encodeURIComponent(to)}`)).json()) as {
      bookings: { id?: string; mine: boolean; personName: string | null; notes?: unknown }[];
    };
    const seen = feed.bookings.filter((b) => !b.mine);
    expect(seen.length).toBeGreaterThan(0);
    for (const b of seen) {
      expect(b.personName).toBeNull();
      expect(JSON.stringify(b)).not.toContain('Mere Walker');
      expect(JSON.stringify(b)).not.toContain('member@tidewater.example');
    }
  });

  it('a member sees only their own clearances; reading or suspending another’s is refused', async () => {
    const owner = await personId('member@tidewater.example');
    const clearance = (await testDb()('clearances').where({ person_id: owner }).first('id')) as { id: string } | undefined;
    expect(clearance, 'the demo member holds a clearance in the seeds').toBeDefined();
    const other = await Client.as('student');
    const mine = await (await other.get('/api/clearances/me')).text();
    expect(mine).not.toContain(clearance!.id);
    expect(mine).not.toContain(owner);
    expect((await other.get(`/api/clearances?personId=${owner}`)).status).toBe(403);
    const res = await other.send('POST', `/api/clearances/${clearance!.id}/suspend`, { reason: 'not mine to suspend' });
    expect(res.status).toBe(403);
  });

  it('a member cannot read another member’s account, charges or receipts', async () => {
    const other = await Client.as('student');
    const charges = await (await other.get('/api/account/charges')).text();
    expect(charges).not.toContain('member@tidewater.example');
    expect(charges).not.toContain('Mere Walker');
    const account = await (await other.get('/api/account')).text();
    expect(account).not.toContain('member@tidewater.example');
    // a receipt of someone else is answered like one that does not exist (checked with a real charge in payments.test.ts)
    expect((await other.get(`/account/receipts/${MISSING_ID}`)).status).toBe(404);
    expect((await other.get(`/api/people`)).status).toBe(403);
  });
});
