/**
 * The words of the domain that screens, schemas and server modules share, each declared once here: price tiers and
 * the states a charge and a booking go through. Pure: no I/O. (Machine statuses are in machines-shared.ts, fault words
 * in faults-shared.ts, clearance states in clearance-rules.ts; which booking states are active is the bookings
 * workflow's.)
 */

/** Price tiers: who pays what per minute (PRODUCT.md). */
export const TIERS = ['student', 'staff', 'community', 'commercial'] as const;
export type Tier = (typeof TIERS)[number];
export const TIER_LABELS: Record<Tier, string> = { student: 'Student', staff: 'Staff', community: 'Community', commercial: 'Commercial' };

/** The states of a charge (see server/payments/charge-records.ts for what each means). */
export const CHARGE_STATES = [
  'pending', 'queued', 'held', 'captured', 'released', 'payment failed', 'refunded', 'recharged', 'carried', 'waived', 'settled', 'refund pending',
] as const;
export type ChargeState = (typeof CHARGE_STATES)[number];

/** What a charge is for. */
export const CHARGE_KINDS = ['beam_time', 'late_cancellation', 'no_show'] as const;
export type ChargeKind = (typeof CHARGE_KINDS)[number];

/** The states of a booking, and what kind of booking it is. */
export type BookingState = 'reserved' | 'checked in' | 'completed' | 'cancelled' | 'no-show' | 'bumped';
export type BookingKind = 'personal' | 'class' | 'hold';
