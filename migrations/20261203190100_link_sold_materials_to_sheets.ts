import type { Knex } from 'knex';

/**
 * Links each material the space sells to the sheet of the price version in force that has the same price, when
 * exactly one sheet has it. A material left without a code shows "pick its sheet" on Material rules.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw(`
    WITH v AS (
      SELECT materials FROM price_versions WHERE effective_from <= now() ORDER BY effective_from DESC LIMIT 1
    ), sheets AS (
      SELECT s->>'sku' AS sku, (s->>'priceMinor')::int AS price FROM v, jsonb_array_elements(v.materials::jsonb) s
    ), single AS (
      SELECT price, min(sku) AS sku FROM sheets GROUP BY price HAVING count(*) = 1
    )
    UPDATE materials m SET sheet_sku = single.sku
      FROM single
     WHERE m.sold_by_space AND m.sheet_sku IS NULL AND m.sheet_price_minor = single.price;
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
