import { z } from '@lib/zod';
import { json, readJson, requireSignedIn, route } from '@lib/server/http';
import { quoteFor } from '@lib/server/prices';
import { isoInstant, materialsWanted, tier, uuid } from '@lib/schemas';

const body = z.object({
  machineId: uuid,
  tier,
  minutes: z.number().min(0, 'Use zero or more minutes.').max(24 * 60, 'At most one day (1440 minutes).'),
  at: isoInstant.optional(),
  materials: materialsWanted.optional(),
}).strict();

/**
 * POST /api/tools/quote {machineId, tier, minutes, at?, materials?} (signed in) → the price by the version in
 * force at `at` (default now): {currency, amountMinor, taxMinor, lines, ...}. No daily cap applied (no person).
 */
export const POST = route(async ({ locals, request }) => {
  requireSignedIn(locals);
  const input = await readJson(request, body);
  const q = await quoteFor(input);
  return json({
    currency: q.currency,
    amountMinor: q.amountMinor,
    taxMinor: q.taxMinor,
    subtotalMinor: q.subtotalMinor,
    taxMode: q.taxMode,
    taxRateBp: q.taxRateBp,
    billedMinutes: q.billedMinutes,
    lines: q.lines,
    priceVersionId: q.priceVersionId,
    effectiveFrom: q.effectiveFrom.toISOString(),
  });
});
