/** Controllers not heard from while their machine is booked: the stewards are told once. */
import { transaction } from '@lib/server/db';
import { env } from '@lib/server/env';
import { recordAudit } from '@lib/server/audit';
import { queueMail } from '@lib/server/mail';
import { activeWithRole } from '@lib/server/people';
import { CONTROLLER_OFFLINE_MINUTES } from '@lib/controller-rules';
import type { Controller } from './registry';

// ---------------------------------------------------------------------------------------------
// Offline alert

/**
 * Controllers not seen for CONTROLLER_OFFLINE_MINUTES while their machine is booked now: the active stewards are
 * e-mailed once (again only after the controller has been seen since).
 */
export async function sweepControllers(now = new Date()): Promise<{ alerted: number }> {
  const before = new Date(now.getTime() - CONTROLLER_OFFLINE_MINUTES * 60_000);
  return transaction(async (trx) => {
    const rows = (await trx('controllers as c')
      .join('machines as m', 'm.id', 'c.machine_id')
      .whereNull('c.revoked_at')
      .whereNotNull('c.last_seen_at')
      .where('c.last_seen_at', '<', before)
      .where((q) => q.whereNull('c.offline_alerted_at').orWhereRaw('c.offline_alerted_at < c.last_seen_at'))
      .whereExists((q) => q.select(trx.raw('1')).from('bookings as b').whereRaw('b.machine_id = c.machine_id')
        .whereIn('b.state', ['reserved', 'checked in']).whereNot('b.kind', 'hold').where('b.starts_at', '<=', now).where('b.ends_at', '>', now))
      .forUpdate('c').skipLocked()
      .select('c.id', 'c.name', 'c.last_seen_at', 'm.name as machine_name')) as { id: string; name: string; last_seen_at: Date; machine_name: string }[];
    if (!rows.length) return { alerted: 0 };
    const stewards = await activeWithRole('steward', trx);
    for (const r of rows) {
      await trx('controllers').where({ id: r.id }).update({ offline_alerted_at: now });
      await recordAudit(trx, { actorId: null, kind: 'controller.offline', subjectType: 'controller', subjectId: r.id, summary: `Controller “${r.name}” on ${r.machine_name} not heard from since ${r.last_seen_at.toISOString()} while booked` });
      for (const st of stewards) {
        await queueMail(trx, st.email, `Controller offline: ${r.machine_name}`, {
          greeting: `Hello ${st.name},`,
          paragraphs: [
            `The controller “${r.name}” on ${r.machine_name} has not been heard from for more than ${CONTROLLER_OFFLINE_MINUTES} minutes, and the machine is booked now.`,
            'The person booked may not be able to start the machine. Check the box’s power and network; the booking can still be checked in on the phone page.',
          ],
          action: { label: 'Open the Machines screen', url: `${env().PUBLIC_BASE_URL}/admin/machines` },
          footnote: `Never bridge the controller’s relay to get a job running: it is part of the machine’s enable chain. Your laser safety officer and the manufacturer’s manual take precedence.`,
        });
      }
    }
    return { alerted: rows.length };
  });
}
