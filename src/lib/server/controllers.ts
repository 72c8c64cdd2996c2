/**
 * Controllers at the machines: registration (device tokens shown once, stored as SHA-256), the device calls
 * (authorise a badge, heartbeat with measured beam seconds, release, the state long-poll) and the offline alert.
 * All SQL of controllers and of the walk-up settings lives here; check-in and check-out go through sessions.ts,
 * exactly as from the phone.
 */
import { createHash, randomBytes } from 'node:crypto';
import { EventEmitter } from 'node:events';
import pg from 'pg';
import type { Knex } from 'knex';
import { db, pgCode, PG, transaction } from './db';
import { env } from './env';
import { recordAudit } from './audit';
import { log } from './log';
import { HttpError } from './errors';
import { canOperate } from './clearances';
import { checkIn, checkOut, getSession, machineCoolant, type MachineSession } from './sessions';
import { assertCanBook, getCharge, type Charge } from './payments';
import { getRules, listClosures } from './booking-rules';
import { getSettings } from './settings';
import { queueMail } from './mail';
import { activeWithRole } from './people';
import { badgeHash } from './badges';
import { openIntervals } from '../availability';
import { PRE_USE_ITEMS } from '../checklist';
import {
  CONTROLLER_OFFLINE_MINUTES,
  DENY_MESSAGES,
  WALK_UP_MAX_MINUTES,
  badgeHint,
  billableMinutes,
  decideState,
  normaliseBadge,
  stateDeadline,
  type ControllerState,
  type DenyReason,
  type StateFacts,
} from '../controller-rules';

type Conn = Knex | Knex.Transaction;

export interface Controller {
  id: string;
  machineId: string;
  name: string;
  firmware: string | null;
  lastState: string | null;
  lastSeenAt: Date | null;
  revokedAt: Date | null;
  createdAt: Date;
}

type Row = {
  id: string; machine_id: string; name: string; token_hash: string; firmware: string | null; last_state: string | null;
  last_seen_at: Date | null; offline_alerted_at: Date | null; revoked_at: Date | null; created_at: Date;
};

function toController(r: Row): Controller {
  return { id: r.id, machineId: r.machine_id, name: r.name, firmware: r.firmware, lastState: r.last_state, lastSeenAt: r.last_seen_at, revokedAt: r.revoked_at, createdAt: r.created_at };
}

const sha256 = (s: string) => createHash('sha256').update(s).digest('hex');

function newToken(): { token: string; hash: string } {
  const token = `bwc_${randomBytes(32).toString('base64url')}`;
  return { token, hash: sha256(token) };
}

// ---------------------------------------------------------------------------------------------
// Administration

export interface ControllerListRow extends Controller {
  machineName: string;
  machineCode: string;
  online: boolean;
}

export async function listControllers(now = new Date()): Promise<ControllerListRow[]> {
  const rows = (await db()('controllers as c')
    .join('machines as m', 'm.id', 'c.machine_id')
    .orderByRaw('c.revoked_at IS NOT NULL, m.name, c.name')
    .select('c.*', 'm.name as machine_name', 'm.code as machine_code')) as (Row & { machine_name: string; machine_code: string })[];
  const offlineBefore = now.getTime() - CONTROLLER_OFFLINE_MINUTES * 60_000;
  return rows.map((r) => ({
    ...toController(r),
    machineName: r.machine_name,
    machineCode: r.machine_code,
    online: !r.revoked_at && !!r.last_seen_at && r.last_seen_at.getTime() >= offlineBefore,
  }));
}

/** Registers a controller for a machine; the token is in the answer only, never stored or shown again. */
export async function createController(actorId: string, input: { machineId: string; name: string }): Promise<{ id: string; token: string }> {
  return transaction(async (trx) => {
    const m = await trx('machines').where({ id: input.machineId }).first('id', 'name', 'retired_at');
    if (!m) throw new HttpError(422, 'invalid', 'Choose a machine.', { machineId: 'No such machine.' });
    if (m.retired_at) throw new HttpError(409, 'machine_retired', `${m.name} is retired.`);
    const { token, hash } = newToken();
    const [row] = (await trx('controllers').insert({ machine_id: m.id, name: input.name, token_hash: hash, created_by: actorId }).returning('*')) as Row[];
    await recordAudit(trx, { actorId, kind: 'controller.registered', subjectType: 'controller', subjectId: row!.id, summary: `Registered controller “${input.name}” on ${m.name}`, after: { machineId: m.id, name: input.name } });
    return { id: row!.id, token };
  });
}

