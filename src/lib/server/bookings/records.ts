/**
 * Bookings: the row, its mapping and the types every booking module shares; reading one booking and its
 * declared materials. No double booking is enforced by PostgreSQL (bookings_no_overlap, an exclusion constraint
 * over the machine and [starts_at, occupied_until) of active bookings): SQLSTATE 23P01 becomes 409 slot_taken.
 */
import crypto from 'node:crypto';
import type { Knex } from 'knex';
import { db } from '@lib/server/db';
import type { Actor, Role } from '@lib/roles';
import type { Conn } from '@lib/server/db';
import type { BookingKind, BookingState } from '@lib/vocabulary';

export type { Actor, Conn };



export const ACTIVE_STATES = ['reserved', 'checked in'] as const;
/** States that count against the weekly quota. */
export const QUOTA_STATES = ['reserved', 'checked in', 'completed', 'no-show'];
export const HOLD_MINUTES = 15;

export type { BookingKind, BookingState };

export interface Booking {
  id: string;
  machineId: string;
  personId: string;
  kind: BookingKind;
  state: BookingState;
  startsAt: Date;
  endsAt: Date;
  occupiedUntil: Date;
  courseName: string | null;
  notes: string;
  lateCancel: boolean;
  holdExpiresAt: Date | null;
  createdAt: Date;
}


export type Row = {
  id: string; machine_id: string; person_id: string; kind: BookingKind; state: BookingState; starts_at: Date; ends_at: Date;
  occupied_until: Date; course_name: string | null; notes: string; late_cancel: boolean; hold_expires_at: Date | null; created_at: Date;
  calendar_sequence: number;
};


export function toBooking(r: Row): Booking {
  return {
    id: r.id,
    machineId: r.machine_id,
    personId: r.person_id,
    kind: r.kind,
    state: r.state,
    startsAt: r.starts_at,
    endsAt: r.ends_at,
    occupiedUntil: r.occupied_until,
    courseName: r.course_name,
    notes: r.notes,
    lateCancel: r.late_cancel,
    holdExpiresAt: r.hold_expires_at,
    createdAt: r.created_at,
  };
}


export interface MaterialDeclaration {
  materialId: string;
  thicknessMm: number;
  mode: 'cut' | 'engrave' | 'score';
}

export interface BookingInput {
  machineId: string;
  startsAt: Date;
  endsAt: Date;
  materials: MaterialDeclaration[];
  notes: string;
}

export interface MachineRow {
  id: string;
  name: string;
  code: string;
  status: string;
}

export async function getBooking(id: string, trx: Conn = db()): Promise<Booking | null> {
  const r = (await trx('bookings').where({ id }).first()) as Row | undefined;
  return r ? toBooking(r) : null;
}

/** The materials a booking declared. */
export async function bookingMaterials(bookingId: string, trx: Conn = db()): Promise<{ materialId: string; name: string; mode: string; thicknessMm: number }[]> {
  const rows = await trx('booking_materials as bm')
    .join('materials as m', 'm.id', 'bm.material_id')
    .where('bm.booking_id', bookingId)
    .orderBy('bm.id')
    .select('bm.material_id', 'm.name', 'bm.mode', 'bm.thickness_mm');
  return rows.map((r: { material_id: string; name: string; mode: string; thickness_mm: string }) => ({ materialId: r.material_id, name: r.name, mode: r.mode, thicknessMm: Number(r.thickness_mm) }));
}

/** The SHA-256 of a secret token (waitlist claim links, calendar feed URLs): only the hash is stored. */
export function hashToken(token: string): string {
  return crypto.createHash('sha256').update(token).digest('hex');
}
