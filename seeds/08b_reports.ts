/**
 * Demo history for Reports (invented), only where the earlier seeds left none: for every completed past booking
 * (except member@'s, whose account starts without charges) its session at the machine (06_sessions' when it made
 * one, else a new one with measured beam time) and the charge for it (priced by the pure
 * pricing engine with the seeded price version: recharged to the cost centre for recharge tiers, captured by
 * card otherwise); and last week's faults with the machine status changes they caused.
 */
import type { Knex } from 'knex';
import { wallClock } from '../src/lib/availability';
import { beamTimeMinor, breakdownOf, quote, type PriceTable } from '../src/lib/pricing';
import type { Tier } from '../src/lib/vocabulary';
import { formatReceiptNumber, receiptPrefix } from '../src/lib/receipts';
import { seedLookups } from './lib/lookups';
import { siteDays } from './lib/site-days';

const TZ_FALLBACK = 'Pacific/Auckland';
const MIN = 60_000;

export async function seed(knex: Knex): Promise<void> {
  const tz = ((await knex('site_settings').where({ id: 1 }).first('time_zone'))?.time_zone as string | undefined) ?? TZ_FALLBACK;
  const now = new Date();
  await seedSessionsAndCharges(knex, tz, now);
  await seedFaults(knex, tz, now);
}

async function seedSessionsAndCharges(knex: Knex, tz: string, now: Date): Promise<void> {
  // only on a database without charges; the sessions of completed bookings usually come from 06_sessions
  const existing = await knex('charges').count({ n: '*' }).first();
  if (Number(existing?.n ?? 0) > 0) return;
  const version = await knex('price_versions').where('effective_from', '<=', now).orderBy('effective_from', 'desc').first();
  if (!version) return;
  const rates = (await knex('price_rates').where({ version_id: version.id }).select('machine_id', 'tier', 'per_minute_minor')) as {
    machine_id: string;
    tier: Tier;
    per_minute_minor: number;
  }[];
  const table: PriceTable = {
    currency: version.currency,
    rates: {},
    incrementMinutes: version.increment_minutes,
    minimumChargeMinor: version.minimum_charge_minor,
    dailyCapMinor: version.daily_cap_minor,
    lateCancelFeeMinor: version.late_cancel_fee_minor,
    noShowFeeMinor: version.no_show_fee_minor,
    taxMode: version.tax_mode,
    taxRateBp: version.tax_rate_bp,
    materials: typeof version.materials === 'string' ? JSON.parse(version.materials) : version.materials,
    minimumRule: version.minimum_rule,
  };
  for (const r of rates) (table.rates[r.machine_id] ??= {})[r.tier] = r.per_minute_minor;
  const rechargeTiers: string[] = version.recharge_tiers ?? [];

  const bookings = (await knex('bookings as b')
    .join('people as p', 'p.id', 'b.person_id')
    .join('machines as m', 'm.id', 'b.machine_id')
    .where('b.state', 'completed')
    .where('b.ends_at', '<', now)
    // member@ is the card holder of the account journey: their charge list starts empty (seeds/07_pricing.ts)
    .whereNot('p.email', 'member@tidewater.example')
    .orderBy('b.starts_at')
    .select('b.id', 'b.machine_id', 'b.person_id', 'b.starts_at', 'b.ends_at', 'p.tier', 'p.cost_centre', 'm.name as machine_name')) as {
    id: string;
    machine_id: string;
    person_id: string;
    starts_at: Date;
    ends_at: Date;
    tier: Tier;
    cost_centre: string | null;
    machine_name: string;
  }[];

  const chargedToday = new Map<string, number>(); // person + site day → beam time charged
  let i = 0;
  for (const b of bookings) {
    i++;
    const length = (b.ends_at.getTime() - b.starts_at.getTime()) / MIN;
    let checkedIn = new Date(b.starts_at.getTime() + 3 * MIN);
    let checkedOut = new Date(b.ends_at.getTime() - 4 * MIN);
    // beam time is part of the session: 45–75 % of the booked length (set-up and unloading take the rest)
    let beam = Math.max(1, Math.round(length * (0.45 + ((i * 7) % 31) / 100)));
    const held = (await knex('machine_sessions').where({ booking_id: b.id }).first('id', 'checked_in_at', 'checked_out_at', 'beam_minutes')) as
      | { id: string; checked_in_at: Date; checked_out_at: Date | null; beam_minutes: number | null }
      | undefined;
    if (held) {
      checkedIn = held.checked_in_at;
      checkedOut = held.checked_out_at ?? checkedOut;
      // the beam fires for part of a session only: the same 45–75 % share, within the session's length
      beam = Math.min(beam, Math.max(1, Math.round((checkedOut.getTime() - checkedIn.getTime()) / MIN)));
      await knex('machine_sessions').where({ id: held.id }).update({ beam_minutes: beam, job_timer_minutes: beam });
    }
    const [session] = held ? [held] : await knex('machine_sessions')
      .insert({
        booking_id: b.id,
        machine_id: b.machine_id,
        person_id: b.person_id,
        checked_in_at: checkedIn,
        checked_out_at: checkedOut,
        beam_minutes: beam,
        job_timer_minutes: beam,
        checklist: JSON.stringify({ seeded: true }),
        checkout: JSON.stringify({ seeded: true }),
      })
      .returning('id');
    if (!table.rates[b.machine_id]?.[b.tier]) continue;
    const w = wallClock(checkedIn, tz);
    const dayKey = `${b.person_id} ${w.year}-${w.month}-${w.day}`;
    const q = quote(table, { machineId: b.machine_id, tier: b.tier, minutes: beam, alreadyChargedTodayMinor: chargedToday.get(dayKey) ?? 0, machineName: b.machine_name });
    chargedToday.set(dayKey, (chargedToday.get(dayKey) ?? 0) + beamTimeMinor(q));
    const recharge = rechargeTiers.includes(b.tier) && b.cost_centre !== null;
    const breakdown = breakdownOf(q);
    const [charge] = await knex('charges').insert({
      person_id: b.person_id,
      tier: b.tier,
      machine_id: b.machine_id,
      booking_id: b.id,
      session_id: session.id,
      kind: 'beam_time',
      method: recharge ? 'recharge' : 'card',
      cost_centre: recharge ? b.cost_centre : null,
      state: recharge ? 'recharged' : 'captured',
      currency: q.currency,
      amount_minor: q.amountMinor,
      tax_minor: q.taxMinor,
      card_amount_minor: recharge ? 0 : q.amountMinor,
      captured_minor: recharge ? 0 : q.amountMinor,
      minutes: beam,
      started_at: checkedIn,
      price_version_id: version.id,
      breakdown: JSON.stringify(breakdown),
      created_at: checkedOut,
      updated_at: checkedOut,
    }).returning('id');
    await seedReceipt(knex, charge.id, checkedOut, tz);
  }
}

