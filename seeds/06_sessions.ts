/**
 * Demo sessions and upkeep (invented): a session for each completed demo booking, older sessions from the
 * last six weeks so the upkeep forecast has a rate of use, and an upkeep history per machine (laser C's lens
 * clean is overdue, so the warning shows on its page).
 */
import type { Knex } from 'knex';
import { seedLookups } from './lib/lookups';

const DAY = 86_400_000;
const CHECKLIST = { extractionOn: true, airAssistOn: true, coolantFlowing: true, lensClean: true, extinguisherInPlace: true, willStay: true };

export async function seed(knex: Knex): Promise<void> {
  const look = await seedLookups(knex);
  const m = (code: string) => look.machine(code)!;
  const p = (local: string) => look.personId(local)!;
  const now = Date.now();

  // sessions of the completed demo bookings
  const done = (await knex('bookings').where({ state: 'completed' }).whereNot('kind', 'hold').select('id', 'machine_id', 'person_id', 'starts_at', 'ends_at')) as {
    id: string; machine_id: string; person_id: string; starts_at: Date; ends_at: Date;
  }[];
  for (const b of done) {
    const inAt = new Date(b.starts_at.getTime() + 2 * 60_000);
    const outAt = new Date(Math.max(inAt.getTime() + 10 * 60_000, b.ends_at.getTime() - 5 * 60_000));
    const water = look.machines.find((x) => x.id === b.machine_id)?.coolant_type === 'water';
    await knex('machine_sessions').insert({
      booking_id: b.id, machine_id: b.machine_id, person_id: b.person_id, checked_in_at: inAt, checked_out_at: outAt,
      beam_minutes: Math.round((outAt.getTime() - inAt.getTime()) / 60_000), checklist: JSON.stringify(CHECKLIST),
      coolant_temp_c: water ? 18.5 : null, checkout: JSON.stringify({ leftCleanAndClear: true, materials: [] }),
    });
    await knex('bookings').where({ id: b.id }).update({ checked_in_at: inAt });
  }

  // older walk-up history (before the booking calendar): 10 to 42 days ago, mid-morning
  const who = [p('member'), p('steward'), p('instructor')];
  const usage: Record<string, number> = { 'laser-a': 75, 'laser-b': 45, 'laser-c': 60 };
  for (const code of ['laser-a', 'laser-b', 'laser-c']) {
    const machine = m(code);
    for (let d = 42, i = 0; d >= 10; d -= code === 'laser-a' ? 2 : 3, i++) {
      const inAt = new Date(now - d * DAY - 3 * 3600_000);
      const minutes = usage[code]! + ((i * 17) % 40) - 20;
      await knex('machine_sessions').insert({
        machine_id: machine.id, person_id: who[i % who.length]!, checked_in_at: inAt, checked_out_at: new Date(inAt.getTime() + minutes * 60_000),
        beam_minutes: minutes, checklist: JSON.stringify(CHECKLIST), coolant_temp_c: machine.coolant_type === 'water' ? 17 + (i % 5) : null,
        checkout: JSON.stringify({ leftCleanAndClear: true, materials: [] }),
      });
    }
  }

  // upkeep history
  const steward = p('steward');
  // per machine: [kind, days ago, notes] and, for a tube replacement, the tube fitted
  const entries = (code: string, rows: [kind: string, daysAgo: number, notes: string, tube?: { model: string; rated: number }][]) =>
    rows.map(([kind, daysAgo, notes, tube]) => ({
      machine_id: m(code).id, kind, performed_by: steward, performed_at: new Date(now - daysAgo * DAY), notes,
      tube_model: tube?.model ?? null, tube_rated_hours: tube?.rated ?? null,
    }));
  await knex('upkeep_entries').insert([
    ...entries('laser-a', [
      ['tube_replacement', 120, 'New tube fitted and aligned; old tube had lost about a third of its power.', { model: '60 W sealed glass CO2 tube', rated: 2000 }],
      ['coolant_change', 45, 'Distilled water with a biocide; chiller reservoir flushed.'],
      ['extractor_filter', 60, 'Pre-filter replaced.'],
      ['alignment_check', 18, 'Mirrors 1–3 checked with tape shots; small correction on mirror 2.'],
      ['mirror_clean', 9, 'Light film on mirror 3.'],
      ['lens_clean', 3, 'Cleaned with lens tissue and isopropyl alcohol.'],
    ]),
    ...entries('laser-b', [
      ['alignment_check', 25, 'Checked; no correction needed.'],
      ['mirror_clean', 10, 'Routine clean.'],
      ['lens_clean', 4, 'Routine clean.'],
      ['extractor_filter', 90, 'Carbon filter replaced.'],
    ]),
    ...entries('laser-c', [
      ['coolant_change', 70, 'Distilled water.'],
      ['alignment_check', 22, 'Checked after the bed was moved.'],
      ['mirror_clean', 13, 'Routine clean.'],
      ['lens_clean', 11, 'Heavy residue after a long acrylic job.'],
    ]),
  ]);
}
