/**
 * Row factories shared by the demo seeds and the tests (tests/support/people.ts, machine.ts, booking.ts): a person
 * with roles, a machine group, a machine in a group, a clearance and a booking, written straight into the tables
 * through the Knex handle given (the seed's, or the test database's). They set up data; they are not the app's way
 * of changing it (no audit, no e-mail, no checks beyond the database's own constraints): the app writes these rows
 * through its server modules. Lives below seeds/ so knex does not run it as a seed, and outside src/ so the app
 * never ships a second writer of these tables.
 */
import type { Knex } from 'knex';
import { occupiedUntil } from '../../src/lib/availability';
import type { Role } from '../../src/lib/roles';
import type { Tier } from '../../src/lib/vocabulary';

export interface PersonInput {
  email: string;
  name: string;
  /** an argon2 hash (hashPassword): hash once and reuse it, a hash takes a noticeable moment */
  passwordHash: string;
  roles: readonly Role[];
  tier?: Tier;
  costCentre?: string;
}

/** A person and their role grants; returns the person's id. The address counts as confirmed (the column's default). */
export async function makePerson(knex: Knex, p: PersonInput): Promise<string> {
  const [row] = (await knex('people')
    .insert({ email: p.email.toLowerCase(), name: p.name, password_hash: p.passwordHash, ...(p.tier ? { tier: p.tier } : {}), ...(p.costCentre ? { cost_centre: p.costCentre } : {}) })
    .returning('id')) as { id: string }[];
  if (p.roles.length) await knex('role_grants').insert(p.roles.map((role) => ({ person_id: row!.id, role })));
  return row!.id;
}

export interface GroupInput {
  code: string;
  name: string;
  validityDays?: number;
  refresher?: 'quiz' | 'quiz_and_signoff';
  checklist?: readonly string[];
}

/** A machine group (what a clearance is for); returns its id. */
export async function makeGroup(knex: Knex, g: GroupInput): Promise<string> {
  const [row] = (await knex('machine_groups')
    .insert({ code: g.code, name: g.name, validity_days: g.validityDays ?? 365, refresher: g.refresher ?? 'quiz', checklist: JSON.stringify(g.checklist ?? []) })
    .returning('id')) as { id: string }[];
  return row!.id;
}

export interface MachineInput {
  code: string;
  name: string;
  groupId?: string | null;
  powerW?: number;
  tubeType?: 'dc_glass' | 'rf_metal';
  wavelengthUm?: number;
  bedWidthMm?: number;
  bedDepthMm?: number;
  beamDiameterMm?: number;
  divergenceMrad?: number;
  lensFocalMm?: number;
  coolantType?: 'water' | 'air';
}

/** The `machines` row for a machine in service (a 40 W glass-tube laser unless told otherwise). */
export function machineRow(m: MachineInput): Record<string, unknown> {
  return {
    code: m.code, name: m.name, group_id: m.groupId ?? null, power_w: m.powerW ?? 40, tube_type: m.tubeType ?? 'dc_glass',
    wavelength_um: m.wavelengthUm ?? 10.6, bed_width_mm: m.bedWidthMm ?? 600, bed_depth_mm: m.bedDepthMm ?? 400,
    beam_diameter_mm: m.beamDiameterMm ?? 6, divergence_mrad: m.divergenceMrad ?? 3, lens_focal_mm: m.lensFocalMm ?? 50.8,
    coolant_type: m.coolantType ?? 'water', status: 'in service',
  };
}

/** A machine in service; returns its id. No booking rules or hours: the seed or the test sets those. */
export async function makeMachine(knex: Knex, m: MachineInput): Promise<string> {
  const [row] = (await knex('machines').insert(machineRow(m)).returning('id')) as { id: string }[];
  return row!.id;
}

export interface ClearanceInput {
  personId: string;
  groupId: string;
  state?: 'quiz due' | 'awaiting sign-off' | 'cleared' | 'lapsed';
  level?: 'basic' | 'advanced';
  quizPassedAt?: Date | null;
  clearedAt?: Date | null;
  expiresAt?: Date | null;
  signedOffBy?: string | null;
}

/** The `clearances` row; a cleared one without dates was passed and signed off now and runs for a year. */
export function clearanceRow(c: ClearanceInput): Record<string, unknown> {
  const state = c.state ?? 'cleared';
  const now = new Date();
  const cleared = state === 'cleared';
  return {
    person_id: c.personId, group_id: c.groupId, state, level: c.level ?? 'basic',
    quiz_passed_at: c.quizPassedAt !== undefined ? c.quizPassedAt : cleared ? now : null,
    cleared_at: c.clearedAt !== undefined ? c.clearedAt : cleared ? now : null,
    expires_at: c.expiresAt !== undefined ? c.expiresAt : cleared ? new Date(now.getTime() + 365 * 86_400_000) : null,
    ...(c.signedOffBy ? { signed_off_by: c.signedOffBy } : {}),
  };
}

/** A clearance; returns its id. */
export async function makeClearance(knex: Knex, c: ClearanceInput): Promise<string> {
  const [row] = (await knex('clearances').insert(clearanceRow(c)).returning('id')) as { id: string }[];
  return row!.id;
}

export interface BookingInput {
  machineId: string;
  personId: string;
  startsAt: Date;
  endsAt: Date;
  /** the machine's cool-down buffer at booking time: occupied_until = ends_at + buffer */
  bufferMinutes: number;
  state?: 'reserved' | 'checked in' | 'completed' | 'cancelled' | 'no-show';
  checkedInAt?: Date | null;
  notes?: string;
}

/** The `bookings` row of a personal booking. */
export function bookingRow(b: BookingInput): Record<string, unknown> {
  return {
    machine_id: b.machineId, person_id: b.personId, kind: 'personal', state: b.state ?? 'reserved', starts_at: b.startsAt, ends_at: b.endsAt,
    occupied_until: occupiedUntil(b.endsAt, b.bufferMinutes), checked_in_at: b.checkedInAt ?? null, notes: b.notes ?? '',
  };
}

/** A personal booking; returns its id. */
export async function makeBooking(knex: Knex, b: BookingInput): Promise<string> {
  const [row] = (await knex('bookings').insert(bookingRow(b)).returning('id')) as { id: string }[];
  return row!.id;
}
