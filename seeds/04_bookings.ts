/**
 * Demo bookings (invented): opening hours and rules for the three lasers, a closure, tiers, two weeks
 * of bookings around the seed time (last week's completed, this week's reserved) and one class block.
 */
import type { Knex } from 'knex';
import { occupiedUntil } from '../src/lib/availability';
import { bookingRow } from './lib/factories';
import { seedLookups } from './lib/lookups';
import { siteDays } from './lib/site-days';

const TZ_FALLBACK = 'Pacific/Auckland';

export async function seed(knex: Knex): Promise<void> {
  const tz = ((await knex('site_settings').where({ id: 1 }).first('time_zone'))?.time_zone as string | undefined) ?? TZ_FALLBACK;
  const look = await seedLookups(knex);
  const m = (code: string) => look.machineId(code)!;
  const p = (local: string) => look.personId(local)!;

  await knex('people').where({ id: p('student') }).update({ tier: 'student' });
  await knex('people').where({ id: p('instructor') }).update({ tier: 'staff' });
  await knex('people').where({ id: p('steward') }).update({ tier: 'staff' });

  const buffer = { 'laser-a': 10, 'laser-b': 5, 'laser-c': 15 } as Record<string, number>;
  for (const code of ['laser-a', 'laser-b', 'laser-c']) {
    await knex('machine_booking_rules').insert({
      machine_id: m(code),
      slot_minutes: 15,
      min_minutes: 30,
      max_minutes: code === 'laser-c' ? 120 : 180,
      buffer_minutes: buffer[code],
      lead_minutes: 0,
      horizon_days: 14,
      cancel_cutoff_minutes: 120,
    });
    await knex('machine_tier_quotas').insert([
      { machine_id: m(code), tier: 'student', weekly_minutes: 180 },
      { machine_id: m(code), tier: 'staff', weekly_minutes: 360 },
      { machine_id: m(code), tier: 'community', weekly_minutes: 240 },
      { machine_id: m(code), tier: 'commercial', weekly_minutes: 600 },
    ]);
    const hours =
      code === 'laser-c'
        ? [1, 2, 3, 4, 5].map((weekday) => ({ weekday, opens_minute: 8 * 60, closes_minute: 18 * 60 }))
        : [
            ...[1, 2, 3, 4, 5].map((weekday) => ({ weekday, opens_minute: 9 * 60, closes_minute: 21 * 60 })),
            { weekday: 6, opens_minute: 10 * 60, closes_minute: 17 * 60 },
            { weekday: 7, opens_minute: 10 * 60, closes_minute: 16 * 60 },
          ];
    await knex('opening_hours').insert(hours.map((h) => ({ machine_id: m(code), ...h })));
  }

  const now = new Date();
  const { at, weekdayOf } = siteDays(now, tz);

  // a closure on Laser B three days from now, 09:00–13:00
  await knex('closures').insert({
    machine_id: m('laser-b'),
    starts_at: at(3, 9),
    ends_at: at(3, 13),
    reason: 'Lens and mirror clean, then an alignment check',
    created_by: p('steward'),
  });

  // two weeks of bookings: the last 7 days (completed or a no-show) and the next 7 (reserved)
  const pattern: { code: string; who: string; h: number; min: number; len: number }[] = [
    { code: 'laser-a', who: 'member', h: 10, min: 0, len: 90 },
    { code: 'laser-a', who: 'steward', h: 14, min: 0, len: 60 },
    { code: 'laser-a', who: 'student', h: 18, min: 30, len: 60 },
    { code: 'laser-b', who: 'instructor', h: 11, min: 0, len: 60 },
    { code: 'laser-b', who: 'member', h: 15, min: 30, len: 45 },
    { code: 'laser-c', who: 'student', h: 9, min: 0, len: 60 },
  ];
  const rows: Record<string, unknown>[] = [];
  for (let day = -7; day <= 7; day++) {
    if (day === 0) continue;
    const wd = weekdayOf(day);
    pattern.forEach((b, i) => {
      if ((day + i) % 3 === 0) return; // not every slot every day
      if (b.code === 'laser-c' && wd > 5) return;
      if (wd > 5 && b.h >= 18) return; // weekends close early
      const startHour = wd > 5 && b.code !== 'laser-c' ? Math.min(Math.max(b.h, 10), 14) : b.h;
      if (b.code === 'laser-b' && day === 3 && startHour < 13) return; // the closure
      const startsAt = at(day, startHour, b.min);
      const endsAt = new Date(startsAt.getTime() + b.len * 60_000);
      const past = day < 0;
      const noShow = past && (day + i) % 5 === 0;
      rows.push(
        bookingRow({
          machineId: m(b.code), personId: p(b.who), startsAt, endsAt, bufferMinutes: buffer[b.code]!,
          state: past ? (noShow ? 'no-show' : 'completed') : 'reserved', checkedInAt: past && !noShow ? startsAt : null,
        }),
      );
    });
  }
  await knex('bookings').insert(rows);

  // one class block on Laser C: the next weekday at 13:00–16:00, taught by the instructor
  let classDay = 1;
  while (weekdayOf(classDay) > 5) classDay++;
  const classStart = at(classDay, 13);
  const classEnd = at(classDay, 16);
  const [block] = await knex('bookings')
    .insert({
      machine_id: m('laser-c'),
      person_id: p('instructor'),
      kind: 'class',
      course_name: 'DES 210 Laser fabrication studio',
      state: 'reserved',
      starts_at: classStart,
      ends_at: classEnd,
      occupied_until: occupiedUntil(classEnd, buffer['laser-c']!),
      notes: 'Bring your cut files on a USB stick. Plywood and acrylic only.',
    })
    .returning('id');
  await knex('class_block_students').insert([{ booking_id: block.id, person_id: p('student') }, { booking_id: block.id, person_id: p('newbie') }]);
}
