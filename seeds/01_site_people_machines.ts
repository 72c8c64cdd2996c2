/**
 * Demo scenario (invented): Tidewater Community Workshop, a makerspace sharing its laser room with a
 * college design studio. Every demo person signs in with the password `beamwarden-demo`.
 */
import type { Knex } from 'knex';
import { hashPassword } from '../src/lib/server/passwords';
import { machineRow, makePerson } from './lib/factories';

export const DEMO_PASSWORD = 'beamwarden-demo';

export const DEMO_PEOPLE = [
  { email: 'admin@tidewater.example', name: 'Aroha Ngata', roles: ['admin'] },
  { email: 'instructor@tidewater.example', name: 'Ivan Petrovic', roles: ['instructor'] },
  { email: 'steward@tidewater.example', name: 'Sione Taufa', roles: ['steward'] },
  { email: 'member@tidewater.example', name: 'Mere Walker', roles: ['member'] },
  { email: 'newbie@tidewater.example', name: 'Noah Bennett', roles: ['member'] },
  { email: 'student@tidewater.example', name: 'Priya Desai', roles: ['member'] },
] as const;

export async function seed(knex: Knex): Promise<void> {
  await knex('site_settings')
    .insert({ id: 1, name: 'Tidewater Community Workshop', time_zone: 'Pacific/Auckland', currency: 'NZD' })
    .onConflict('id')
    .merge();

  const hash = await hashPassword(DEMO_PASSWORD);
  for (const p of DEMO_PEOPLE) await makePerson(knex, { email: p.email, name: p.name, passwordHash: hash, roles: p.roles });

  await knex('machines').insert([
    machineRow({
      code: 'laser-a', name: 'Laser A', powerW: 60, tubeType: 'dc_glass', bedWidthMm: 900, bedDepthMm: 600, beamDiameterMm: 6,
      divergenceMrad: 3, lensFocalMm: 50.8, coolantType: 'water',
    }),
    machineRow({
      code: 'laser-b', name: 'Laser B', powerW: 40, tubeType: 'rf_metal', bedWidthMm: 600, bedDepthMm: 400, beamDiameterMm: 3.5,
      divergenceMrad: 4, lensFocalMm: 50.8, coolantType: 'air',
    }),
    machineRow({
      code: 'laser-c', name: 'Laser C', powerW: 40, tubeType: 'dc_glass', bedWidthMm: 700, bedDepthMm: 500, beamDiameterMm: 6,
      divergenceMrad: 3, lensFocalMm: 63.5, coolantType: 'water',
    }),
  ]);
}
