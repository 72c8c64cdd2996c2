/**
 * Look-ups the seed files share: the demo machines by code and the demo people by the part of their address before
 * the @ (the invented scenario in PRODUCT.md). Read once per seed file; a missing one is undefined, so a seed can skip
 * its part when an earlier seed was not run. Lives below seeds/ so knex does not run it as a seed.
 */
import type { Knex } from 'knex';

export const DEMO_DOMAIN = 'tidewater.example';

export interface SeedMachine {
  id: string;
  code: string;
  coolant_type: string;
}

export async function seedLookups(knex: Knex) {
  const machines = (await knex('machines').select('id', 'code', 'coolant_type')) as SeedMachine[];
  const people = (await knex('people').select('id', 'email')) as { id: string; email: string }[];
  return {
    machines,
    machine: (code: string): SeedMachine | undefined => machines.find((x) => x.code === code),
    machineId: (code: string): string | undefined => machines.find((x) => x.code === code)?.id,
    personId: (local: string): string | undefined => people.find((x) => x.email === `${local}@${DEMO_DOMAIN}`)?.id,
  };
}
