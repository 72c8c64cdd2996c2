import { z } from '@lib/zod';
import { json, readJson, requireSignedIn, route } from '@lib/server/http';
import { screenMaterialOrThrow } from '@lib/server/material-requests';

const body = z
  .object({
    name: z.string().trim().max(120, 'Use at most 120 characters.').optional(),
    composition: z.string().max(200, 'Use at most 200 characters.').optional(),
  })
  .strict()
  .refine((b) => (b.name ?? '').trim() !== '' || (b.composition ?? '').trim() !== '', { path: ['composition'], message: 'Give a name, a formula, or both.' });

/**
 * POST /api/tools/screen-material {name?, composition?} (signed in) → { elements, halogens, verdict, reason,
 * warnings, matchedName? }; a recognised name (PVC, FR-4, vinyl…) is screened as that material. 422 invalid_formula.
 */
export const POST = route(async ({ locals, request }) => {
  requireSignedIn(locals);
  const { name, composition } = await readJson(request, body);
  const r = screenMaterialOrThrow(name ?? null, composition?.trim() ? composition : null);
  return json({ elements: r.elements, halogens: r.halogens, verdict: r.verdict, reason: r.reason, warnings: r.warnings, ...(r.matchedName ? { matchedName: r.matchedName } : {}) });
});
