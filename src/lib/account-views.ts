/**
 * What the Account screen and its API share: the account summary, a charge as the API answers it, and the ways the
 * charges table sorts. The server builds these (server/payments/account.ts, server/charge-json.ts); the island reads
 * them. Pure: no I/O.
 */
import type { Breakdown } from './pricing';
import type { Json } from './json';
import type { ChargeKind, ChargeState, Tier } from './vocabulary';

export interface SavedCard {
  brand: string;
  last4: string;
}

export interface AccountSummary {
  tier: Tier;
  costCentre: string | null;
  recharge: boolean;
  card: SavedCard | null;
  currency: string;
  balanceOwedMinor: number;
  failed: number;
}

/** What a charge shows the person it is for; the server's charge record (server/payments/charge-records.ts) extends it. */
export interface ChargeShown {
  id: string;
  createdAt: Date;
  startedAt: Date | null;
  machineName: string | null;
  kind: ChargeKind;
  method: 'card' | 'recharge';
  costCentre: string | null;
  state: ChargeState;
  currency: string;
  amountMinor: number;
  taxMinor: number;
  capturedMinor: number;
  refundedMinor: number;
  minutes: number | null;
  failureMessage: string | null;
}

/** A charge in API answers (no provider ids, no internal fields); times are ISO strings. */
export type ChargeJson = Json<ChargeShown> & { lines: Breakdown['lines'] };

export const CHARGE_SORTS = ['date', 'amount', 'state', 'machine'] as const;
export type ChargeSort = (typeof CHARGE_SORTS)[number];
