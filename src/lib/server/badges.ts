/**
 * Badges: the reader UIDs a person holds, enrolled by stewards and admins, and the unknown badges controllers read
 * (listed for an hour so a steward can assign one to the person standing there). A UID is kept only as SHA-256 of
 * its normalised form plus its last four characters. All SQL of badges.
 */
import { createHash } from 'node:crypto';
import { db, pgCode, PG, transaction } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { UNKNOWN_BADGE_LIST_MINUTES, badgeHint, normaliseBadge } from '@lib/controller-rules';

/** SHA-256 of the normalised UID, with a fixed label so the digest is of this use only. */
export function badgeHash(normalised: string): string {
  return createHash('sha256').update(`beamwarden-badge:${normalised}`).digest('hex');
}

export interface Badge {
  id: string;
  personId: string;
  lastFour: string;
  createdAt: Date;
  createdByName: string | null;
}

export async function listBadges(personId: string): Promise<Badge[]> {
  const rows = await db()('badges as b').leftJoin('people as c', 'c.id', 'b.created_by').where('b.person_id', personId).orderBy('b.created_at')
    .select('b.id', 'b.person_id', 'b.last_four', 'b.created_at', 'c.name as created_by_name');
  return rows.map((r) => ({ id: r.id, personId: r.person_id, lastFour: r.last_four, createdAt: r.created_at, createdByName: r.created_by_name }));
}

async function insertBadge(actorId: string, personId: string, hash: string, lastFour: string, how: string): Promise<Badge> {
  return transaction(async (trx) => {
    const p = await trx('people').where({ id: personId }).first('id', 'name');
    if (!p) throw new DomainError('not_found', 'not_found', 'No such person.');
    let row: { id: string; created_at: Date };
    try {
      [row] = (await trx.transaction(async (sp) => sp('badges').insert({ person_id: personId, badge_hash: hash, last_four: lastFour, created_by: actorId }).returning(['id', 'created_at']))) as [{ id: string; created_at: Date }];
    } catch (err) {
      if (pgCode(err) === PG.uniqueViolation) throw new DomainError('conflict', 'badge_taken', 'This badge is already enrolled (to this person or someone else). Remove it there first.');
      throw err;
    }
    await trx('unknown_badge_sightings').where({ badge_hash: hash }).delete();
    await recordAudit(trx, { actorId, kind: 'badge.enrolled', subjectType: 'person', subjectId: personId, summary: `Badge …${lastFour} enrolled for ${p.name}${how}`, after: { badgeId: row.id, lastFour } });
    return { id: row.id, personId, lastFour, createdAt: row.created_at, createdByName: null };
  });
}

export async function enrolBadge(actorId: string, personId: string, raw: string): Promise<Badge> {
  const badge = normaliseBadge(raw);
  if (badge.length < 4) throw new DomainError('invalid', 'invalid', 'A badge UID has at least 4 characters.', { badge: 'Too short.' });
  return insertBadge(actorId, personId, badgeHash(badge), badgeHint(badge), '');
}

export async function removeBadge(actorId: string, badgeId: string): Promise<void> {
  await transaction(async (trx) => {
    const b = await trx('badges as b').join('people as p', 'p.id', 'b.person_id').where('b.id', badgeId).first('b.id', 'b.person_id', 'b.last_four', 'p.name');
    if (!b) throw new DomainError('not_found', 'not_found', 'No such badge.');
    await trx('badges').where({ id: badgeId }).delete();
    await recordAudit(trx, { actorId, kind: 'badge.removed', subjectType: 'person', subjectId: b.person_id, summary: `Badge …${b.last_four} removed from ${b.name}`, before: { badgeId, lastFour: b.last_four } });
  });
}

export interface UnknownBadge {
  id: string;
  lastFour: string;
  seenAt: Date;
  machineName: string;
  controllerName: string;
}

/** Unknown badges read in the last hour, newest first. */
export async function recentUnknownBadges(now = new Date()): Promise<UnknownBadge[]> {
  const rows = await db()('unknown_badge_sightings as u')
    .join('machines as m', 'm.id', 'u.machine_id')
    .join('controllers as c', 'c.id', 'u.controller_id')
    .where('u.seen_at', '>', new Date(now.getTime() - UNKNOWN_BADGE_LIST_MINUTES * 60_000))
    .orderBy('u.seen_at', 'desc')
    .limit(50)
    .select('u.id', 'u.last_four', 'u.seen_at', 'm.name as machine_name', 'c.name as controller_name');
  return rows.map((r) => ({ id: r.id, lastFour: r.last_four, seenAt: r.seen_at, machineName: r.machine_name, controllerName: r.controller_name }));
}

/** Gives an unknown badge seen in the last hour to a person (the one standing at the machine). */
export async function assignUnknownBadge(actorId: string, sightingId: string, personId: string, now = new Date()): Promise<Badge> {
  const u = await db()('unknown_badge_sightings').where({ id: sightingId }).where('seen_at', '>', new Date(now.getTime() - UNKNOWN_BADGE_LIST_MINUTES * 60_000)).first('badge_hash', 'last_four');
  if (!u) throw new DomainError('not_found', 'not_found', 'No such unknown badge in the last hour.');
  return insertBadge(actorId, personId, u.badge_hash, u.last_four, ' from the unknown badges list');
}

/** People to enrol a badge for (stewards do not see the admin's People list): name or e-mail contains `q`. */
export async function findPeople(q: string): Promise<{ id: string; name: string; email: string; active: boolean; badges: number }[]> {
  const like = `%${q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;
  const rows = await db()('people as p')
    .where((w) => w.whereILike('p.name', like).orWhereILike('p.email', like))
    .orderBy('p.name')
    .limit(20)
    .select('p.id', 'p.name', 'p.email', 'p.active', db().raw('(SELECT count(*) FROM badges b WHERE b.person_id = p.id)::int AS badges'));
  return rows.map((r: { id: string; name: string; email: string; active: boolean; badges: number }) => ({ id: r.id, name: r.name, email: r.email, active: r.active, badges: r.badges }));
}
