/**
 * Demo times counted in the site's own days from the seed time: `at(2, 18)` is 18:00 two site days from today,
 * `weekdayOf(2)` that day's ISO weekday (Monday 1 … Sunday 7). Lives below seeds/ so knex does not run it as a seed.
 */
import { addDays, localToInstant, wallClock } from '../../src/lib/availability';

export function siteDays(now: Date, tz: string) {
  const today = wallClock(now, tz);
  const day = (dayOffset: number) => addDays(today.year, today.month, today.day, dayOffset);
  return {
    at(dayOffset: number, hour: number, minute = 0): Date {
      const d = day(dayOffset);
      return localToInstant(d.year, d.month, d.day, hour * 60 + minute, tz);
    },
    weekdayOf(dayOffset: number): number {
      const d = day(dayOffset);
      const js = new Date(Date.UTC(d.year, d.month - 1, d.day)).getUTCDay();
      return js === 0 ? 7 : js;
    },
  };
}
