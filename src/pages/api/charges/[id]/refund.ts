import { z } from '@lib/zod';
import { DomainError, json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { getCharge } from '@lib/server/payments/charge-records';
import { refund } from '@lib/server/payments/intents';
import { chargeJson } from '@lib/server/charge-json';
import { minor } from '@lib/schemas';

const body = z.object({
  amountMinor: minor.optional(),
  reason: z.string().trim().min(3, 'Give a reason (at least 3 characters).').max(500, 'At most 500 characters.'),
}).strict();

/**
 * POST /api/charges/:id/refund {amountMinor?, reason} (steward/admin) → 200 with the charge when the refund is done;
 * 202 {state: "refund pending", charge} while the card service is unreachable (the worker completes it, exactly
 * once). Full when amountMinor is left out. Audited.
 */
export const POST = route(async ({ locals, params, request }) => {
  const actor = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'charge');
  const input = await readJson(request, body);
  const c = await getCharge(id);
  if (!c) throw new DomainError('not_found', 'not_found', 'No charge has that id.');
  const paid = c.method === 'recharge' ? c.amountMinor : c.capturedMinor;
  const amount = input.amountMinor ?? paid - c.refundedMinor;
  const after = await refund(c.id, amount, input.reason, actor.id);
  if (after.state === 'refund pending') return json({ state: 'refund pending', charge: chargeJson(after) }, 202);
  return json(chargeJson(after));
});
