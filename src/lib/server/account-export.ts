/**
 * "Download my data": everything Beamwarden keeps about one person — profile, clearances, quiz attempts,
 * bookings, sessions at the machine, charges and fault reports — as JSON, or as a zip of CSV files (one per part).
 * Every query is filtered on the person's own id; nothing about anyone else is included (names of the people
 * who signed them off are left out too).
 */
import { stringify } from 'csv-stringify/sync';
import { strToU8, zipSync } from 'fflate';
import { db } from './db';
import { DomainError } from './errors';
import { safeCell } from '@lib/csv';

export interface PersonalData {
  exportedAt: string;
  person: Record<string, unknown>;
  clearances: Record<string, unknown>[];
  quizAttempts: Record<string, unknown>[];
  bookings: Record<string, unknown>[];
  sessions: Record<string, unknown>[];
  charges: Record<string, unknown>[];
  faults: Record<string, unknown>[];
}

export async function exportPersonalData(personId: string): Promise<PersonalData> {
  const k = db();
  const person = await k('people').where({ id: personId }).first('id', 'email', 'name', 'tier', 'cost_centre as costCentre', 'active', 'email_confirmed_at as emailConfirmedAt', 'created_at as createdAt');
  if (!person) throw new DomainError('not_found', 'not_found', 'No person has that id.');
  const roles = await k('role_grants').where({ person_id: personId }).orderBy('role').pluck('role');
  const [clearances, quizAttempts, bookings, sessions, charges, faults] = await Promise.all([
    k('clearances as c').leftJoin('machine_groups as g', 'g.id', 'c.group_id').where('c.person_id', personId).orderBy('c.created_at')
      .select('c.id', 'g.name as machineGroup', 'c.state', 'c.level', 'c.quiz_passed_at as quizPassedAt', 'c.cleared_at as clearedAt', 'c.expires_at as expiresAt', 'c.suspended_reason as suspendedReason', 'c.created_at as createdAt'),
    k('quiz_attempts as a').leftJoin('machine_groups as g', 'g.id', 'a.group_id').where('a.person_id', personId).orderBy('a.started_at')
      .select('a.id', 'g.name as machineGroup', 'a.started_at as startedAt', 'a.submitted_at as submittedAt', 'a.score_pct as scorePct', 'a.passed'),
    k('bookings as b').join('machines as m', 'm.id', 'b.machine_id').where('b.person_id', personId).orderBy('b.starts_at')
      .select('b.id', 'm.name as machine', 'b.kind', 'b.state', 'b.starts_at as startsAt', 'b.ends_at as endsAt', 'b.notes', 'b.cancelled_at as cancelledAt', 'b.created_at as createdAt'),
    k('machine_sessions as s').join('machines as m', 'm.id', 's.machine_id').where('s.person_id', personId).orderBy('s.checked_in_at')
      .select('s.id', 's.booking_id as bookingId', 'm.name as machine', 's.checked_in_at as checkedInAt', 's.checked_out_at as checkedOutAt', 's.beam_minutes as beamMinutes', 's.coolant_temp_c as coolantTempC'),
    k('charges as c').leftJoin('machines as m', 'm.id', 'c.machine_id').where('c.person_id', personId).orderBy('c.created_at')
      .select('c.id', 'c.booking_id as bookingId', 'm.name as machine', 'c.kind', 'c.method', 'c.state', 'c.currency', 'c.amount_minor as amountMinor', 'c.tax_minor as taxMinor', 'c.refunded_minor as refundedMinor', 'c.minutes', 'c.created_at as createdAt'),
    k('faults as f').join('machines as m', 'm.id', 'f.machine_id').where('f.reported_by', personId).orderBy('f.created_at')
      .select('f.id', 'm.name as machine', 'f.severity', 'f.summary', 'f.details', 'f.status', 'f.resolution', 'f.created_at as createdAt', 'f.resolved_at as resolvedAt'),
  ]);
  return { exportedAt: new Date().toISOString(), person: { ...person, roles }, clearances, quizAttempts, bookings, sessions, charges, faults };
}

function toCsv(rows: Record<string, unknown>[]): string {
  if (rows.length === 0) return '';
  const columns = Object.keys(rows[0]!);
  const cell = (v: unknown) => (v instanceof Date ? v.toISOString() : safeCell(v));
  return stringify([columns, ...rows.map((r) => columns.map((c) => cell(r[c])))]);
}

/** The same data as a zip of CSV files: person.csv, clearances.csv, quiz-attempts.csv, bookings.csv, sessions.csv, charges.csv, faults.csv. */
export function personalDataZip(data: PersonalData): Uint8Array {
  const files: Record<string, Uint8Array> = {
    'person.csv': strToU8(toCsv([{ ...data.person, roles: (data.person.roles as string[]).join(' ') }])),
    'clearances.csv': strToU8(toCsv(data.clearances)),
    'quiz-attempts.csv': strToU8(toCsv(data.quizAttempts)),
    'bookings.csv': strToU8(toCsv(data.bookings)),
    'sessions.csv': strToU8(toCsv(data.sessions)),
    'charges.csv': strToU8(toCsv(data.charges)),
    'faults.csv': strToU8(toCsv(data.faults)),
  };
  return zipSync(files, { level: 6 });
}
