/** A charge as API answers give it (the shape is ChargeJson in src/lib/account-views.ts). */
import type { ChargeJson } from '@lib/account-views';
import type { Charge } from './payments/charge-records';

export function chargeJson(c: Charge): ChargeJson {
  return {
    id: c.id,
    createdAt: c.createdAt.toISOString(),
    startedAt: c.startedAt?.toISOString() ?? null,
    machineName: c.machineName,
    kind: c.kind,
    method: c.method,
    costCentre: c.costCentre,
    state: c.state,
    currency: c.currency,
    amountMinor: c.amountMinor,
    taxMinor: c.taxMinor,
    capturedMinor: c.capturedMinor,
    refundedMinor: c.refundedMinor,
    minutes: c.minutes,
    lines: c.breakdown.lines,
    failureMessage: c.failureMessage,
  };
}
