/** What a person (and the finance report) sees of their money: the account summary, charges, refunds, recharge CSV. */
import { majorUnits, toCsv } from '@lib/csv';
import { startOfZonedDay, zonedDate } from '@lib/time';
import { db } from '@lib/server/db';
import type { DomainError } from '@lib/server/errors';
import { getSettings } from '@lib/server/settings';
import { chargeQuery, personFor, toCharge, type Charge } from './charge-records';
import { savedCard } from './cards';
import type { AccountSummary, ChargeSort } from '@lib/account-views';
import type { Tier } from '@lib/vocabulary';



export async function accountSummary(personId: string): Promise<AccountSummary> {
  const person = await personFor(personId);
  const { currency } = await getSettings();
  const owed = await db()('charges').where({ person_id: personId }).whereIn('state', ['payment failed', 'carried'])
    .select(db().raw('coalesce(sum(amount_minor), 0)::int as owed'), db().raw("count(*) filter (where state = 'payment failed')::int as failed")).first();
  const v = await db()('price_versions').where('effective_from', '<=', new Date()).orderBy('effective_from', 'desc').first('recharge_tiers');
  return {
    tier: person.tier,
    costCentre: person.costCentre,
    recharge: Boolean(person.costCentre && (v?.recharge_tiers ?? []).includes(person.tier)),
    card: await savedCard(personId),
    currency,
    balanceOwedMinor: Number(owed?.owed ?? 0),
    failed: Number(owed?.failed ?? 0),
  };
}

export async function listCharges(personId: string | null, opts: { page: number; pageSize: number; sort: ChargeSort; dir: 'asc' | 'desc' }): Promise<{ rows: Charge[]; total: number }> {
  const base = db()('charges as c');
  if (personId) base.where('c.person_id', personId);
  const [{ count }] = (await base.clone().count({ count: '*' })) as [{ count: number }];
  const column = { date: 'c.created_at', amount: 'c.amount_minor', state: 'c.state', machine: 'm.name' }[opts.sort];
  const q = chargeQuery();
  if (personId) q.where('c.person_id', personId);
  const rows = await q.orderBy(column, opts.dir).orderBy('c.id').limit(opts.pageSize).offset((opts.page - 1) * opts.pageSize);
  return { total: Number(count), rows: rows.map(toCharge) };
}

export async function refundsOf(chargeId: string): Promise<{ amountMinor: number; reason: string; at: Date; actorName: string | null; state: 'pending' | 'done' | 'failed' }[]> {
  const rows = await db()('charge_refunds as r').leftJoin('people as p', 'p.id', 'r.actor_id').where('r.charge_id', chargeId)
    .orderBy('r.created_at').select('r.amount_minor', 'r.reason', 'r.created_at', 'r.state', 'p.name');
  return rows.map((r) => ({ amountMinor: r.amount_minor, reason: r.reason, at: r.created_at, actorName: r.name, state: r.state }));
}

/**
 * Internal recharge for finance: one line per recharged charge in the month (site time zone), net of
 * refunds, and a last TOTAL line equal to the sum of the lines.
 */
export async function rechargeCsv(month: string, costCentre?: string): Promise<{ csv: string; totalMinor: number; lines: number }> {
  const { timeZone, currency } = await getSettings();
  const [y, m] = month.split('-').map(Number) as [number, number];
  const from = startOfZonedDay(`${month}-01`, timeZone);
  const next = m === 12 ? `${y + 1}-01-01` : `${y}-${String(m + 1).padStart(2, '0')}-01`;
  const to = startOfZonedDay(next, timeZone);
  const q = chargeQuery().where('c.method', 'recharge').whereIn('c.state', ['recharged', 'refunded'])
    .where('c.created_at', '>=', from).where('c.created_at', '<', to).orderBy('c.cost_centre').orderBy('c.created_at');
  if (costCentre) q.where('c.cost_centre', costCentre);
  const rows = (await q).map(toCharge);
  const money = (n: number) => majorUnits(n, currency);
  let total = 0;
  const records = rows.map((c) => {
    const net = c.amountMinor - c.refundedMinor;
    total += net;
    return [zonedDate(c.createdAt, timeZone), c.costCentre, c.personName, c.personEmail, c.machineName ?? '', c.kind.replace('_', ' '), c.minutes ?? '', money(net), money(c.taxMinor), c.id];
  });
  const csv = toCsv(
    ['date', 'cost_centre', 'person', 'email', 'machine', 'kind', 'minutes', `amount (${currency})`, `tax_included (${currency})`, 'charge_id'],
    [...records, ['TOTAL', costCentre ?? 'all', '', '', '', '', '', money(total), '', '']],
  );
  return { csv, totalMinor: total, lines: records.length };
}

