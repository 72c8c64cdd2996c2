import { DomainError, idParam, requireSignedIn, route } from '@lib/server/http';
import { getRequest, getRequestSds } from '@lib/server/material-requests';
import { hasAnyRole } from '@lib/roles';

/** GET /api/material-requests/:id/sds → the stored PDF (the requester, stewards and admins). */
export const GET = route(async ({ locals, params }) => {
  const person = requireSignedIn(locals);
  const r = await getRequest(idParam(params.id, 'request'));
  if (!r || (r.requesterId !== person.id && !hasAnyRole(person.roles, ['steward', 'admin']))) {
    throw new DomainError('not_found', 'not_found', 'No request has that id.');
  }
  const sds = await getRequestSds(r.id);
  if (!sds) throw new DomainError('not_found', 'not_found', 'The safety data sheet is missing from storage.');
  return new Response(Buffer.from(sds.bytes), {
    status: 200,
    headers: {
      'content-type': 'application/pdf',
      'content-disposition': `inline; filename="${sds.filename.replace(/"/g, '')}"`,
      'x-content-type-options': 'nosniff',
      // an uploaded file never runs scripts or reaches the site's origin, whatever it hides
      'content-security-policy': "sandbox; default-src 'none'; style-src 'unsafe-inline'; object-src 'none'",
      'cache-control': 'private, no-store',
    },
  });
});
