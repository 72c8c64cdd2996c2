/**
 * Reconciliation: our card charges and refunds compared with the payment provider's for a period. Pure: the
 * provider's list answers and our rows come in, the differences go out.
 */

/** A charge as the provider lists it (the fields we compare). */
export interface ProviderCharge {
  id: string;
  amount: number;
  amountCaptured: number;
  amountRefunded: number;
  captured: boolean;
  status: string;
  created: number;
  ourChargeId: string | null;
}
export interface ProviderRefund {
  id: string;
  charge: string;
  amount: number;
  created: number;
  ourRefundId: string | null;
}
/** Our charge with a provider charge id. */
export interface OurCharge {
  id: string;
  providerChargeId: string;
  state: string;
  heldMinor: number;
  capturedMinor: number;
  refundedMinor: number;
  createdAt: Date;
}
export interface OurRefund {
  id: string;
  chargeId: string;
  providerRefundId: string;
  amountMinor: number;
  createdAt: Date;
}

export type MismatchKind = 'missing_here' | 'missing_at_provider' | 'amount_differs' | 'state_differs';
export interface Mismatch {
  kind: MismatchKind;
  object: 'charge' | 'refund';
  ourId: string | null;
  providerId: string;
  ours: string;
  provider: string;
}

export const MISMATCH_TEXT: Record<MismatchKind, string> = {
  missing_here: 'at the provider, not in our records',
  missing_at_provider: 'in our records, not at the provider',
  amount_differs: 'amounts differ',
  state_differs: 'states differ',
};

/**
 * One side of a difference as people read it: the amount at its end is kept in minor units ("captured 2400"), shown
 * in the currency ("captured NZD 24.00"). Text without an amount ("captured", "—") is unchanged.
 */
export function readableSide(text: string, money: (amountMinor: number) => string): string {
  return text.replace(/(^|\s)(\d+)$/, (_all, space: string, n: string) => `${space}${money(Number(n))}`);
}

/** What the provider's side of one of our charges should look like. */
function expected(c: OurCharge): { captured: boolean | null; capturedMinor: number | null; refundedMinor: number | null; state: string } {
  switch (c.state) {
    case 'held':
      return { captured: false, capturedMinor: null, refundedMinor: 0, state: 'held' };
    case 'captured':
      return { captured: true, capturedMinor: c.capturedMinor, refundedMinor: c.refundedMinor, state: 'captured' };
    case 'refunded':
      return { captured: true, capturedMinor: c.capturedMinor, refundedMinor: c.capturedMinor, state: 'refunded' };
    case 'refund pending':
      // the refund may or may not have reached the provider yet
      return { captured: true, capturedMinor: c.capturedMinor, refundedMinor: null, state: 'refund pending' };
    default:
      return { captured: null, capturedMinor: null, refundedMinor: null, state: c.state };
  }
}

const describe = (p: ProviderCharge) => (p.captured ? (p.amountRefunded >= p.amountCaptured && p.amountRefunded > 0 ? 'refunded' : 'captured') : p.amountRefunded > 0 ? 'released' : 'held');

/**
 * Compares one period. `providerCharges`/`providerRefunds`: the provider's, created in the period. `ours`: every
 * charge of ours whose provider id is among them or which was made in the period (`from`, `to`), and our refunds
 * likewise. A provider charge that one of ours replaced (a hold let go when the final sum was higher) is no mismatch.
 */