/** What the notice of a booking's hold depends on: its newest beam-time charge, and the person's card, recharge and debts. */
export interface HoldFacts {
  state: string | null;
  failure_message: string | null;
  /** a saved card (what accountSummary calls `card`) */
  card: boolean;
  /** a cost centre and a tier the price version in force now recharges (accountSummary's `recharge`) */
  recharge: boolean;
  /** a failed payment on the account (what assertCanBook refuses) */
  failed: boolean;
  tier: Tier;
  /** the price version in force at the booking's start (null: none), its currency, the site's (null: no settings row) */
  version_id: string | null;
  version_currency: string | null;
  site_currency: string | null;
  /** that version has a rate for the booking's machine and the person's tier */
  has_rate: boolean;
}

/** HoldFacts' columns other than the charge's, over people p and the price version v at the start; the machine's id is `machineIdSql`. */
const holdFactColumns = (machineIdSql: string) => `p.tier,
            EXISTS (SELECT 1 FROM payment_customers pc WHERE pc.person_id = p.id AND pc.card_source_id IS NOT NULL) AS card,
            (coalesce(p.cost_centre, '') <> '' AND p.tier = ANY(coalesce((SELECT v.recharge_tiers FROM price_versions v WHERE v.effective_from <= now()
                                                                           ORDER BY v.effective_from DESC LIMIT 1), '{}'))) AS recharge,
            EXISTS (SELECT 1 FROM charges f WHERE f.person_id = p.id AND f.state = 'payment failed') AS failed,
            v.id AS version_id, v.currency AS version_currency, (SELECT s.currency FROM site_settings s WHERE s.id = 1) AS site_currency,
            EXISTS (SELECT 1 FROM price_rates r WHERE r.version_id = v.id AND r.machine_id = ${machineIdSql} AND r.tier = p.tier) AS has_rate`;

/** HoldFacts in one statement; undefined when there is no such person. */
export async function holdFacts(bookingId: string, personId: string): Promise<HoldFacts | undefined> {
  const { rows } = await db().raw(
    `SELECT c.state, c.failure_message, ${holdFactColumns('b.machine_id')}
     FROM people p
     LEFT JOIN LATERAL (SELECT state, failure_message FROM charges WHERE booking_id = ? AND kind = 'beam_time' ORDER BY created_at DESC LIMIT 1) c ON true
     LEFT JOIN bookings b ON b.id = ?
     LEFT JOIN LATERAL (SELECT id, currency FROM price_versions WHERE effective_from <= b.starts_at ORDER BY effective_from DESC LIMIT 1) v ON true
     WHERE p.id = ?`,
    [bookingId, bookingId, personId],
  );
  return rows[0] as HoldFacts | undefined;
}

/**
 * HoldFacts of a booking being made (no charge on it yet: state and failure_message null) as one json select
 * expression, for a statement the booking's transaction runs anyway; null when there is no such person. Its
 * bindings: `bindings(personId, machineId, startsAt)`.
 */
export function newBookingHoldFactsSql() {
  return {
    sql: `(SELECT row_to_json(x) FROM (
             SELECT NULL::text AS state, NULL::text AS failure_message, ${holdFactColumns('?::uuid')}
             FROM people p
             LEFT JOIN LATERAL (SELECT id, currency FROM price_versions WHERE effective_from <= ?::timestamptz ORDER BY effective_from DESC LIMIT 1) v ON true
             WHERE p.id = ?::uuid) x)`,
    bindings: (personId: string, machineId: string, startsAt: Date) => [machineId, startsAt, personId],
  };
}

/** What the person sees of a booking's card hold just after booking (`known`: facts read since the last try of the hold). */
export async function bookingHoldNotice(bookingId: string, personId: string, refusal: DomainError | null, known?: HoldFacts): Promise<{ state: 'held' | 'hold pending' | 'none'; notice: string | null }> {
  if (refusal?.code === 'not_priced') return { state: 'none', notice: 'This machine has no price for your tier yet, so nothing is held now; your booking stands.' };
  const r = known ?? (await holdFacts(bookingId, personId));
  const c = r?.state ? { state: r.state, failure_message: r.failure_message } : undefined;
  if (!c) {
    const summary = r ?? (await accountSummary(personId)); // (no such person: accountSummary answers not_found, as before)
    if (!summary.card && !summary.recharge) {
      return { state: 'none', notice: 'No card is saved on your account, so nothing is held now: beam time is charged at check-out. Save a card on the Account screen to pay by card.' };
    }
    return { state: 'none', notice: null };
  }
  if (c.state === 'held') return { state: 'held', notice: null };
  if (c.state === 'pending' || c.state === 'queued') return { state: 'hold pending', notice: 'The card service is not answering just now: the hold is retried by itself and your booking stands.' };
  if (c.state === 'released' && c.failure_message) return { state: 'none', notice: `${c.failure_message} Nothing is held now; beam time is charged at check-out.` };
  return { state: 'none', notice: null };
}
