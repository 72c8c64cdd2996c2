import { DomainError, idParam, requireSignedIn, route } from '@lib/server/http';
import { faultPhoto } from '@lib/server/faults/records';

/** GET /api/faults/:id/photos/:n (stewards, admins and the reporter) → the cleaned JPEG; 404 for anyone else. */
export const GET = route(async ({ locals, params }) => {
  const person = requireSignedIn(locals);
  const id = idParam(params.id, 'photo');
  const n = Number(params.n);
  if (!Number.isInteger(n) || n < 1 || n > 3) throw new DomainError('not_found', 'not_found', 'No such photo.');
  const photo = await faultPhoto(person, id, n);
  return new Response(Buffer.from(photo.bytes), {
    status: 200,
    headers: { 'content-type': 'image/jpeg', 'cache-control': 'private, max-age=300', 'x-content-type-options': 'nosniff', 'content-disposition': 'inline' },
  });
});
