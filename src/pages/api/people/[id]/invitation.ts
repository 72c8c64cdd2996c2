import { DomainError, json, requireRole, route } from '@lib/server/http';
import { resendInvitation } from '@lib/server/accounts';
import { uuid } from '@lib/schemas';

/**
 * POST /api/people/:id/invitation (admin) → {email, name, expiresInDays}: a new invitation link is e-mailed to a
 * person an admin invited who has not chosen a password yet; earlier invitation links stop working. Audited.
 * 404 `person_not_found`; 409 `not_awaiting_invitation`; 429 `too_many_requests` (3 an hour per person).
 */
export const POST = route(async ({ locals, params }) => {
  const admin = requireRole(locals, 'admin');
  const id = uuid.safeParse(params.id);
  if (!id.success) throw new DomainError('not_found', 'not_found', 'No person has that id.');
  return json(await resendInvitation(admin.id, id.data));
});
