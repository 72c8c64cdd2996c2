/**
 * Demo prices (invented) for Tidewater Community Workshop: one NZD price version in force since the
 * start of 2026, GST 15 % included in the prices (NZ common practice). Person tiers: student@ on the
 * student tier recharged to the design course DES101; everyone else stays on the default community tier.
 * member@'s demo card is not seeded (the payment fake keeps no state between runs): save the test card
 * on the Account screen, which creates the provider customer on first use.
 */
import type { Knex } from 'knex';

const RATES: Record<string, Record<string, number>> = {
  // per minute, NZD cents
  'laser-a': { student: 40, staff: 60, community: 90, commercial: 180 },
  'laser-b': { student: 35, staff: 50, community: 75, commercial: 150 },
  'laser-c': { student: 25, staff: 40, community: 60, commercial: 120 },
};

/** The sheets the space sells: the one list of sheet prices (NZD cents); materials link to it by code (05_materials). */
export const SEED_SHEETS = [
  { sku: 'ply-3', name: '3 mm birch plywood, 600 × 400', priceMinor: 650 },
  { sku: 'mdf-3', name: '3 mm MDF, 600 × 400', priceMinor: 400 },
  { sku: 'pmma-3', name: '3 mm clear acrylic (PMMA), 600 × 400', priceMinor: 1800 },
  { sku: 'card-a3', name: 'A3 greyboard card', priceMinor: 150 },
];

export async function seed(knex: Knex): Promise<void> {
  const admin = await knex('people').where({ email: 'admin@tidewater.example' }).first('id');
  const [version] = await knex('price_versions')
    .insert({
      effective_from: '2026-01-01T00:00:00+13:00',
      currency: 'NZD',
      increment_minutes: 5,
      minimum_charge_minor: 500,
      daily_cap_minor: 12000,
      late_cancel_fee_minor: 1000,
      no_show_fee_minor: 1500,
      tax_mode: 'inclusive',
      tax_rate_bp: 1500,
      minimum_rule: 'carry',
      recharge_tiers: ['student', 'staff'],
      materials: JSON.stringify(SEED_SHEETS),
      note: 'Opening prices',
      created_by: admin?.id ?? null,
    })
    .returning('id');
  const machines = await knex('machines').select('id', 'code');
  const rows = machines.flatMap((m: { id: string; code: string }) =>
    Object.entries(RATES[m.code] ?? {}).map(([tier, rate]) => ({ version_id: version.id, machine_id: m.id, tier, per_minute_minor: rate })),
  );
  if (rows.length) await knex('price_rates').insert(rows);
  await knex('people').where({ email: 'student@tidewater.example' }).update({ tier: 'student', cost_centre: 'DES101' });
}
