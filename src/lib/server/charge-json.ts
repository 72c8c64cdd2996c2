/** The JSON shape of a charge in API answers (no provider ids, no internal fields). */
import type { Charge } from './payments/charge-records';

export function chargeJson(c: Charge) {
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
