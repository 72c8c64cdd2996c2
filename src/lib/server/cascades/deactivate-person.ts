/**
 * Cascade: deactivating a person cancels their future bookings (the worker releases their holds) — it sits above
 * the people entity and the bookings workflow so that neither imports the other.
 */
import { transaction } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { applyActive, mustGetPerson, type Person } from '@lib/server/people';
import { cancelFutureBookingsOf } from '@lib/server/bookings/cancel';

/**
 * Deactivates a person (admin): they can no longer sign in, and their current session ends at their
 * next request (session.ts resolves only active people). Audited as `person.deactivated`. Deactivating
 * someone already inactive changes nothing. An admin cannot deactivate themselves (409).
 */
export async function deactivatePerson(actorId: string, personId: string): Promise<Person> {
  if (actorId === personId) {
    throw new DomainError('conflict', 'cannot_deactivate_self', 'You cannot deactivate your own account; ask another admin to do it.');
  }
  return transaction(async (trx) => {
    const changed = await applyActive(trx, actorId, personId, false);
    // bookings: the person's reserved bookings that have not ended are cancelled in this same transaction; their
    // card holds are released by the worker (intents recorded with the cancellations)
    if (changed) await cancelFutureBookingsOf(trx, actorId, personId);
    return mustGetPerson(personId, trx);
  });
}