/** Dates and numbers a seeded charge's receipt from the year's counter, as taking the payment at check-out does. */
async function seedReceipt(knex: Knex, chargeId: string, at: Date, tz: string): Promise<void> {
  const name = ((await knex('site_settings').where({ id: 1 }).first('name'))?.name as string | undefined) ?? 'Beamwarden';
  const year = Number(new Intl.DateTimeFormat('en-CA', { timeZone: tz, year: 'numeric' }).format(at));
  const r = await knex.raw(
    'INSERT INTO receipt_counters (year, last_number) VALUES (?, 1) ON CONFLICT (year) DO UPDATE SET last_number = receipt_counters.last_number + 1 RETURNING last_number',
    [year],
  );
  const n = Number((r as { rows: { last_number: number }[] }).rows[0]!.last_number);
  await knex('charges').where({ id: chargeId }).update({ receipt_number: formatReceiptNumber(receiptPrefix(name), year, n), charged_at: at });
}

async function seedFaults(knex: Knex, tz: string, now: Date): Promise<void> {
  const existing = await knex('faults').count({ n: '*' }).first();
  if (Number(existing?.n ?? 0) > 0) return;
  const { machineId: m, personId: p } = await seedLookups(knex);
  const laserA = m('laser-a');
  const laserB = m('laser-b');
  const member = p('member');
  const steward = p('steward');
  if (!laserA || !laserB || !member || !steward) return;
  const { at } = siteDays(now, tz);

  // A stop fault on Laser B six days ago after its last booking; back in service the next morning before the first.
  // A degraded fault on Laser A three days ago, fixed the same evening. Each took the machine out of its normal
  // status a few minutes after the report (`downAfter`) and back to in service when resolved.
  const resolvedFaults = [
    {
      machineId: laserB, severity: 'stop', reportedAt: at(-6, 17, 5), triagedAfter: 20 * MIN, downAfter: 5 * MIN, resolvedAt: at(-5, 10, 30),
      summary: 'Air assist stopped; small flare-up on the honeycomb bed',
      details: 'Flame went out when the lid was opened and the job stopped. Extinguisher not used.',
      resolution: 'Air-assist pump fuse replaced; honeycomb cleaned; test cut on 3 mm ply was clean.',
      downTo: 'out of service', downReason: 'Stop fault: air assist', upReason: 'Pump fuse replaced, test cut clean',
    },
    {
      machineId: laserA, severity: 'degraded', reportedAt: at(-3, 12, 40), triagedAfter: 30 * MIN, downAfter: 30 * MIN, resolvedAt: at(-3, 21, 15),
      summary: 'Cuts not going through 3 mm ply at the usual settings',
      details: '',
      resolution: 'Lens cleaned; power back to normal.',
      downTo: 'degraded', downReason: 'Weak cuts', upReason: 'Lens cleaned',
    },
  ];
  for (const f of resolvedFaults) {
    const [fault] = await knex('faults')
      .insert({
        machine_id: f.machineId, reported_by: member, severity: f.severity, summary: f.summary, details: f.details, status: 'resolved',
        resolution: f.resolution, resolved_by: steward, created_at: f.reportedAt,
        triaged_at: new Date(f.reportedAt.getTime() + f.triagedAfter), resolved_at: f.resolvedAt,
      })
      .returning('id');
    const change = { machine_id: f.machineId, actor_id: steward, fault_id: fault.id };
    await knex('machine_status_changes').insert([
      { ...change, from_status: 'in service', to_status: f.downTo, changed_at: new Date(f.reportedAt.getTime() + f.downAfter), reason: f.downReason },
      { ...change, from_status: f.downTo, to_status: 'in service', changed_at: f.resolvedAt, reason: f.upReason },
    ]);
  }

  // A note that is still open.
  await knex('faults').insert({
    machine_id: laserA,
    reported_by: member,
    severity: 'note',
    summary: 'The bed light flickers now and then',
    status: 'open',
    created_at: at(-1, 15, 10),
  });
}
