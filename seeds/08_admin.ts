/** Demo scenario (invented): the workshop charges New Zealand GST, 15 %, included in its prices. */
import type { Knex } from 'knex';

export async function seed(knex: Knex): Promise<void> {
  await knex('site_settings').where({ id: 1 }).update({ tax_rate_percent: 15, prices_include_tax: true });
}
