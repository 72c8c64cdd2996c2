/** The filter of the Audit screen and its CSV export, as a query string. Pure (no I/O). */
import { z } from '@lib/zod';
import { calendarDate, page, pageSize, searchText, uuid } from './schemas';
import { zonedDayRange } from './time';

const blankToUndefined = (v: unknown) => (v === '' ? undefined : v);

export const auditFilterQuery = z
  .object({
    actor: z.preprocess(blankToUndefined, uuid.optional()),
    kind: z.preprocess(blankToUndefined, z.string().trim().max(100).regex(/^[a-z0-9_.-]+$/i, 'A kind looks like role.changed.').optional()),
    q: searchText,
    /** Whole days in the site's time zone, both ends included. */
    from: z.preprocess(blankToUndefined, calendarDate.optional()),
    to: z.preprocess(blankToUndefined, calendarDate.optional()),
  })
  .refine((v) => !v.from || !v.to || v.from <= v.to, { message: 'The end date is before the start date.', path: ['to'] });

export const auditPageQuery = z
  .object({
    page,
    pageSize,
    sort: z.enum(['at', 'kind', 'actor']).default('at'),
    dir: z.enum(['asc', 'desc']).default('desc'),
  })
  .and(auditFilterQuery);

export type AuditFilterQuery = z.output<typeof auditFilterQuery>;

/** Turns the dates of the query (site time zone) into the instants the database compares. */
export function toAuditFilter(query: AuditFilterQuery, timeZone: string): { actorId?: string; kind?: string; q?: string; from?: Date; to?: Date } {
  const { start, end } = zonedDayRange(query.from, query.to, timeZone);
  return {
    ...(query.actor ? { actorId: query.actor } : {}),
    ...(query.kind ? { kind: query.kind } : {}),
    ...(query.q ? { q: query.q } : {}),
    ...(start ? { from: start } : {}),
    ...(end ? { to: end } : {}),
  };
}

/** One entry of the audit log, as the server reads it (the Audit screen gets it as Json<AuditRow>). */
export interface AuditRow {
  id: number;
  at: Date;
  actorId: string | null;
  actorName: string | null;
  kind: string;
  subjectType: string;
  subjectId: string | null;
  summary: string;
  before: unknown;
  after: unknown;
}