export function reconcile(input: {
  from: Date;
  to: Date;
  providerCharges: ProviderCharge[];
  providerRefunds: ProviderRefund[];
  ourCharges: OurCharge[];
  ourRefunds: OurRefund[];
  /** our charge ids, for provider charges whose metadata names one of ours that moved on to another provider charge */
  knownChargeIds: Set<string>;
}): Mismatch[] {
  const out: Mismatch[] = [];
  const inPeriod = (d: Date) => d >= input.from && d < input.to;
  const oursByProvider = new Map(input.ourCharges.map((c) => [c.providerChargeId, c]));
  const providerById = new Map(input.providerCharges.map((p) => [p.id, p]));
  for (const p of input.providerCharges) {
    if (p.status === 'failed') continue; // a decline: nothing was taken
    const ours = oursByProvider.get(p.id);
    if (!ours) {
      const superseded = p.ourChargeId && input.knownChargeIds.has(p.ourChargeId) && (!p.captured ? p.amountRefunded >= p.amount : p.amountRefunded >= p.amountCaptured);
      if (!superseded) out.push({ kind: 'missing_here', object: 'charge', ourId: p.ourChargeId, providerId: p.id, ours: '—', provider: `${describe(p)} ${p.amount}` });
      continue;
    }
    const e = expected(ours);
    if (e.captured === null) continue;
    if (e.captured !== p.captured || (e.state === 'held' && p.amountRefunded > 0)) {
      out.push({ kind: 'state_differs', object: 'charge', ourId: ours.id, providerId: p.id, ours: e.state, provider: describe(p) });
      continue;
    }
    if (e.state === 'held' && ours.heldMinor !== p.amount) {
      out.push({ kind: 'amount_differs', object: 'charge', ourId: ours.id, providerId: p.id, ours: `held ${ours.heldMinor}`, provider: `held ${p.amount}` });
    } else if (e.capturedMinor !== null && e.capturedMinor !== p.amountCaptured) {
      out.push({ kind: 'amount_differs', object: 'charge', ourId: ours.id, providerId: p.id, ours: `captured ${e.capturedMinor}`, provider: `captured ${p.amountCaptured}` });
    } else if (e.refundedMinor !== null && e.refundedMinor !== p.amountRefunded) {
      out.push({ kind: 'amount_differs', object: 'charge', ourId: ours.id, providerId: p.id, ours: `refunded ${e.refundedMinor}`, provider: `refunded ${p.amountRefunded}` });
    }
  }
  for (const c of input.ourCharges) {
    if (!inPeriod(c.createdAt) || providerById.has(c.providerChargeId)) continue;
    out.push({ kind: 'missing_at_provider', object: 'charge', ourId: c.id, providerId: c.providerChargeId, ours: `${c.state} ${c.capturedMinor || c.heldMinor}`, provider: '—' });
  }
  const ourRefundsByProvider = new Map(input.ourRefunds.map((r) => [r.providerRefundId, r]));
  const providerRefundIds = new Set(input.providerRefunds.map((r) => r.id));
  for (const r of input.providerRefunds) {
    if (!r.ourRefundId) continue; // a hold let go (a release), counted on its charge
    const ours = ourRefundsByProvider.get(r.id);
    if (!ours) out.push({ kind: 'missing_here', object: 'refund', ourId: r.ourRefundId, providerId: r.id, ours: '—', provider: `refund ${r.amount}` });
    else if (ours.amountMinor !== r.amount) out.push({ kind: 'amount_differs', object: 'refund', ourId: ours.id, providerId: r.id, ours: `refund ${ours.amountMinor}`, provider: `refund ${r.amount}` });
  }
  for (const r of input.ourRefunds) {
    if (!inPeriod(r.createdAt) || providerRefundIds.has(r.providerRefundId)) continue;
    out.push({ kind: 'missing_at_provider', object: 'refund', ourId: r.id, providerId: r.providerRefundId, ours: `refund ${r.amountMinor}`, provider: '—' });
  }
  return out;
}

/** Stripe-shaped list objects (as the SDK returns them) to the fields compared. */
export function fromProviderCharge(c: { id: string; amount: number; amount_captured?: number; amount_refunded: number; captured: boolean; status: string; created: number; metadata?: Record<string, string> | null }): ProviderCharge {
  const captured = c.captured ? (c.amount_captured ?? c.amount) : 0;
  // a partial capture gives the rest back as a refund: only refunds after the capture count as refunds of what was taken
  const refunded = c.captured ? c.amount_refunded - (c.amount - captured) : c.amount_refunded;
  return {
    id: c.id, amount: c.amount, amountCaptured: captured, amountRefunded: refunded, captured: c.captured,
    status: c.status, created: c.created, ourChargeId: c.metadata?.chargeId ?? null,
  };
}
export function fromProviderRefund(r: { id: string; charge: string | { id: string } | null; amount: number; created: number; metadata?: Record<string, string> | null }): ProviderRefund {
  return { id: r.id, charge: typeof r.charge === 'string' ? r.charge : (r.charge?.id ?? ''), amount: r.amount, created: r.created, ourRefundId: r.metadata?.refundId ?? null };
}
