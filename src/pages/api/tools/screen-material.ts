import { z } from 'zod';
import { json, readJson, requireSignedIn, route } from '../../../lib/server/http';
import { screenOrThrow } from '../../../lib/server/material-requests';

const body = z.object({ composition: z.string().max(200, 'Use at most 200 characters.') }).strict();

/** POST /api/tools/screen-material {composition} (signed in) → { elements, halogens, verdict, reason }; 422 invalid_formula. */
export const POST = route(async ({ locals, request }) => {
  requireSignedIn(locals);
  const { composition } = await readJson(request, body);
  const r = screenOrThrow(composition);
  return json({ elements: r.elements, halogens: r.halogens, verdict: r.verdict, reason: r.reason });
});
