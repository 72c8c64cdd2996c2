/**
 * Demo scenario (invented): Tidewater Community Workshop, a makerspace sharing its laser room with a
 * college design studio. Every demo person signs in with the password `beamwarden-demo`.
 */
import type { Knex } from 'knex';
import { hashPassword } from '../src/lib/server/passwords';

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
  for (const p of DEMO_PEOPLE) {
    const [row] = await knex('people').insert({ email: p.email, name: p.name, password_hash: hash }).returning('id');
    await knex('role_grants').insert(p.roles.map((role) => ({ person_id: row.id, role })));
  }

  await knex('machines').insert([
    {
      code: 'laser-a', name: 'Laser A', power_w: 60, tube_type: 'dc_glass', wavelength_um: 10.6,
      bed_width_mm: 900, bed_depth_mm: 600, beam_diameter_mm: 6, divergence_mrad: 3, lens_focal_mm: 50.8,
      coolant_type: 'water', status: 'in service',
    },
    {
      code: 'laser-b', name: 'Laser B', power_w: 40, tube_type: 'rf_metal', wavelength_um: 10.6,
      bed_width_mm: 600, bed_depth_mm: 400, beam_diameter_mm: 3.5, divergence_mrad: 4, lens_focal_mm: 50.8,
      coolant_type: 'air', status: 'in service',
    },
    {
      code: 'laser-c', name: 'Laser C', power_w: 40, tube_type: 'dc_glass', wavelength_um: 10.6,
      bed_width_mm: 700, bed_depth_mm: 500, beam_diameter_mm: 6, divergence_mrad: 3, lens_focal_mm: 63.5,
      coolant_type: 'water', status: 'in service',
    },
  ]);
}