/** A new token for the controller; the old one stops working at once. */
export async function rotateToken(actorId: string, id: string): Promise<{ id: string; token: string }> {
  return transaction(async (trx) => {
    const r = (await trx('controllers').where({ id }).forUpdate().first()) as Row | undefined;
    if (!r) throw new HttpError(404, 'not_found', 'No such controller.');
    if (r.revoked_at) throw new HttpError(409, 'controller_revoked', 'This controller is revoked; register a new one.');
    const { token, hash } = newToken();
    await trx('controllers').where({ id }).update({ token_hash: hash, token_rotated_at: trx.fn.now(), last_state: null });
    await recordAudit(trx, { actorId, kind: 'controller.token_rotated', subjectType: 'controller', subjectId: id, summary: `New device token for controller “${r.name}”` });
    return { id, token };
  });
}

export async function revokeController(actorId: string, id: string): Promise<Controller> {
  return transaction(async (trx) => {
    const r = (await trx('controllers').where({ id }).forUpdate().first()) as Row | undefined;
    if (!r) throw new HttpError(404, 'not_found', 'No such controller.');
    if (r.revoked_at) return toController(r);
    const [u] = (await trx('controllers').where({ id }).update({ revoked_at: trx.fn.now() }).returning('*')) as Row[];
    await recordAudit(trx, { actorId, kind: 'controller.revoked', subjectType: 'controller', subjectId: id, summary: `Revoked controller “${r.name}”` });
    await trx.raw(`SELECT pg_notify('controller_state', ?)`, [r.machine_id]);
    return toController(u!);
  });
}

export async function walkUpsAllowed(trx: Conn = db()): Promise<boolean> {
  const r = await trx('site_settings').where({ id: 1 }).first('walk_ups_allowed');
  return Boolean(r?.walk_ups_allowed);
}

export async function setWalkUpsAllowed(actorId: string, allowed: boolean): Promise<boolean> {
  return transaction(async (trx) => {
    const before = await walkUpsAllowed(trx);
    await trx('site_settings').where({ id: 1 }).update({ walk_ups_allowed: allowed });
    if (before !== allowed) {
      await recordAudit(trx, { actorId, kind: 'site.walk_ups_changed', subjectType: 'site', summary: allowed ? 'Walk-ups at the controllers allowed' : 'Walk-ups at the controllers stopped', before: { walkUpsAllowed: before }, after: { walkUpsAllowed: allowed } });
    }
    return allowed;
  });
}

// ---------------------------------------------------------------------------------------------
// Device authentication

/** The controller holding `authorization` (a `Bearer <token>` header), marked as seen now; 401 otherwise. */
export async function authenticate(authorization: string | null): Promise<Controller> {
  const m = /^Bearer\s+(\S+)$/i.exec(authorization ?? '');
  if (!m) throw new HttpError(401, 'token_required', 'Send the device token: Authorization: Bearer <token>.', undefined, { 'www-authenticate': 'Bearer' });
  const [row] = (await db()('controllers')
    .where({ token_hash: sha256(m[1]!) })
    .whereNull('revoked_at')
    .update({ last_seen_at: db().fn.now() })
    .returning('*')) as Row[];
  if (!row) throw new HttpError(401, 'invalid_token', 'This device token is not valid (wrong, rotated or revoked).', undefined, { 'www-authenticate': 'Bearer error="invalid_token"' });
  return toController(row);
}

// ---------------------------------------------------------------------------------------------
// Authorise

export type AuthorizeAnswer =
  | { allow: true; sessionId: string; personName: string; until: string; walkUp: boolean }
  | { allow: false; reason: DenyReason; message: string };

