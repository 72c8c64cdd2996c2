/**
 * The card hold a new booking asks for, as the booking request sees it: tried once at once when it can be placed,
 * and what the person is told. The hold's intent was recorded with the booking, so the worker runs it in any case.
 */
import { DomainError } from '@lib/server/errors';
import { getSettings } from '@lib/server/settings';
import { bookingHoldNotice, holdFacts, type HoldFacts } from './account';
import { tryIntentNow } from './intents';

/**
 * `known`: the facts as the booking's own transaction read them (bookings/create.ts createBooking; no
 * charge can be on a booking before its commit, and without a saved card the hold writes none), else read here.
 */
export async function holdAtBooking(b: { id: string; personId: string }, known?: HoldFacts | null): Promise<{ state: 'held' | 'hold pending' | 'none'; notice: string | null }> {
  const facts = known ?? (await holdFacts(b.id, b.personId));
  if (!facts || facts.card) {
    const refusal = await tryIntentNow({ kind: 'booking.hold', bookingId: b.id });
    return bookingHoldNotice(b.id, b.personId, refusal);
  }
  // No saved card: the hold's run (holdForBooking) stops at the card check without writing anything, so it is not
  // tried here. Before that check only its quote can refuse in a way the notice tells: not priced, which quoteFor
  // answers when a price version is in force at the start, in the site's currency, without a rate for this machine
  // and tier (quote()'s first check). With a failed payment on the account the run stops before the quote.
  let refusal: DomainError | null = null;
  if (!facts.failed && facts.version_id !== null && !facts.has_rate) {
    const siteCurrency = facts.site_currency ?? (await getSettings()).currency;
    if (facts.version_currency === siteCurrency) refusal = new DomainError('invalid', 'not_priced', `This machine has no ${facts.tier} rate in the price version in force.`);
  }
  return bookingHoldNotice(b.id, b.personId, refusal, facts);
}
