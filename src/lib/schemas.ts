/** Field schemas shared by several routes and forms. Route-specific schemas sit next to their route. */
import { z } from 'zod';
import { PASSWORD_MAX, PASSWORD_MIN } from './password-rules';
import { ROLES } from './roles';
import { isCalendarDate } from './zoned-time';

export const email = z
  .string()
  .trim()
  .toLowerCase()
  .max(254, 'An e-mail address has at most 254 characters.')
  .pipe(z.email('Enter an e-mail address such as name@example.org.'));

export const password = z
  .string()
  .min(PASSWORD_MIN, `Use at least ${PASSWORD_MIN} characters.`)
  .max(PASSWORD_MAX, `Use at most ${PASSWORD_MAX} characters.`);

export const personName = z.string().trim().min(1, 'Enter your name.').max(120, 'Use at most 120 characters.');

export const uuid = z.uuid('Not a valid id.');

export const role = z.enum(ROLES, { error: `A role is one of ${ROLES.join(', ')}.` });

/** An instant with an explicit offset or Z, e.g. 2026-12-02T09:00:00+13:00. */
export const isoInstant = z.iso.datetime({ offset: true, error: 'Use an ISO 8601 date and time with an offset, e.g. 2026-12-02T09:00:00+13:00.' }).transform((s) => new Date(s));

export const page = z.coerce.number().int().min(1).max(100_000).default(1);
export const pageSize = z.coerce.number().int().min(1).max(200).default(25);

export const searchText = z.string().trim().max(200).optional();

/** A calendar date written YYYY-MM-DD (read in the site's time zone by whoever uses it). */
export const calendarDate = z.string().trim().refine(isCalendarDate, 'Use a date written YYYY-MM-DD, e.g. 2026-12-02.');