const ALL_CONFIRMED = () => Object.fromEntries(PRE_USE_ITEMS.map((i) => [i.key, true])) as Record<string, unknown>;

/**
 * May the badge fire the controller's machine now? Unknown → listed for the stewards; then the person, the
 * machine, the clearance, and a booking whose check-in window is open (checked in through sessions.checkIn, as
 * from the phone) or, where the site allows walk-ups, a walk-up on a free machine in opening hours. Every decision
 * is audited.
 */
export async function authorize(ctrl: Controller, rawBadge: string, now = new Date()): Promise<AuthorizeAnswer> {
  const badge = normaliseBadge(rawBadge);
  const hash = badgeHash(badge);
  const person = (await db()('badges as b').join('people as p', 'p.id', 'b.person_id').where('b.badge_hash', hash)
    .first('p.id', 'p.name', 'p.active')) as { id: string; name: string; active: boolean } | undefined;

  const deny = async (reason: DenyReason, message = DENY_MESSAGES[reason]): Promise<AuthorizeAnswer> => {
    await recordAudit(db(), {
      actorId: person?.id ?? null, kind: 'controller.denied', subjectType: 'controller', subjectId: ctrl.id,
      summary: `Denied at “${ctrl.name}”: ${reason}`, after: { reason, badge: `…${badgeHint(badge)}`, machineId: ctrl.machineId },
    });
    return { allow: false, reason, message };
  };

  if (!person) {
    await db()('unknown_badge_sightings')
      .insert({ badge_hash: hash, last_four: badgeHint(badge), controller_id: ctrl.id, machine_id: ctrl.machineId, seen_at: now })
      .onConflict('badge_hash').merge(['controller_id', 'machine_id', 'seen_at']);
    return deny('unknown_badge');
  }
  if (!person.active) return deny('inactive');
  const machine = await db()('machines').where({ id: ctrl.machineId }).first('id', 'name', 'status', 'retired_at');
  if (!machine || machine.retired_at || machine.status === 'out of service') return deny('machine_out_of_service');
  const verdict = await canOperate(person.id, machine.id, now);
  if (!verdict.ok) return deny(verdict.state === 'suspended' ? 'suspended' : 'not_cleared');

  const allow = async (session: { id: string }, until: Date, walkUp: boolean, checkedIn: boolean): Promise<AuthorizeAnswer> => {
    await transaction(async (trx) => {
      if (checkedIn) await trx('machine_sessions').where({ id: session.id }).update({ controller_id: ctrl.id, walk_up: walkUp });
      await recordAudit(trx, {
        actorId: person.id, kind: 'controller.allowed', subjectType: 'controller', subjectId: ctrl.id,
        summary: checkedIn ? `${walkUp ? 'Walk-up started' : 'Checked in'} by controller “${ctrl.name}” on ${machine.name}` : `Badged again at “${ctrl.name}” (session already open)`,
        after: { sessionId: session.id, until: until.toISOString(), walkUp, badge: `…${badgeHint(badge)}` },
      });
    });
    return { allow: true, sessionId: session.id, personName: person.name, until: until.toISOString(), walkUp };
  };

  // a session already open on the machine: the same person badging again keeps it
  const open = await db()('machine_sessions as s').leftJoin('bookings as b', 'b.id', 's.booking_id')
    .where('s.machine_id', machine.id).whereNull('s.checked_out_at')
    .first('s.id', 's.person_id', 's.walk_up', 's.checked_in_at', 'b.ends_at');
  if (open) {
    if (open.person_id !== person.id) return deny('no_booking', 'In use by someone else.');
    return allow(open, open.ends_at ?? new Date(open.checked_in_at.getTime() + 4 * 3600_000), open.walk_up, false);
  }

  const actor = { id: person.id, roles: [] };
  const booking = await db()('bookings')
    .where({ person_id: person.id, machine_id: machine.id, state: 'reserved' })
    .whereNot('kind', 'hold')
    .where('ends_at', '>', now)
    .where('starts_at', '<=', new Date(now.getTime() + 10 * 60_000))
    .orderBy('starts_at')
    .first('id', 'ends_at');
  const coolant = await machineCoolant(machine.id);
  if (booking) {
    if (coolant.needsReading) return deny('no_booking', 'Check in on the phone first.');
    try {
      const s = await checkIn(actor, booking.id, { checklist: ALL_CONFIRMED(), coolantC: null }, now);
      return allow(s, booking.ends_at, false, true);
    } catch (err) {
      return deny(...refusalOf(err));
    }
  }

  // no booking: a walk-up on a free machine during opening hours, where the site allows it
  const [settings, rules] = await Promise.all([getSettings(), getRules(machine.id)]);
  const closures = await listClosures(machine.id, new Date(now.getTime() - 86_400_000), new Date(now.getTime() + 86_400_000));
  const interval = openIntervals(new Date(now.getTime() - 86_400_000), new Date(now.getTime() + 86_400_000), settings.timeZone, rules.hours, closures)
    .find((i) => i.start.getTime() <= now.getTime() && now.getTime() < i.end.getTime());
  if (!interval) return deny('outside_hours');
  if (!(await walkUpsAllowed())) return deny('no_booking');
  if (coolant.needsReading) return deny('no_booking', 'Book, then check in by phone.');
  const next = await db()('bookings').where({ machine_id: machine.id }).whereIn('state', ['reserved', 'checked in'])
    .where('occupied_until', '>', now).orderBy('starts_at').first('starts_at');
  if (next && next.starts_at.getTime() <= now.getTime()) return deny('no_booking', 'Booked by someone else now.');
  const buffer = rules.bufferMinutes * 60_000;
  const untilMs = Math.min(interval.end.getTime(), now.getTime() + WALK_UP_MAX_MINUTES * 60_000, next ? next.starts_at.getTime() - buffer : Infinity);
  const until = new Date(Math.floor(untilMs / 60_000) * 60_000);
  if (until.getTime() - now.getTime() < 10 * 60_000) return deny('no_booking', 'Next booking starts soon.');
  try {
    await assertCanBook(person.id);
  } catch (err) {
    if (err instanceof HttpError && err.status === 402) return deny('no_booking', 'Walk-ups need a saved card.');
    throw err;
  }
  let walkUpId: string;
  try {
    const [b] = await db()('bookings')
      .insert({ machine_id: machine.id, person_id: person.id, kind: 'personal', state: 'reserved', starts_at: now, ends_at: until, occupied_until: new Date(until.getTime() + buffer), notes: `Walk-up at controller “${ctrl.name}”` })
      .returning('id');
    walkUpId = b.id;
  } catch (err) {
    if (pgCode(err) === PG.exclusionViolation) return deny('no_booking', 'Booked by someone else now.');
    throw err;
  }
  try {
    const s = await checkIn(actor, walkUpId, { checklist: ALL_CONFIRMED(), coolantC: null }, now);
    return allow(s, until, true, true);
  } catch (err) {
    await db()('bookings').where({ id: walkUpId, state: 'reserved' }).update({ state: 'cancelled', cancelled_at: now, updated_at: db().fn.now() });
    return deny(...refusalOf(err));
  }
}

