/**
 * The card hold a new booking asks for, as the booking request sees it: tried once at once when it can be placed,
 * and what the person is told. The hold's intent was recorded with the booking, so the worker runs it in any case.
 */
import { DomainError } from '@lib/server/errors';
import { log } from '@lib/server/log';
import { quoteFor } from '@lib/server/prices';
import { bookingHoldNotice, holdFacts } from './account';
import { tryIntentNow } from './intents';

export async function holdAtBooking(b: { id: string; personId: string; machineId: string; startsAt: Date; endsAt: Date }): Promise<{ state: 'held' | 'hold pending' | 'none'; notice: string | null }> {
  const facts = await holdFacts(b.id, b.personId);
  if (!facts || facts.card) {
    const refusal = await tryIntentNow({ kind: 'booking.hold', bookingId: b.id });
    return bookingHoldNotice(b.id, b.personId, refusal);
  }
  // No saved card: the hold's run (holdForBooking) stops at the card check without writing anything, so it is not
  // tried here. Before that check only its quote can refuse (e.g. no price for this tier), which the notice tells;
  // with a failed payment on the account the run stops before the quote.
  let refusal: DomainError | null = null;
  if (!facts.failed) {
    try {
      await quoteFor({ machineId: b.machineId, tier: facts.tier, minutes: Math.round((b.endsAt.getTime() - b.startsAt.getTime()) / 60_000), at: b.startsAt, personId: b.personId });
    } catch (err) {
      if (err instanceof DomainError && err.kind !== 'unavailable') refusal = err;
      else log.warn({ event: 'payment_intent', kind: 'booking.hold', err: { message: (err as Error).message } }, 'payment intent left to the worker');
    }
  }
  return bookingHoldNotice(b.id, b.personId, refusal, facts);
}
