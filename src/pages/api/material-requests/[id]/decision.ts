import { z } from '@lib/zod';
import { json, readJson, requireRole, route, idParam } from '@lib/server/http';
import { decideRequest } from '@lib/server/material-requests';
import { materialCategory, materialMode, materialRule } from '@lib/material-schemas';

import { requestJson } from '../index';

const body = z.discriminatedUnion('decision', [
  z
    .object({
      decision: z.literal('approve'),
      rule: materialRule,
      reason: z.string().trim().min(1, 'Say why, in words members read.').max(1000),
      category: materialCategory,
      modes: z.array(materialMode).max(3),
      maxCutMm: z.number().gt(0).max(100).nullable().default(null),
    })
    .strict()
    .refine((b) => b.rule === 'blocked' || b.modes.length > 0, { path: ['modes'], message: 'Pick at least one mode, or block the material.' }),
  z.object({ decision: z.literal('refuse'), reason: z.string().trim().min(1, 'Give the requester a reason.').max(1000) }).strict(),
]);

/** POST /api/material-requests/:id/decision (steward, admin) → approve into the catalogue with a rule, or refuse with a reason. */
export const POST = route(async ({ locals, params, request }) => {
  const reviewer = requireRole(locals, 'steward', 'admin');
  const id = idParam(params.id, 'request');
  const b = await readJson(request, body);
  const result = await decideRequest(
    reviewer.id,
    id,
    b.decision === 'refuse'
      ? { decision: 'refuse', reason: b.reason }
      : {
          decision: 'approve',
          material: {
            category: b.category, rule: b.rule, reason: b.reason, modes: [...new Set(b.modes)], maxCutMm: b.maxCutMm,
            densityGPerCm3: null, heatOfGasificationJPerG: null, cutEfficiency: null, soldBySpace: false, sheetPriceMinor: null, sheetSize: null,
          },
        },
  );
  return json({ request: requestJson(result.request), materialId: result.material?.id ?? null });
});