/** A check-in refusal from sessions.checkIn as a deny reason for the display. */
function refusalOf(err: unknown): [DenyReason, string?] {
  if (!(err instanceof HttpError)) throw err;
  switch (err.code) {
    case 'machine_out_of_service': return ['machine_out_of_service'];
    case 'clearance_required': return ['not_cleared'];
    case 'machine_in_use': return ['no_booking', 'In use by someone else.'];
    default: return ['no_booking', 'Check in on the phone page.'];
  }
}

// ---------------------------------------------------------------------------------------------
// State and long-poll

interface StateSnapshot {
  state: ControllerState;
  sessionId: string | null;
  deadline: Date | null;
}

async function snapshot(ctrl: Controller, now: Date): Promise<StateSnapshot> {
  const [machine, open] = await Promise.all([
    db()('machines').where({ id: ctrl.machineId }).first('status', 'retired_at'),
    db()('machine_sessions as s').join('people as p', 'p.id', 's.person_id').leftJoin('bookings as b', 'b.id', 's.booking_id')
      .where('s.machine_id', ctrl.machineId).whereNull('s.checked_out_at')
      .first('s.id', 's.person_id', 's.checked_in_at', 'p.active', 'b.ends_at'),
  ]);
  let session: StateFacts['session'] = null;
  if (open) {
    const verdict = await canOperate(open.person_id, ctrl.machineId, now);
    session = {
      endsAt: open.ends_at ?? new Date(open.checked_in_at.getTime() + 4 * 3600_000),
      personActive: open.active,
      clearance: verdict.ok ? { ok: true } : { ok: false, state: verdict.state },
    };
  }
  const facts: StateFacts = { machineOutOfService: !machine || !!machine.retired_at || machine.status === 'out of service', session };
  return { state: decideState(facts, now), sessionId: open?.id ?? null, deadline: stateDeadline(facts) };
}

