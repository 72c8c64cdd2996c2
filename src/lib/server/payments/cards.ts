/** Customers and cards at the provider: the person's customer, the saved card. */
import { createHash } from 'node:crypto';
import { recordAudit } from '@lib/server/audit';
import { db, transaction } from '@lib/server/db';
import { DomainError } from '@lib/server/errors';
import { personFor } from './charge-records';
import { settleOwed } from './charge-runs';
import { classify, provider, unreachable, type ProviderError } from './provider';
import type { SavedCard } from '@lib/account-views';


/** The person's customer at the provider, created on first use (and again if the provider lost it). */
export async function ensureCustomer(personId: string): Promise<string> {
  const person = await personFor(personId);
  const row = await db()('payment_customers').where({ person_id: personId }).first();
  if (row) {
    try {
      const c = await provider().customers.retrieve(row.provider_customer_id);
      if (!(c as { deleted?: boolean }).deleted) return row.provider_customer_id;
    } catch (err) {
      if (classify(err) === 'unreachable') throw unreachable();
      if (classify(err) !== 'missing') throw err;
    }
  }
  let created;
  try {
    created = await provider().customers.create(
      { email: person.email, name: person.name, metadata: { personId } },
      { idempotencyKey: `beamwarden-person-${personId}-customer-${row?.provider_customer_id ?? 'first'}` },
    );
  } catch (err) {
    if (classify(err) === 'unreachable') throw unreachable();
    throw err;
  }
  await db()('payment_customers')
    .insert({ person_id: personId, provider_customer_id: created.id })
    .onConflict('person_id')
    .merge({ provider_customer_id: created.id, card_source_id: null, card_brand: null, card_last4: null, updated_at: db().fn.now() });
  return created.id;
}

/**
 * Saves a card (a provider token) as the person's default source. Then any charge left `payment failed`
 * or `carried` is retried on the new card. Card errors → 402 card_declined.
 */
export async function saveCard(personId: string, token: string): Promise<{ card: SavedCard; settled: number }> {
  const customerId = await ensureCustomer(personId);
  let source: { id: string; brand?: string; last4?: string };
  try {
    const tokenHash = createHash('sha256').update(token).digest('hex').slice(0, 16);
    source = (await provider().customers.createSource(
      customerId,
      { source: token },
      { idempotencyKey: `beamwarden-person-${personId}-card-${customerId}-${tokenHash}` },
    )) as never;
    await provider().customers.update(customerId, { default_source: source.id }, { idempotencyKey: `beamwarden-person-${personId}-default-${source.id}` });
  } catch (err) {
    const kind = classify(err);
    if (kind === 'card') throw new DomainError('payment_required', 'card_declined', `The card was declined: ${(err as ProviderError).message ?? 'no reason given'}. Try another card.`);
    if (kind === 'unreachable') throw unreachable();
    if (kind === 'missing' || (err as ProviderError).type === 'StripeInvalidRequestError') {
      throw new DomainError('invalid', 'invalid', 'The card details were not accepted.', { token: (err as ProviderError).message ?? 'Not a card token.' });
    }
    throw err;
  }
  const card = { brand: source.brand ?? 'Card', last4: source.last4 ?? '????' };
  await transaction(async (trx) => {
    await trx('payment_customers').where({ person_id: personId }).update({
      card_source_id: source.id, card_brand: card.brand, card_last4: card.last4, updated_at: trx.fn.now(),
    });
    await recordAudit(trx, { actorId: personId, kind: 'card.saved', subjectType: 'person', subjectId: personId, summary: `Saved a card (${card.brand} •••• ${card.last4})` });
  });
  const settled = await settleOwed(personId);
  return { card, settled };
}

export async function savedCard(personId: string): Promise<SavedCard | null> {
  const row = await db()('payment_customers').where({ person_id: personId }).first('card_brand', 'card_last4', 'card_source_id');
  return row?.card_source_id ? { brand: row.card_brand, last4: row.card_last4 } : null;
}
