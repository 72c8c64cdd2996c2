/** For reconciliation and support: what the provider and our records say happened in a period. */
import { db } from '@lib/server/db';
import { provider } from './provider';

/**
 * For reconciliation: the provider's charges and refunds created in [from, to), through the SDK's list calls
 * (auto-paged). The local fake ignores the `created` filter, so the period is also applied here.
 */
export async function providerActivity(from: Date, to: Date): Promise<{ charges: ProviderChargeListed[]; refunds: ProviderRefundListed[] }> {
  const created = { gte: Math.floor(from.getTime() / 1000), lt: Math.floor(to.getTime() / 1000) };
  const inPeriod = (t: number) => t >= created.gte && t < created.lt;
  const charges: ProviderChargeListed[] = [];
  for await (const c of provider().charges.list({ limit: 100, created })) if (inPeriod(c.created)) charges.push(c as never);
  const refunds: ProviderRefundListed[] = [];
  for await (const r of provider().refunds.list({ limit: 100, created })) if (inPeriod(r.created)) refunds.push(r as never);
  return { charges, refunds };
}
export type ProviderChargeListed = { id: string; amount: number; amount_captured?: number; amount_refunded: number; captured: boolean; status: string; created: number; metadata?: Record<string, string> | null };
export type ProviderRefundListed = { id: string; charge: string | null; amount: number; created: number; metadata?: Record<string, string> | null };

/** For reconciliation: our card charges with a provider id made in [from, to) or named in `providerIds`; our refunds made at the provider likewise. */
export async function recordedActivity(from: Date, to: Date, providerChargeIds: string[], providerRefundIds: string[]) {
  const charges = await db()('charges').whereNotNull('provider_charge_id').where((q) => {
    q.where((w) => w.where('created_at', '>=', from).where('created_at', '<', to));
    if (providerChargeIds.length) q.orWhereIn('provider_charge_id', providerChargeIds);
  }).select('id', 'provider_charge_id', 'state', 'held_minor', 'captured_minor', 'refunded_minor', 'created_at');
  const refunds = await db()('charge_refunds').whereNotNull('provider_refund_id').where((q) => {
    q.where((w) => w.where('created_at', '>=', from).where('created_at', '<', to));
    if (providerRefundIds.length) q.orWhereIn('provider_refund_id', providerRefundIds);
  }).select('id', 'charge_id', 'provider_refund_id', 'amount_minor', 'created_at');
  return {
    charges: charges.map((c) => ({ id: c.id, providerChargeId: c.provider_charge_id, state: c.state, heldMinor: c.held_minor, capturedMinor: c.captured_minor, refundedMinor: c.refunded_minor, createdAt: c.created_at })),
    refunds: refunds.map((r) => ({ id: r.id, chargeId: r.charge_id, providerRefundId: r.provider_refund_id, amountMinor: r.amount_minor, createdAt: r.created_at })),
  };
}

/** Which of these ids are charges of ours. */
export async function knownChargeIds(ids: string[]): Promise<Set<string>> {
  const uuids = ids.filter((i) => /^[0-9a-f-]{36}$/i.test(i));
  if (!uuids.length) return new Set();
  return new Set(await db()('charges').whereIn('id', uuids).pluck('id'));
}

/** For tests and support: the provider's charges of a person (to check nothing was taken twice). */
export async function providerChargesOf(personId: string): Promise<{ id: string; amount: number; captured: boolean; refunded: number }[]> {
  const out: { id: string; amount: number; captured: boolean; refunded: number }[] = [];
  // every charge we make carries metadata.personId (the local fake does not filter charges by customer)
  for await (const c of provider().charges.list({ limit: 100 })) {
    if (c.metadata?.personId === personId && c.status !== 'failed') out.push({ id: c.id, amount: c.amount, captured: c.captured, refunded: c.amount_refunded });
  }
  return out;
}
