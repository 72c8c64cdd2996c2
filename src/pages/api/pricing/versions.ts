import { z } from '@lib/zod';
import { DomainError, json, readJson, requireRole, route } from '@lib/server/http';
import { createVersion, listVersions } from '@lib/server/prices';
import { type PriceVersion } from '@lib/pricing';
import { getSettings } from '@lib/server/settings';
import { startOfZonedDay, zonedDate } from '@lib/time';
import { calendarDate, minor, tier, uuid } from '@lib/schemas';

const body = z.object({
  /** the version starts at 00:00 of this date in the site's time zone */
  effectiveDate: calendarDate,
  incrementMinutes: z.number().int().min(1, 'At least 1 minute.').max(240, 'At most 240 minutes.'),
  minimumChargeMinor: minor,
  dailyCapMinor: minor.nullable(),
  lateCancelFeeMinor: minor,
  noShowFeeMinor: minor,
  minimumRule: z.enum(['carry', 'waive']),
  rechargeTiers: z.array(tier).max(4),
  materials: z.array(z.object({ sku: z.string().trim().regex(/^[a-z0-9][a-z0-9-]{0,39}$/, 'A code such as ply-3.'), name: z.string().trim().min(1).max(120), priceMinor: minor }).strict()).max(100),
  note: z.string().trim().max(500).default(''),
  rates: z.array(z.object({ machineId: uuid, tier, perMinuteMinor: minor }).strict()).max(400),
}).strict();

export function versionJson(v: PriceVersion) {
  return { ...v, effectiveFrom: v.effectiveFrom.toISOString(), createdAt: v.createdAt.toISOString() };
}

/** GET /api/pricing/versions (admin) → every version, newest first. */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'admin');
  return json({ versions: (await listVersions()).map(versionJson) });
});

/**
 * POST /api/pricing/versions {...} (admin) → the new version, in force from 00:00 of effectiveDate (site time zone).
 * Audited. Currency and tax are the site's (Admin › Site), so they are not in the body.
 */
export const POST = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, body);
  const { timeZone } = await getSettings();
  const effectiveFrom = startOfZonedDay(input.effectiveDate, timeZone);
  if (Number.isNaN(effectiveFrom.getTime())) throw new DomainError('invalid', 'invalid', 'Not a date.', { effectiveDate: 'Not a calendar date.' });
  const today = zonedDate(new Date(), timeZone);
  // "today" means: from now (a version cannot start in the past)
  const from = input.effectiveDate === today ? new Date() : effectiveFrom;
  const { effectiveDate: _d, ...rest } = input;
  return json(versionJson(await createVersion(admin.id, { ...rest, effectiveFrom: from })), 201);
});
