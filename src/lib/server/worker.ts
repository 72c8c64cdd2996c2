/**
 * The background worker (run by `npm start` and `npm test` as its own process: scripts/worker.ts).
 * One handler per queue of jobs.ts; schedules (cron, in the site's zone where it matters) go here too.
 */
import type PgBoss from 'pg-boss';
import { env } from './env';
import { installQueues, type QueueName } from './jobs';
import { sendMailNow, type MailMessage } from './mail';
import { retryQueuedCharge } from './payments';
import { sweepBookings } from './bookings';

type Handler = (data: unknown) => Promise<void>;

const handlers: Record<QueueName, Handler> = {
  'mail.send': async (data) => sendMailNow(data as MailMessage),
  'payments.retry': async (data) => retryQueuedCharge((data as { chargeId: string }).chargeId),
  // no-shows (15 minutes after the start without check-in) and expired waitlist holds
  'booking.sweep': async () => {
    const r = await sweepBookings();
    if (r.noShows || r.expiredHolds) console.log(`booking.sweep: ${r.noShows} no-show(s), ${r.expiredHolds} expired hold(s)`);
  },
};

/** Cron schedules (UTC; pg-boss checks them about every 30 seconds). */
const schedules: { name: QueueName; cron: string }[] = [{ name: 'booking.sweep', cron: '* * * * *' }];

export async function startWorker(): Promise<PgBoss> {
  const boss = await installQueues(env().DATABASE_URL);
  for (const [name, handle] of Object.entries(handlers)) {
    await boss.work(name, { pollingIntervalSeconds: 1, batchSize: 1 }, async (batch) => {
      for (const job of batch) await handle(job.data);
    });
  }
  for (const s of schedules) await boss.schedule(s.name, s.cron);
  return boss;
}