const keyOf = (s: StateSnapshot) => (s.state.state === 'enabled' ? `enabled:${s.sessionId}:${s.state.until.toISOString()}` : `cut:${s.state.reason}`);

export type StateAnswer = { state: 'enabled'; until: string; sessionId: string } | { state: 'cut'; reason: string; message: string };

function answerOf(s: StateSnapshot): StateAnswer {
  return s.state.state === 'enabled'
    ? { state: 'enabled', until: s.state.until.toISOString(), sessionId: s.sessionId! }
    : { state: 'cut', reason: s.state.reason, message: s.state.message };
}

/** One LISTEN connection per process; waiters subscribe by machine id ('*' wakes every waiter). */
const changes = new EventEmitter();
changes.setMaxListeners(0);
let listener: Promise<pg.Client> | null = null;

function listen(): Promise<pg.Client> {
  listener ??= (async () => {
    const client = new pg.Client({ connectionString: env().DATABASE_URL });
    const reset = () => {
      listener = null;
      changes.emit('*'); // waiters recompute rather than trust a dead connection
    };
    client.on('error', reset);
    client.on('end', reset);
    client.on('notification', (n) => {
      if (n.channel !== 'controller_state') return;
      if (n.payload === '*' || !n.payload) changes.emit('*');
      else changes.emit(n.payload);
    });
    try {
      await client.connect();
      await client.query('LISTEN controller_state');
    } catch (err) {
      listener = null;
      throw err;
    }
    return client;
  })();
  return listener;
}

/** A promise that settles when something about `machineId` may have changed, or after `ms`. */
function nextChange(machineId: string, ms: number): { promise: Promise<void>; cancel: () => void } {
  let done!: () => void;
  const promise = new Promise<void>((resolve) => (done = resolve));
  const timer = setTimeout(() => done(), Math.max(0, ms));
  const wake = () => done();
  changes.on(machineId, wake);
  changes.on('*', wake);
  const cancel = () => {
    clearTimeout(timer);
    changes.off(machineId, wake);
    changes.off('*', wake);
    done();
  };
  void promise.then(cancel);
  return { promise, cancel };
}

/**
 * The controller's state: at once when `waitSeconds` is 0 or the state differs from the last one this controller
 * was given; else held until the state changes (NOTIFY from any app process, or the session's end plus grace
 * passing) or `waitSeconds` run out.
 */
export async function controllerState(ctrl: Controller, waitSeconds = 0, signal?: AbortSignal): Promise<StateAnswer> {
  if (waitSeconds > 0) await listen().catch((err) => log.error({ event: 'error', err }, 'controllers: LISTEN failed; long-polls fall back to timers'));
  const giveUpAt = Date.now() + waitSeconds * 1000;
  let watch = nextChange(ctrl.machineId, giveUpAt - Date.now());
  let s = await snapshot(ctrl, new Date());
  try {
    while (waitSeconds > 0 && keyOf(s) === ctrl.lastState && Date.now() < giveUpAt && !signal?.aborted) {
      const untilDeadline = s.deadline ? s.deadline.getTime() - Date.now() + 50 : Infinity;
      const timer = new Promise<void>((r) => setTimeout(r, Math.max(0, Math.min(untilDeadline, giveUpAt - Date.now()))));
      await Promise.race([watch.promise, timer]);
      watch.cancel();
      watch = nextChange(ctrl.machineId, giveUpAt - Date.now());
      s = await snapshot(ctrl, new Date());
    }
  } finally {
    watch.cancel();
  }
  const key = keyOf(s);
  if (key !== ctrl.lastState) await db()('controllers').where({ id: ctrl.id }).update({ last_state: key });
  return answerOf(s);
}

