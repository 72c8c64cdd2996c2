import { json, readJson, route } from '@lib/server/http';
import { authenticate } from '@lib/server/controllers/registry';
import { authorize } from '@lib/server/controllers/authorize';
import { authorizeBody } from '@lib/controller-schemas';

/**
 * POST /api/controller/authorize {badge} (device token) → 200 {allow: true, sessionId, personName, until, walkUp}
 * or 200 {allow: false, reason, message}. 401 for a wrong, rotated or revoked token.
 */
export const POST = route(async ({ request }) => {
  const ctrl = await authenticate(request.headers.get('authorization'));
  const input = await readJson(request, authorizeBody);
  return json(await authorize(ctrl, input.badge));
});
