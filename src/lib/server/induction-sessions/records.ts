/**
 * Induction sessions: an instructor publishes a session for a machine group (its machine time is a class block, so
 * nobody books the machine over it); members whose quiz is passed book a seat; the instructor marks attendance and
 * signs people off from the roster. This file: the session records and how they are read. Beside it: publishing.ts,
 * seats.ts, roster.ts, reminders.ts.
 */
import { db, type Conn } from '@lib/server/db';
import { siteFormat } from '@lib/format';
import { DomainError } from '@lib/server/errors';
import { env } from '@lib/server/env';
import { placeLabel, type SessionKind } from '@lib/induction';

export interface SessionView {
  id: string;
  groupId: string;
  groupName: string;
  startsAt: string;
  endsAt: string;
  capacity: number;
  seatsTaken: number;
  kind: SessionKind;
  place: string;
  machineId: string | null;
  bring: string;
  instructorName: string;
  state: 'published' | 'cancelled';
}

export interface SessionRow {
  id: string; group_id: string; group_name: string; kind: SessionKind; starts_at: Date; ends_at: Date; machine_id: string | null;
  machine_name: string | null; place: string; capacity: number; bring: string; instructor_id: string; instructor_name: string;
  booking_id: string | null; state: 'published' | 'cancelled'; seats_taken: number;
}

export const SAFETY = 'Class 4 laser: wear closed shoes, tie back long hair, and follow the instructor. Your laser safety officer and the manufacturer’s manual take precedence.';
export const link = (path: string) => new URL(path, env().PUBLIC_BASE_URL).toString();

export function sessionQuery(q: Conn) {
  return q('induction_sessions as s')
    .join('machine_groups as g', 'g.id', 's.group_id')
    .join('people as i', 'i.id', 's.instructor_id')
    .leftJoin('machines as m', 'm.id', 's.machine_id')
    .select(
      's.*', 'g.name as group_name', 'i.name as instructor_name', 'm.name as machine_name',
      q.raw(`(SELECT count(*) FROM induction_seats x WHERE x.session_id = s.id AND x.state IN ('booked', 'present'))::int AS seats_taken`),
    );
}

export function view(r: SessionRow): SessionView {
  return {
    id: r.id, groupId: r.group_id, groupName: r.group_name, startsAt: r.starts_at.toISOString(), endsAt: r.ends_at.toISOString(),
    capacity: r.capacity, seatsTaken: Number(r.seats_taken), kind: r.kind, place: placeLabel(r.machine_name, r.place), machineId: r.machine_id,
    bring: r.bring, instructorName: r.instructor_name, state: r.state,
  };
}

/** "Tuesday, 8 December 2026, 10:00–12:00" in the site's zone and locale. */
export function formatSessionTime(startsAt: Date, endsAt: Date, site: { timeZone: string; locale: string }): string {
  return siteFormat(site.locale, site.timeZone).longRange(startsAt, endsAt);
}

// ---------------------------------------------------------------------------------------------
// Reading

export async function listSessions(filter: { groupId?: string; from?: Date; to?: Date; includeCancelled?: boolean }): Promise<SessionView[]> {
  const q = sessionQuery(db());
  if (filter.groupId) q.where('s.group_id', filter.groupId);
  if (filter.from) q.where('s.ends_at', '>', filter.from);
  if (filter.to) q.where('s.starts_at', '<', filter.to);
  if (!filter.includeCancelled) q.where('s.state', 'published');
  const rows = (await q.orderBy('s.starts_at').limit(500)) as SessionRow[];
  return rows.map(view);
}

export async function sessionRow(q: Conn, id: string, lock = false): Promise<SessionRow> {
  if (lock) await q('induction_sessions').where({ id }).forUpdate().first('id');
  const r = (await sessionQuery(q).where('s.id', id).first()) as SessionRow | undefined;
  if (!r) throw new DomainError('not_found', 'not_found', 'No such induction session.');
  return r;
}

export async function getSession(id: string): Promise<SessionView> {
  return view(await sessionRow(db(), id));
}
