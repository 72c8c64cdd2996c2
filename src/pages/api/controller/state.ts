import { json, readQuery, route } from '@lib/server/http';
import { authenticate } from '@lib/server/controllers/registry';
import { controllerState } from '@lib/server/controllers/state';
import { stateQuery } from '@lib/controller-schemas';

/**
 * GET /api/controller/state?wait=25 (device token) → 200 {state: 'enabled', until, sessionId} or {state: 'cut', reason,
 * message}. With `wait`, held open until the state changes or the seconds run out.
 */
export const GET = route(async ({ request, url }) => {
  const ctrl = await authenticate(request.headers.get('authorization'));
  const q = readQuery(url, stateQuery);
  return json(await controllerState(ctrl, q.wait ?? 0, request.signal));
});
