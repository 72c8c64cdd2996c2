/** Private calendar feeds: a secret URL per person serving their bookings as an .ics document. */
import crypto from 'node:crypto';
import { db, transaction } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { env } from '@lib/server/env';
import { getSettings } from '@lib/server/settings';
import { buildIcs } from '@lib/ics';
import { hashToken, type Row } from './records';

export async function feedStatus(personId: string): Promise<{ active: boolean; createdAt: Date | null }> {
  const r = await db()('calendar_feeds').where({ person_id: personId }).first('created_at');
  return { active: !!r, createdAt: r?.created_at ?? null };
}

/** Creates (or replaces, revoking the old URL) the person's private feed; the token is shown once. */
export async function rotateFeedToken(personId: string): Promise<{ url: string; token: string }> {
  const token = crypto.randomBytes(24).toString('base64url');
  await transaction(async (trx) => {
    await trx('calendar_feeds')
      .insert({ person_id: personId, token_hash: hashToken(token), created_at: trx.fn.now() })
      .onConflict('person_id')
      .merge();
    await recordAudit(trx, { actorId: personId, kind: 'calendar_feed.created', subjectType: 'person', subjectId: personId, summary: 'Private calendar feed URL created (any earlier URL revoked)' });
  });
  return { token, url: `${env().PUBLIC_BASE_URL}/api/calendar/${token}.ics` };
}

export async function revokeFeed(personId: string): Promise<void> {
  await transaction(async (trx) => {
    await trx('calendar_feeds').where({ person_id: personId }).delete();
    await recordAudit(trx, { actorId: personId, kind: 'calendar_feed.revoked', subjectType: 'person', subjectId: personId, summary: 'Private calendar feed URL revoked' });
  });
}

/** How often a subscribed calendar is asked to fetch the feed again: an hour (REFRESH-INTERVAL and X-PUBLISHED-TTL). */
export const FEED_REFRESH_SECONDS = 3600;

/** The .ics document of a feed token (null when the token is unknown or revoked). */
export async function feedIcs(token: string, now = new Date()): Promise<string | null> {
  if (!/^[A-Za-z0-9_-]{20,64}$/.test(token)) return null;
  const f = await db()('calendar_feeds').where({ token_hash: hashToken(token) }).first('person_id');
  if (!f) return null;
  const settings = await getSettings();
  const rows = (await db()('bookings as b')
    .join('machines as m', 'm.id', 'b.machine_id')
    .where('b.person_id', f.person_id)
    .where('b.ends_at', '>', new Date(now.getTime() - 30 * 86_400_000))
    // cancelled and bumped bookings are left out: a subscribed calendar drops them at its next refresh
    .whereIn('b.state', ['reserved', 'checked in', 'completed'])
    .whereNot('b.kind', 'hold')
    .orderBy('b.starts_at')
    .limit(1000)
    .select('b.*', 'm.name as machine_name')) as (Row & { machine_name: string })[];
  return buildIcs(
    `${settings.name}: my bookings`,
    rows.map((r) => ({
      id: r.id,
      startsAt: r.starts_at,
      endsAt: r.ends_at,
      summary: r.kind === 'class' ? `${r.machine_name}: class ${r.course_name}` : `${r.machine_name} booking`,
      location: `${r.machine_name}, ${settings.name}`,
      sequence: r.calendar_sequence,
    })),
    { stamp: now, refreshSeconds: FEED_REFRESH_SECONDS },
  );
}
