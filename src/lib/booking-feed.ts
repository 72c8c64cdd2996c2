/**
 * What the Book screen's week feed carries: its bookings, closures and machines with their open hours. The server
 * builds it (server/bookings/week-view.ts) with Date times; the calendar island reads it as `Json<Feed>`. Pure: no I/O.
 */
import type { Interval } from './availability';
import type { BookingKind, BookingState } from './vocabulary';

export interface FeedEvent {
  id: string;
  machineId: string;
  startsAt: Date;
  endsAt: Date;
  occupiedUntil: Date;
  state: BookingState;
  kind: BookingKind;
  mine: boolean;
  /** Whose booking: only shown to instructors, stewards and admins (and to the owner). */
  personName: string | null;
  courseName: string | null;
  notes: string | null;
  lateCancel: boolean;
  /** The viewer's own reserved bookings: what cancelling costs (fee if late, the card hold released). */
  cancelTerms?: CancelTerms;
}

export interface CancelTerms {
  /** The late-cancellation fee with tax, or null when the price version has none (or no price applies). */
  lateFeeMinor: number | null;
  /** The amount held on the card for this booking, released on cancelling; null when nothing is held. */
  heldMinor: number | null;
  currency: string | null;
}

/** The viewer's booked minutes on a machine in the site week holding the feed's first day, and the tier's limit. */
export interface WeekUse {
  weekStart: Date;
  usedMinutes: number;
  limitMinutes: number | null;
}

export interface Feed {
  timeZone: string;
  bookings: FeedEvent[];
  closures: { id: string; machineId: string | null; startsAt: Date; endsAt: Date; reason: string }[];
  machines: { id: string; name: string; status: string; open: Interval[]; slotMinutes: number; minMinutes: number; maxMinutes: number; bufferMinutes: number; cancelCutoffMinutes: number; week: WeekUse }[];
}
