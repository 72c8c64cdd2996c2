/** A controller asks whether a badge may start its machine: the person's clearance, booking or walk-up, and the checks. */
import { db, pgCode, PG, transaction } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { DomainError } from '@lib/server/errors';
import { operateFactsSql, operateVerdict, type OperateFacts } from '@lib/server/clearances/state';
import { checkIn } from '@lib/server/machine-sessions';
import { assertCanBook } from '@lib/server/payments/charge-runs';
import { getRulesAndClosures, RULES_STAMP_SQL } from '@lib/server/booking-rules';
import { getSettings } from '@lib/server/settings';
import { badgeHash } from '@lib/server/badges';
import { openIntervals } from '@lib/availability';
import { PRE_USE_ITEMS, coolantPolicy } from '@lib/checklist';
import { DENY_MESSAGES, WALK_UP_MAX_MINUTES, badgeHint, normaliseBadge, type DenyReason } from '@lib/controller-rules';
import { type Controller, walkUpsAllowed } from './registry';

// ---------------------------------------------------------------------------------------------
// Authorise

export type AuthorizeAnswer =
  | { allow: true; sessionId: string; personName: string; until: string; walkUp: boolean }
  | { allow: false; reason: DenyReason; message: string };

const ALL_CONFIRMED = () => Object.fromEntries(PRE_USE_ITEMS.map((i) => [i.key, true])) as Record<string, unknown>;

/**
 * May the badge fire the controller's machine now? Unknown → listed for the stewards; then the person, the
 * machine, the clearance, and a booking whose check-in window is open (checked in through machine-sessions checkIn, as
 * from the phone) or, where the site allows walk-ups, a walk-up on a free machine in opening hours. Every decision
 * is audited.
 */
export async function authorize(ctrl: Controller, rawBadge: string, now = new Date()): Promise<AuthorizeAnswer> {
  const badge = normaliseBadge(rawBadge);
  const hash = badgeHash(badge);
  // the badge's person and the controller's machine (with its coolant), what canOperate decides from and the booking
  // rules' stamp, in one statement
  const { rows: [found] } = await db().raw(
    `SELECT p.id AS person_id, p.name AS person_name, p.active AS person_active,
            m.id, m.name, m.status, m.retired_at, m.coolant_type, m.coolant_min_c, m.coolant_max_c,
            CASE WHEN p.id IS NULL OR m.id IS NULL THEN NULL ELSE ${operateFactsSql('m.id', 'p.id')} END AS operate,
            ${RULES_STAMP_SQL} AS rules_stamp
     FROM (SELECT 1) one
     LEFT JOIN badges b ON b.badge_hash = ? LEFT JOIN people p ON p.id = b.person_id
     LEFT JOIN machines m ON m.id = ?`,
    [hash, ctrl.machineId],
  );
  const person = found?.person_id ? { id: found.person_id as string, name: found.person_name as string, active: found.person_active as boolean } : undefined;

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
  const machine = found.id ? { id: found.id as string, name: found.name as string, status: found.status as string, retired_at: found.retired_at as Date | null } : undefined;
  if (!machine || machine.retired_at || machine.status === 'out of service') return deny('machine_out_of_service');
  const verdict = operateVerdict((found.operate ?? null) as OperateFacts | null, now);
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

  // in one statement: a session already open on the machine, and the person's booking whose check-in window is open
  const { rows: [here] } = await db().raw(
    `SELECT (SELECT row_to_json(o) FROM (SELECT s.id, s.person_id, s.walk_up, s.checked_in_at, b.ends_at FROM machine_sessions s
              LEFT JOIN bookings b ON b.id = s.booking_id WHERE s.machine_id = ? AND s.checked_out_at IS NULL LIMIT 1) o) AS open,
            (SELECT row_to_json(k) FROM (SELECT id, ends_at FROM bookings WHERE person_id = ? AND machine_id = ? AND state = 'reserved'
              AND kind <> 'hold' AND ends_at > ? AND starts_at <= ? ORDER BY starts_at LIMIT 1) k) AS booking`,
    [machine.id, person.id, machine.id, now, new Date(now.getTime() + 10 * 60_000)],
  );
  const dated = <T extends Record<string, unknown>>(r: T | null, ...keys: (keyof T)[]): T | null => {
    if (!r) return null;
    for (const k of keys) if (r[k] !== null && r[k] !== undefined) (r as Record<string, unknown>)[k as string] = new Date(r[k] as string);
    return r;
  };
  // a session already open on the machine: the same person badging again keeps it
  const open = dated(here.open as { id: string; person_id: string; walk_up: boolean; checked_in_at: Date; ends_at: Date | null } | null, 'checked_in_at', 'ends_at');
  if (open) {
    if (open.person_id !== person.id) return deny('no_booking', 'In use by someone else.');
    return allow(open, open.ends_at ?? new Date(open.checked_in_at.getTime() + 4 * 3600_000), open.walk_up, false);
  }

  const actor = { id: person.id, roles: [] };
  const booking = dated(here.booking as { id: string; ends_at: Date } | null, 'ends_at');
  const coolant = coolantPolicy({
    coolantType: found.coolant_type,
    coolantMinC: found.coolant_min_c === null ? null : Number(found.coolant_min_c),
    coolantMaxC: found.coolant_max_c === null ? null : Number(found.coolant_max_c),
  });
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
  // the rules and closures from memory while the stamp read above is unchanged
  const [settings, { rules, closures }] = await Promise.all([
    getSettings(),
    getRulesAndClosures(machine.id, new Date(now.getTime() - 86_400_000), new Date(now.getTime() + 86_400_000), db(), found.rules_stamp as string | null),
  ]);
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
    if (err instanceof DomainError && err.kind === 'payment_required') return deny('no_booking', 'Walk-ups need a saved card.');
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

/** A check-in refusal from machine-sessions checkIn as a deny reason for the display. */
function refusalOf(err: unknown): [DenyReason, string?] {
  if (!(err instanceof DomainError)) throw err;
  switch (err.code) {
    case 'machine_out_of_service': return ['machine_out_of_service'];
    case 'clearance_required': return ['not_cleared'];
    case 'machine_in_use': return ['no_booking', 'In use by someone else.'];
    default: return ['no_booking', 'Check in on the phone page.'];
  }
}