// ---------------------------------------------------------------------------------------------
// Heartbeat and release

async function ownSession(ctrl: Controller, sessionId: string, trx: Conn = db()) {
  const s = await trx('machine_sessions').where({ id: sessionId }).first('id', 'machine_id', 'person_id', 'booking_id', 'checked_out_at', 'measured_beam_seconds');
  if (!s || s.machine_id !== ctrl.machineId) throw new HttpError(404, 'not_found', 'No such session on this controller\'s machine.');
  return s as { id: string; machine_id: string; person_id: string; booking_id: string | null; checked_out_at: Date | null; measured_beam_seconds: number | null };
}

async function recordBeamSeconds(sessionId: string, beamSeconds: number): Promise<void> {
  // cumulative: a late or repeated heartbeat never lowers what was measured
  await db()('machine_sessions').where({ id: sessionId }).whereNull('checked_out_at')
    .update({ measured_beam_seconds: db().raw('greatest(coalesce(measured_beam_seconds, 0), ?)', [beamSeconds]) });
}

export async function heartbeat(ctrl: Controller, input: { sessionId?: string; beamSeconds?: number; firmware?: string }): Promise<StateAnswer & { ok: true }> {
  if (input.firmware !== undefined && input.firmware !== ctrl.firmware) await db()('controllers').where({ id: ctrl.id }).update({ firmware: input.firmware });
  if (input.sessionId) {
    const s = await ownSession(ctrl, input.sessionId);
    if (input.beamSeconds !== undefined && !s.checked_out_at) await recordBeamSeconds(s.id, input.beamSeconds);
  }
  return { ok: true, ...answerOf(await snapshot(ctrl, new Date())) };
}

export interface ReleaseResult {
  session: { id: string; checkedInAt: string; checkedOutAt: string; beamMinutes: number; measuredBeamSeconds: number | null; beamSource: 'measured' | 'clock' };
  charge: Pick<Charge, 'id' | 'state' | 'currency' | 'amountMinor' | 'minutes'> | null;
  chargeProblem: string | null;
}

function releaseAnswer(s: MachineSession & { measuredBeamSeconds?: number | null }, measured: number | null, charge: Charge | null, chargeProblem: string | null): ReleaseResult {
  const out = s.checkedOutAt ?? new Date();
  return {
    session: {
      id: s.id, checkedInAt: s.checkedInAt.toISOString(), checkedOutAt: out.toISOString(), beamMinutes: s.beamMinutes ?? 0,
      measuredBeamSeconds: measured, beamSource: billableMinutes(s.checkedInAt, out, measured).source,
    },
    charge: charge ? { id: charge.id, state: charge.state, currency: charge.currency, amountMinor: charge.amountMinor, minutes: charge.minutes } : null,
    chargeProblem,
  };
}

