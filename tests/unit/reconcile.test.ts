/**
 * Reconciliation, pure: the comparison of our charges and refunds with the provider's list answers. The provider side
 * is a recorded answer (tests/unit/fixtures/provider-list-answers.json) in the shape a real provider returns with the
 * `created` period filter applied, which the local fake does not apply.
 */
import { describe, expect, it } from 'vitest';
import recorded from './fixtures/provider-list-answers.json';
import { fromProviderCharge, fromProviderRefund, reconcile, type OurCharge, type OurRefund } from '../../src/lib/reconcile';
import { formatReceiptNumber, receiptPrefix } from '../../src/lib/receipts';
import { quote, type PriceTable } from '../../src/lib/pricing';

const from = new Date(1796284800 * 1000 - 3600_000);
const to = new Date(1796299200 * 1000 + 3600_000);
const at = (s: number) => new Date(s * 1000);

const ours: OurCharge[] = [
  { id: '11111111-1111-4111-8111-111111111111', providerChargeId: 'ch_rec_held', state: 'held', heldMinor: 5400, capturedMinor: 0, refundedMinor: 0, createdAt: at(1796284790) },
  { id: '22222222-2222-4222-8222-222222222222', providerChargeId: 'ch_rec_partial', state: 'captured', heldMinor: 0, capturedMinor: 4050, refundedMinor: 0, createdAt: at(1796284795) },
  // its hold (ch_rec_replaced_hold) was let go and the higher final sum charged anew
  { id: '33333333-3333-4333-8333-333333333333', providerChargeId: 'ch_rec_new', state: 'captured', heldMinor: 0, capturedMinor: 1800, refundedMinor: 500, createdAt: at(1796291000) },
];
const ourRefunds: OurRefund[] = [
  { id: '55555555-5555-4555-8555-555555555555', chargeId: '33333333-3333-4333-8333-333333333333', providerRefundId: 're_rec_ours', amountMinor: 500, createdAt: at(1796292990) },
];
const known = new Set(ours.map((c) => c.id));

function run(o = ours, r = ourRefunds) {
  return reconcile({
    from, to,
    providerCharges: (recorded.charges.data as Parameters<typeof fromProviderCharge>[0][]).map(fromProviderCharge),
    providerRefunds: (recorded.refunds.data as Parameters<typeof fromProviderRefund>[0][]).map(fromProviderRefund),
    ourCharges: o, ourRefunds: r, knownChargeIds: known,
  });
}

describe('reconcile (recorded provider answer)', () => {
  it('agrees on holds, partial captures, replaced holds, releases and declines; flags only what differs', () => {
    const m = run();
    // the stranger charge (no chargeId of ours) and the refund naming a refund id we do not have
    expect(m).toEqual([
      expect.objectContaining({ kind: 'missing_here', object: 'charge', providerId: 'ch_rec_stranger' }),
      expect.objectContaining({ kind: 'missing_here', object: 'refund', providerId: 're_rec_unknown' }),
    ]);
  });

  it('a charge of ours the provider does not list is missing at the provider; amounts and states that differ are named', () => {
    const changed: OurCharge[] = [
      { ...ours[0]!, heldMinor: 5000 },
      { ...ours[1]!, state: 'held' },
      ours[2]!,
      { id: '77777777-7777-4777-8777-777777777777', providerChargeId: 'ch_rec_never', state: 'captured', heldMinor: 0, capturedMinor: 700, refundedMinor: 0, createdAt: at(1796290000) },
    ];
    const m = run(changed, []);
    expect(m).toContainEqual(expect.objectContaining({ kind: 'amount_differs', providerId: 'ch_rec_held', ours: 'held 5000', provider: 'held 5400' }));
    expect(m).toContainEqual(expect.objectContaining({ kind: 'state_differs', providerId: 'ch_rec_partial', ours: 'held', provider: 'captured' }));
    expect(m).toContainEqual(expect.objectContaining({ kind: 'missing_at_provider', providerId: 'ch_rec_never' }));
    // our refund row is gone: the provider's refund naming it is missing here
    expect(m).toContainEqual(expect.objectContaining({ kind: 'missing_here', object: 'refund', providerId: 're_rec_ours' }));
  });
});

describe('receipt numbers', () => {
  it('prefix from the site name, year, five-digit sequence', () => {
    expect(receiptPrefix('Tidewater Community Workshop')).toBe('TCW');
    expect(receiptPrefix('Makerspace')).toBe('MAK');
    expect(receiptPrefix('!!!')).toBe('BW');
    expect(formatReceiptNumber('TCW', 2026, 42)).toBe('TCW-2026-00042');
    expect(() => formatReceiptNumber('TCW', 2026, 0)).toThrow();
  });
});

describe('the minimum charge for a checked-in session', () => {
  const table: PriceTable = {
    currency: 'NZD', incrementMinutes: 5, minimumChargeMinor: 500, dailyCapMinor: null, lateCancelFeeMinor: 1000, noShowFeeMinor: 1500,
    taxRateBp: 1500, taxMode: 'inclusive', materials: [], rates: { m: { student: 50, staff: 60, community: 90, commercial: 120 } },
  } as unknown as PriceTable;
  it('applies to a session of under a minute (0 billable minutes) once checked in; a fee-only quote has none', () => {
    const q = quote(table, { machineId: 'm', tier: 'community', minutes: 0, checkedIn: true });
    expect(q.lines.map((l) => [l.kind, l.amountMinor])).toEqual([['beam_time', 0], ['minimum', 500]]);
    expect(q.amountMinor).toBe(500);
    expect(quote(table, { machineId: 'm', tier: 'community', minutes: 0, noShow: true }).lines.map((l) => l.kind)).toEqual(['beam_time', 'no_show']);
  });
});
