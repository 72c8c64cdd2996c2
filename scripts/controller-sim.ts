/**
 * A controller simulator: behaves like the box at a laser (badge reader + relay) against a running Beamwarden and
 * prints what its two-line display would show.
 *
 *   npm run controller-sim -- --machine laser-b --badge 04A2197F3380 [--beam-seconds 95] [--heartbeats 3]
 *        [--interval-ms 1000] [--hold-seconds 0] [--url http://127.0.0.1:$PORT] [--token <device token>] [--time-zone <IANA zone>]
 *
 * Without --token (or CONTROLLER_TOKEN) it signs in as an admin (SIM_ADMIN_EMAIL / SIM_ADMIN_PASSWORD, the demo
 * admin by default) and registers a controller named "Simulator" on the machine, keeping the token in
 * .data/controller-sim/<machine>.token for the next run.
 *
 * Steps: authorise the badge; on allow, read the state, send heartbeats with cumulative beam seconds while
 * long-polling the state (a `cut` ends the run early), then release with the final beam seconds. Exit code 0 after
 * an allowed run, 2 when the badge was denied, 1 on an error.
 */
import { mkdirSync, readFileSync, writeFileSync, existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { parseArgs } from 'node:util';

const { values: args } = parseArgs({
  options: {
    machine: { type: 'string' },
    badge: { type: 'string' },
    'beam-seconds': { type: 'string', default: '0' },
    heartbeats: { type: 'string', default: '3' },
    'interval-ms': { type: 'string', default: '1000' },
    'hold-seconds': { type: 'string', default: '0' },
    url: { type: 'string' },
    token: { type: 'string' },
    firmware: { type: 'string', default: 'beamwarden-sim 1.0' },
    'time-zone': { type: 'string' },
  },
});

const BASE = (args.url ?? process.env.CONTROLLER_SIM_URL ?? `http://127.0.0.1:${process.env.PORT ?? '4321'}`).replace(/\/+$/, '');
const WIDTH = 32;

function display(line1: string, line2 = ''): void {
  const fit = (s: string) => (s.length > WIDTH ? `${s.slice(0, WIDTH - 1)}…` : s.padEnd(WIDTH));
  console.log(`┌${'─'.repeat(WIDTH)}┐\n│${fit(line1)}│\n│${fit(line2)}│\n└${'─'.repeat(WIDTH)}┘`);
}

function log(msg: string): void {
  console.log(`  · ${msg}`);
}

async function call<T>(token: string, method: string, path: string, body?: unknown): Promise<T> {
  const res = await fetch(`${BASE}${path}`, {
    method,
    headers: { authorization: `Bearer ${token}`, ...(body === undefined ? {} : { 'content-type': 'application/json' }) },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const data = (await res.json().catch(() => ({}))) as T & { error?: { code: string; message: string } };
  if (!res.ok) throw new Error(`${method} ${path} → ${res.status} ${data.error?.code ?? ''}: ${data.error?.message ?? ''}`);
  return data;
}

/** Signs in as an admin through Auth.js's credentials endpoint and registers a controller on the machine. */
async function registerController(machineCode: string): Promise<string> {
  const jar = new Map<string, string>();
  const keep = (res: Response) => {
    for (const raw of res.headers.getSetCookie()) {
      const [pair] = raw.split(';');
      const eq = pair!.indexOf('=');
      jar.set(pair!.slice(0, eq).trim(), pair!.slice(eq + 1).trim());
    }
  };
  const cookie = () => [...jar].map(([k, v]) => `${k}=${v}`).join('; ');
  const csrfRes = await fetch(`${BASE}/api/auth/csrf`);
  keep(csrfRes);
  const { csrfToken } = (await csrfRes.json()) as { csrfToken: string };
  const signIn = await fetch(`${BASE}/api/auth/callback/credentials`, {
    method: 'POST',
    redirect: 'manual',
    headers: { 'content-type': 'application/x-www-form-urlencoded', cookie: cookie(), origin: BASE },
    body: new URLSearchParams({
      csrfToken,
      email: process.env.SIM_ADMIN_EMAIL ?? 'admin@tidewater.example',
      password: process.env.SIM_ADMIN_PASSWORD ?? 'beamwarden-demo',
      callbackUrl: '/',
    }),
  });
  keep(signIn);
  if ((signIn.headers.get('location') ?? '').includes('error')) throw new Error('admin sign-in failed: set SIM_ADMIN_EMAIL and SIM_ADMIN_PASSWORD');
  const machines = (await (await fetch(`${BASE}/api/machines`, { headers: { cookie: cookie() } })).json()) as { id: string; code: string }[];
  const m = machines.find((x) => x.code === machineCode);
  if (!m) throw new Error(`no machine with the code ${machineCode}`);
  const res = await fetch(`${BASE}/api/controllers`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', cookie: cookie(), origin: BASE },
    body: JSON.stringify({ machineId: m.id, name: 'Simulator' }),
  });
  if (res.status !== 201) throw new Error(`registering a controller answered ${res.status}: ${await res.text()}`);
  return ((await res.json()) as { token: string }).token;
}

async function tokenFor(machineCode: string): Promise<string> {
  const given = args.token ?? process.env.CONTROLLER_TOKEN;
  if (given) return given;
  const file = join(process.cwd(), '.data', 'controller-sim', `${machineCode}.token`);
  if (existsSync(file)) {
    const saved = readFileSync(file, 'utf8').trim();
    const probe = await fetch(`${BASE}/api/controller/state`, { headers: { authorization: `Bearer ${saved}` } });
    if (probe.status !== 401) return saved;
  }
  const token = await registerController(machineCode);
  mkdirSync(dirname(file), { recursive: true });
  writeFileSync(file, `${token}\n`, { mode: 0o600 });
  log(`registered a controller "Simulator" on ${machineCode} (token kept in .data/controller-sim/)`);
  return token;
}

type State = { state: 'enabled'; until: string; sessionId: string } | { state: 'cut'; reason: string; message: string };

// the box shows the site's wall clock: give the site's zone (e.g. --time-zone Pacific/Auckland); default this computer's
const time = (iso: string) => new Date(iso).toLocaleTimeString('en-NZ', { hour: '2-digit', minute: '2-digit', hourCycle: 'h23', timeZone: args['time-zone'] });
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

async function main(): Promise<number> {
  const machine = args.machine;
  const badge = args.badge;
  if (!machine || !badge) {
    console.error('usage: npm run controller-sim -- --machine <code> --badge <uid> [--beam-seconds N]');
    return 1;
  }
  const beamSeconds = Math.max(0, Math.round(Number(args['beam-seconds'])));
  const beats = Math.max(1, Math.round(Number(args.heartbeats)));
  const intervalMs = Math.max(0, Math.round(Number(args['interval-ms'])));
  const token = await tokenFor(machine);

  await call(token, 'POST', '/api/controller/heartbeat', { firmware: args.firmware });
  const idle = await call<State>(token, 'GET', '/api/controller/state');
  display(machine.toUpperCase(), idle.state === 'cut' ? idle.message : 'Ready.');
  log(`badge ${badge} presented`);

  const answer = await call<{ allow: true; sessionId: string; personName: string; until: string; walkUp: boolean } | { allow: false; reason: string; message: string }>(
    token, 'POST', '/api/controller/authorize', { badge },
  );
  if (!answer.allow) {
    display(`DENIED (${answer.reason})`, answer.message);
    log('relay stays open (cut)');
    return 2;
  }
  display(`Hello ${answer.personName}`, `${answer.walkUp ? 'Walk-up' : 'Booked'} until ${time(answer.until)}`);
  let state = await call<State>(token, 'GET', '/api/controller/state');
  log(`state: ${state.state}${state.state === 'enabled' ? ` until ${state.until}` : ` (${state.reason})`}`);

  // the relay follows the long-poll while the job runs; a cut ends the run
  let cut: State | null = state.state === 'cut' ? state : null;
  let polling = state.state === 'enabled';
  const poller = (async () => {
    while (polling) {
      const s = await call<State>(token, 'GET', '/api/controller/state?wait=25').catch(() => null);
      if (!polling) break;
      if (s?.state === 'cut') {
        cut = s;
        polling = false;
        display('POWER CUT', s.message);
        log(`state: cut (${s.reason}) — relay opened`);
      }
    }
  })();

  let sent = 0;
  for (let i = 1; i <= beats && !cut; i++) {
    await sleep(intervalMs);
    sent = Math.round((beamSeconds * i) / beats);
    await call(token, 'POST', '/api/controller/heartbeat', { sessionId: answer.sessionId, beamSeconds: sent });
    display(`Beam ${Math.floor(sent / 60)}:${String(sent % 60).padStart(2, '0')}`, `Until ${time(answer.until)}`);
  }
  const holdUntil = Date.now() + Number(args['hold-seconds']) * 1000;
  while (!cut && Date.now() < holdUntil) await sleep(100);
  polling = false;

  const closed = await call<{
    session: { beamMinutes: number; measuredBeamSeconds: number | null; beamSource: 'measured' | 'clock' };
    charge: { amountMinor: number; currency: string; state: string } | null;
    chargeProblem: string | null;
  }>(token, 'POST', '/api/controller/release', { sessionId: answer.sessionId, beamSeconds: sent });
  let money = 'not charged yet';
  if (closed.charge) {
    const f = new Intl.NumberFormat('en-NZ', { style: 'currency', currency: closed.charge.currency });
    money = f.format(closed.charge.amountMinor / 10 ** (f.resolvedOptions().maximumFractionDigits ?? 2));
  }
  display('Checked out. Thank you.', `${closed.session.beamMinutes} min ${closed.session.beamSource === 'measured' ? 'measured' : 'clock'} · ${money}`);
  log(`released: ${closed.session.measuredBeamSeconds ?? 0} beam seconds measured, billed ${closed.session.beamMinutes} minute(s) (${closed.session.beamSource})${closed.chargeProblem ? `; ${closed.chargeProblem}` : ''}`);
  await Promise.race([poller, sleep(200)]);
  return 0;
}

main().then(
  (code) => process.exit(code),
  (err) => {
    display('CONTROLLER ERROR', 'Relay open. Tell a steward.');
    console.error(err instanceof Error ? err.message : err);
    process.exit(1);
  },
);