/** Badge out or time up: records the final beam seconds and checks the person out (sessions.checkOut). Repeatable. */
export async function release(ctrl: Controller, input: { sessionId: string; beamSeconds: number }, now = new Date()): Promise<ReleaseResult> {
  const s = await ownSession(ctrl, input.sessionId);
  if (s.checked_out_at) {
    const closed = (await getSession(s.id))!;
    const c = await db()('charges').where({ session_id: s.id }).first('id');
    return releaseAnswer(closed, s.measured_beam_seconds, c ? await getCharge(c.id) : null, c ? null : 'Not charged yet.');
  }
  if (!s.booking_id) throw new HttpError(409, 'no_booking', 'This session has no booking; a steward closes it.');
  await recordBeamSeconds(s.id, input.beamSeconds);
  const result = await checkOut({ id: s.person_id, roles: [] }, s.booking_id, { jobTimerMinutes: null, materials: [], checkout: { leftCleanAndClear: true } }, now);
  const measured = (await db()('machine_sessions').where({ id: s.id }).first('measured_beam_seconds')).measured_beam_seconds as number | null;
  await recordAudit(db(), {
    actorId: s.person_id, kind: 'controller.released', subjectType: 'controller', subjectId: ctrl.id,
    summary: `Checked out by controller “${ctrl.name}”: ${result.session.beamMinutes} beam minute(s), ${measured === null ? 'wall clock' : `${measured} s measured`}`,
    after: { sessionId: s.id, measuredBeamSeconds: measured, beamMinutes: result.session.beamMinutes },
  });
  return releaseAnswer(result.session, measured, result.charge, result.chargeProblem);
}

// ---------------------------------------------------------------------------------------------
// Offline alert

/**
 * Controllers not seen for CONTROLLER_OFFLINE_MINUTES while their machine is booked now: the active stewards are
 * e-mailed once (again only after the controller has been seen since).
 */
export async function sweepControllers(now = new Date()): Promise<{ alerted: number }> {
  const before = new Date(now.getTime() - CONTROLLER_OFFLINE_MINUTES * 60_000);
  return transaction(async (trx) => {
    const rows = (await trx('controllers as c')
      .join('machines as m', 'm.id', 'c.machine_id')
      .whereNull('c.revoked_at')
      .whereNotNull('c.last_seen_at')
      .where('c.last_seen_at', '<', before)
      .where((q) => q.whereNull('c.offline_alerted_at').orWhereRaw('c.offline_alerted_at < c.last_seen_at'))
      .whereExists((q) => q.select(trx.raw('1')).from('bookings as b').whereRaw('b.machine_id = c.machine_id')
        .whereIn('b.state', ['reserved', 'checked in']).whereNot('b.kind', 'hold').where('b.starts_at', '<=', now).where('b.ends_at', '>', now))
      .forUpdate('c').skipLocked()
      .select('c.id', 'c.name', 'c.last_seen_at', 'm.name as machine_name')) as { id: string; name: string; last_seen_at: Date; machine_name: string }[];
    if (!rows.length) return { alerted: 0 };
    const stewards = await activeWithRole('steward', trx);
    for (const r of rows) {
      await trx('controllers').where({ id: r.id }).update({ offline_alerted_at: now });
      await recordAudit(trx, { actorId: null, kind: 'controller.offline', subjectType: 'controller', subjectId: r.id, summary: `Controller “${r.name}” on ${r.machine_name} not heard from since ${r.last_seen_at.toISOString()} while booked` });
      for (const st of stewards) {
        await queueMail(trx, st.email, `Controller offline: ${r.machine_name}`, {
          greeting: `Hello ${st.name},`,
          paragraphs: [
            `The controller “${r.name}” on ${r.machine_name} has not been heard from for more than ${CONTROLLER_OFFLINE_MINUTES} minutes, and the machine is booked now.`,
            'The person booked may not be able to start the machine. Check the box’s power and network; the booking can still be checked in on the phone page.',
          ],
          action: { label: 'Open the Machines screen', url: `${env().PUBLIC_BASE_URL}/admin/machines` },
          footnote: `Never bridge the controller’s relay to get a job running: it is part of the machine’s enable chain. Your laser safety officer and the manufacturer’s manual take precedence.`,
        });
      }
    }
    return { alerted: rows.length };
  });
}

/** How a session's beam time was counted, for its receipt: measured by a controller, or the wall clock. */
export async function beamSourceOf(sessionId: string | null): Promise<{ source: 'measured' | 'clock'; measuredSeconds: number | null } | null> {
  if (!sessionId) return null;
  const s = await db()('machine_sessions').where({ id: sessionId }).first('measured_beam_seconds');
  if (!s) return null;
  return s.measured_beam_seconds === null ? { source: 'clock', measuredSeconds: null } : { source: 'measured', measuredSeconds: s.measured_beam_seconds };
}
