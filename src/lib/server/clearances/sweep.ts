/** Timed work (run by the worker on a schedule): clearances lapse, and people are warned before. */
import { transaction } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { queueMail } from '@lib/server/mail';
import { needsLapseWarning, nextStep } from '@lib/clearance-rules';
import { formatLocalDate, formatLocalDateTime } from './state';
import { apply, link } from './transitions';
import { getSettings } from '@lib/server/settings';

// ---------------------------------------------------------------------------------------------
// Timed work (run by the worker on a schedule)

/**
 * Writes lapses whose expiry has come (cleared → lapsed, audited, with an e-mail) and sends the
 * "lapsing in 14 days" warning once per expiry. `onlyPersonId` narrows the sweep to one person.
 */
export async function sweepClearances(at = new Date(), onlyPersonId?: string): Promise<{ lapsed: number; warned: number }> {
  return transaction(async (trx) => {
    const zone = await getSettings(trx);
    const due = trx('clearances as c').join('machine_groups as g', 'g.id', 'c.group_id').join('people as p', 'p.id', 'c.person_id')
      .where('c.state', 'cleared').where('c.expires_at', '<=', at.toISOString());
    if (onlyPersonId) due.where('c.person_id', onlyPersonId);
    const lapsing = await due.forUpdate('c').select('c.id', 'c.expires_at', 'g.name as group_name', 'g.refresher', 'p.email', 'p.name');
    for (const r of lapsing) {
      const to = apply('cleared', { type: 'expired' }, { refresher: r.refresher });
      await trx('clearances').where({ id: r.id }).update({ state: to, updated_at: at });
      await recordAudit(trx, {
        actorId: null, kind: 'clearance.lapsed', subjectType: 'clearance', subjectId: r.id,
        summary: `${r.name}'s ${r.group_name} clearance lapsed at ${formatLocalDateTime(r.expires_at, zone)}`, before: { state: 'cleared' }, after: { state: to },
      });
      await queueMail(trx, r.email, `Your clearance has lapsed: ${r.group_name}`, {
        greeting: `Hello ${r.name},`,
        paragraphs: [`Your ${r.group_name} clearance lapsed at ${formatLocalDateTime(r.expires_at, zone)}.`, nextStep('lapsed', { groupName: r.group_name, refresher: r.refresher })],
        action: { label: 'See your clearances', url: link('/clearances') },
      });
    }
    const soon = trx('clearances as c').join('machine_groups as g', 'g.id', 'c.group_id').join('people as p', 'p.id', 'c.person_id')
      .where('c.state', 'cleared').where('c.expires_at', '>', at.toISOString()).where('c.expires_at', '<=', new Date(at.getTime() + 14 * 86_400_000).toISOString());
    if (onlyPersonId) soon.where('c.person_id', onlyPersonId);
    const candidates = await soon.forUpdate('c').select('c.id', 'c.state', 'c.expires_at', 'c.lapse_warned_for', 'g.name as group_name', 'g.refresher', 'p.email', 'p.name');
    let warned = 0;
    for (const r of candidates) {
      if (!needsLapseWarning(r.state, r.expires_at, r.lapse_warned_for, at)) continue;
      await trx('clearances').where({ id: r.id }).update({ lapse_warned_for: r.expires_at });
      const days = Math.ceil((r.expires_at.getTime() - at.getTime()) / 86_400_000);
      await queueMail(trx, r.email, `Your clearance lapses in ${days} day${days === 1 ? '' : 's'}: ${r.group_name}`, {
        greeting: `Hello ${r.name},`,
        paragraphs: [
          `Your ${r.group_name} clearance is valid until the end of ${formatLocalDate(new Date(r.expires_at.getTime() - 1), zone)}.`,
          r.refresher === 'quiz'
            ? 'To keep it, pass the refresher quiz on the Clearances screen once it lapses — it takes a few minutes.'
            : 'Once it lapses you will need the refresher quiz and a new practical sign-off; book time with an instructor early.',
        ],
        action: { label: 'See your clearances', url: link('/clearances') },
      });
      warned++;
    }
    return { lapsed: lapsing.length, warned };
  });
}
