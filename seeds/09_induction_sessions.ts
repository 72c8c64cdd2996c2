/**
 * Demo induction sessions (invented): three upcoming practical sessions with seats — a first induction for the
 * glass-tube lasers in the laser room, one at Laser C (its machine time held as a class block), and an RF
 * refresher. The student, whose glass-tube quiz is passed, already has a seat at the Laser C session.
 */
import type { Knex } from 'knex';
import { occupiedUntil } from '../src/lib/availability';
import { siteDays } from './lib/site-days';

export async function seed(knex: Knex): Promise<void> {
  const tz = ((await knex('site_settings').where({ id: 1 }).first('time_zone'))?.time_zone as string | undefined) ?? 'Pacific/Auckland';
  const group = async (code: string) => (await knex('machine_groups').where({ code }).first('id', 'name')) as { id: string; name: string } | undefined;
  const person = async (local: string) => (await knex('people').where({ email: `${local}@tidewater.example` }).first('id'))?.id as string | undefined;
  const glass = await group('glass-tube');
  const rf = await group('rf-laser');
  const instructor = await person('instructor');
  const student = await person('student');
  const laserC = (await knex('machines').where({ code: 'laser-c' }).first('id'))?.id as string | undefined;
  if (!glass || !rf || !instructor) return;

  const { at, weekdayOf } = siteDays(new Date(), tz);
  const bring = 'Closed shoes; a small offcut of 3 mm plywood or acrylic. Tie back long hair.';

  await knex('induction_sessions').insert({
    group_id: glass.id, kind: 'first', starts_at: at(2, 18), ends_at: at(2, 19, 30), place: 'Laser room, the bench beside Laser A',
    capacity: 4, bring, instructor_id: instructor,
  });

  // at Laser C on a weekday eight or more days ahead, 16:00–17:30 (inside its opening hours)
  let day = 8;
  while (weekdayOf(day) > 5) day++;
  const startsAt = at(day, 16);
  const endsAt = at(day, 17, 30);
  let bookingId: string | null = null;
  if (laserC) {
    const [b] = await knex('bookings').insert({
      machine_id: laserC, person_id: instructor, kind: 'class', course_name: `First induction: ${glass.name}`, state: 'reserved',
      starts_at: startsAt, ends_at: endsAt, occupied_until: occupiedUntil(endsAt, 15), notes: 'Induction session (practical sign-off)',
    }).returning('id');
    bookingId = b.id;
  }
  const [atC] = await knex('induction_sessions').insert({
    group_id: glass.id, kind: 'first', starts_at: startsAt, ends_at: endsAt, machine_id: laserC ?? null, place: laserC ? 'Design studio' : 'Design studio, Laser C',
    capacity: 4, bring, instructor_id: instructor, booking_id: bookingId,
  }).returning('id');
  if (student) await knex('induction_seats').insert({ session_id: atC.id, person_id: student, state: 'booked' });

  await knex('induction_sessions').insert({
    group_id: rf.id, kind: 'refresher', starts_at: at(9, 14), ends_at: at(9, 15, 30), place: 'Laser room, beside Laser B',
    capacity: 3, bring: 'Your notes from the refresher quiz; closed shoes.', instructor_id: instructor,
  });
}
