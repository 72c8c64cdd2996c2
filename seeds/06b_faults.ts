/**
 * Demo fault history (invented): two resolved faults with their status changes in the past, so reports can
 * show time out of service, and one open note. Nothing here takes a machine out of service now.
 */
import type { Knex } from 'knex';
import { seedLookups } from './lib/lookups';

const DAY = 86_400_000;

export async function seed(knex: Knex): Promise<void> {
  const { machineId: m, personId: p } = await seedLookups(knex);
  const laserA = m('laser-a');
  const laserB = m('laser-b');
  const laserC = m('laser-c');
  const member = p('member');
  const steward = p('steward');
  if (!laserA || !laserB || !laserC || !member || !steward) return;
  const now = Date.now();
  const at = (daysAgo: number, hours = 0) => new Date(now - daysAgo * DAY + hours * 3_600_000);

  // a cracked focus lens on Laser A: out of service for two days
  const [lens] = await knex('faults')
    .insert({
      machine_id: laserA, reported_by: member, severity: 'stop', summary: 'Focus lens cracked after a flare-up',
      details: 'A flame under the nozzle on MDF; afterwards the cut lines were wide and the lens shows a crack.',
      status: 'resolved', resolution: 'Lens replaced (20 mm, 50.8 mm focal length), air assist nozzle cleaned, test cuts fine.',
      resolved_by: steward, created_at: at(20), triaged_at: at(20, 1), resolved_at: at(18),
    })
    .returning('id');
  await knex('fault_notes').insert({ fault_id: lens.id, author_id: steward, body: 'Spare lens ordered; machine locked out.', created_at: at(20, 1) });
  await knex('machine_status_changes').insert([
    { machine_id: laserA, from_status: 'in service', to_status: 'out of service', changed_at: at(20), actor_id: member, fault_id: lens.id, reason: 'stop fault: Focus lens cracked after a flare-up' },
    { machine_id: laserA, from_status: 'out of service', to_status: 'in service', changed_at: at(18), actor_id: steward, fault_id: null, reason: 'Lens replaced and test cuts fine (checks confirmed)' },
  ]);

  // weak air assist on Laser C: degraded for half a day
  const [air] = await knex('faults')
    .insert({
      machine_id: laserC, reported_by: member, severity: 'degraded', summary: 'Air assist weak',
      status: 'resolved', resolution: 'Kinked air line replaced.', resolved_by: steward, created_at: at(9), triaged_at: at(9, 2), resolved_at: at(9, 12),
    })
    .returning('id');
  await knex('machine_status_changes').insert([
    { machine_id: laserC, from_status: 'in service', to_status: 'degraded', changed_at: at(9), actor_id: member, fault_id: air.id, reason: 'degraded fault: Air assist weak' },
    { machine_id: laserC, from_status: 'degraded', to_status: 'in service', changed_at: at(9, 12), actor_id: steward, fault_id: null, reason: 'Air line replaced' },
  ]);

  // an open note on Laser B
  await knex('faults').insert({ machine_id: laserB, reported_by: member, severity: 'note', summary: 'Honeycomb bed has a bent corner', created_at: at(2) });
}
