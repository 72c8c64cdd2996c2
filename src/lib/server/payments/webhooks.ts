/** Provider webhooks: refunds and failures made elsewhere reach our record. */
import { siteMoney } from '@lib/server/settings';
import { recordAudit } from '@lib/server/audit';
import { transaction } from '@lib/server/db';
import { env } from '@lib/server/env';
import { queueMail } from '@lib/server/mail';
import { personFor, updateCharge } from './charge-records';
import { verifyWebhook } from './provider';

/** Handles a signed provider event: refunds and failures made elsewhere reach our record. Idempotent by event id. */
export async function handleWebhook(body: string, signature: string | null): Promise<{ received: true; duplicate: boolean; handled: boolean }> {
  const event = verifyWebhook(body, signature);
  return transaction(async (trx) => {
    const inserted = await trx('payment_events').insert({ id: event.id, type: event.type }).onConflict('id').ignore().returning('id');
    if (!inserted.length) return { received: true as const, duplicate: true, handled: false };
    const obj = event.data.object as { id?: string; amount_refunded?: number; amount_captured?: number; failure_message?: string; failure_code?: string };
    if (!obj.id) return { received: true as const, duplicate: false, handled: false };
    const row = await trx('charges').where({ provider_charge_id: obj.id }).forUpdate().first();
    if (!row) return { received: true as const, duplicate: false, handled: false };
    if (event.type === 'charge.refunded' && typeof obj.amount_refunded === 'number' && obj.amount_refunded > row.refunded_minor) {
      const full = obj.amount_refunded >= row.captured_minor;
      await updateCharge(trx, row.id, { refunded_minor: Math.min(obj.amount_refunded, row.captured_minor), state: full ? 'refunded' : row.state });
      await recordAudit(trx, { actorId: null, kind: 'charge.refunded', subjectType: 'charge', subjectId: row.id, summary: `The provider reported a refund: ${await siteMoney(obj.amount_refunded, row.currency)} in total` });
      return { received: true as const, duplicate: false, handled: true };
    }
    if (event.type === 'charge.failed' && row.state !== 'payment failed' && row.state !== 'captured') {
      await updateCharge(trx, row.id, { state: 'payment failed', failure_code: obj.failure_code ?? 'failed', failure_message: obj.failure_message ?? 'The provider reported the charge failed.' });
      const p = await personFor(row.person_id, trx);
      await queueMail(trx, p.email, 'Payment failed', {
        greeting: `Hello ${p.name},`,
        paragraphs: [`A payment of ${await siteMoney(row.amount_minor, row.currency)} failed. New bookings are paused until it is settled: save a working card on your Account screen.`],
        action: { label: 'Open your Account', url: `${env().PUBLIC_BASE_URL}/account` },
      });
      return { received: true as const, duplicate: false, handled: true };
    }
    if (event.type === 'charge.captured' && row.state === 'held' && typeof obj.amount_captured === 'number') {
      await updateCharge(trx, row.id, { state: 'captured', captured_minor: obj.amount_captured, held_minor: 0 });
      return { received: true as const, duplicate: false, handled: true };
    }
    return { received: true as const, duplicate: false, handled: false };
  });
}
