/**
 * The background worker (run by `npm start` and `npm test` as its own process: scripts/worker.ts).
 * One handler per queue of jobs.ts; schedules (cron, in the site's zone where it matters) go here too.
 */
import type PgBoss from 'pg-boss';
import { env } from './env';
import { installQueues, type QueueName } from './jobs';
import { sendMailNow, type MailMessage } from './mail';
import { retryQueuedCharge } from './payments/charge-runs';
import { runIntent } from './payments/intents';
import { reconcileDaily } from './reconciliation';
import type { PaymentIntent } from './payment-intents';
import { sweepBookings } from './bookings/sweep';
import { sendBookingConfirmation } from './bookings/messages';
import { sweepClearances } from './clearances/sweep';
import { sweepOpenSessions } from './machine-sessions';
import { remindUpkeep } from './upkeep';
import { remindSeats } from './induction-sessions/reminders';
import { sweepControllers } from './controllers/offline-alert';
import { getSettings } from './settings';
import { log } from './log';

type Handler = (data: unknown, job: { retryCount: number; retryLimit: number }) => Promise<void>;

const handlers: Record<QueueName, Handler> = {
  'mail.send': async (data) => sendMailNow(data as MailMessage),
  'booking.confirm': async (data) => sendBookingConfirmation((data as { bookingId: string }).bookingId),
  'payments.retry': async (data) => retryQueuedCharge((data as { chargeId: string }).chargeId),
  // holds, releases, captures, fees and refunds; the last attempt gives up in the open (payment failed, e-mails)
  'payments.intent': async (data, job) => runIntent(data as PaymentIntent, { final: job.retryCount >= job.retryLimit }),
  // yesterday (site days) compared with the provider; mismatches e-mailed to the admins
  'payments.reconcile': async () => {
    const r = await reconcileDaily();
    log.info({ event: 'sweep', queue: 'payments.reconcile', mismatches: r.mismatches.length, from: r.from.toISOString(), to: r.to.toISOString() }, 'reconciliation');
  },
  // no-shows (15 minutes after the start without check-in) and expired waitlist holds
  'booking.sweep': async () => {
    const r = await sweepBookings();
    if (r.noShows || r.expiredHolds) log.info({ event: 'sweep', queue: 'booking.sweep', noShows: r.noShows, expiredHolds: r.expiredHolds }, 'booking sweep');
  },
  // lapses at expiry and "lapsing in 14 days" warnings (canOperate also computes lapse from the expiry itself)
  'clearances.sweep': async () => {
    const r = await sweepClearances(new Date());
    if (r.lapsed || r.warned) log.info({ event: 'sweep', queue: 'clearances.sweep', lapsed: r.lapsed, warned: r.warned }, 'clearances sweep');
  },
  // sessions still open 30 minutes after their booking's end: closed, charged to the booking's end, flagged for a steward
  'sessions.sweep': async () => {
    const r = await sweepOpenSessions(new Date());
    if (r.closed) log.info({ event: 'sweep', queue: 'sessions.sweep', closed: r.closed }, 'sessions closed and flagged for a steward');
  },
  'controllers.sweep': async () => {
    const r = await sweepControllers(new Date());
    if (r.alerted) log.info({ event: 'sweep', queue: 'controllers.sweep', alerted: r.alerted }, 'controllers offline while booked; stewards e-mailed');
  },
  'upkeep.remind': async () => {
    const r = await remindUpkeep();
    if (r.reminders.length) log.info({ event: 'sweep', queue: 'upkeep.remind', items: r.reminders.length, stewards: r.stewards }, 'upkeep reminders e-mailed');
  },
  'induction.remind': async () => {
    const r = await remindSeats(new Date());
    if (r.reminded) log.info({ event: 'sweep', queue: 'induction.remind', reminded: r.reminded }, 'induction seat reminders e-mailed');
  },
};

/** Scheduled jobs (pg-boss checks them about every 30 seconds). */
async function schedules(boss: PgBoss): Promise<void> {
  const tz = (await getSettings()).timeZone;
  // every minute: no-shows and waitlist holds
  await boss.schedule('booking.sweep', '* * * * *');
  // every minute: open sessions past their booking's end
  await boss.schedule('sessions.sweep', '* * * * *');
  // every five minutes in the site's zone, and at start-up, so a lapse is written within minutes of its instant
  await boss.schedule('clearances.sweep', '*/5 * * * *', {}, { tz });
  await boss.send('clearances.sweep', {});
  // every minute: controllers silent for 2 minutes while their machine is booked
  await boss.schedule('controllers.sweep', '* * * * *');
  // hourly, and at start-up: upkeep that has fallen due is e-mailed to the stewards once per service cycle
  await boss.schedule('upkeep.remind', '20 * * * *');
  await boss.send('upkeep.remind', {});
  // every 15 minutes, and at start-up: seats at sessions starting within a day get their reminder
  await boss.schedule('induction.remind', '*/15 * * * *');
  await boss.send('induction.remind', {});
  // daily at 03:15 in the site's zone: the day before, ours against the payment provider's
  await boss.schedule('payments.reconcile', '15 3 * * *', {}, { tz });
}

/**
 * Polling loops per queue. A pg-boss loop waits out its polling interval even after it found a job, so one loop
 * sends about one message a second: a stop fault that bumps a day of bookings (a mail to each person and to every
 * steward) would queue for minutes. Mail gets several loops (jobs are fetched with SKIP LOCKED, so none is sent twice);
 * each loop takes one job at a time, so a failed send retries that message alone.
 */
const LOOPS: Partial<Record<QueueName, number>> = { 'mail.send': 4, 'booking.confirm': 2, 'payments.intent': 2 };

export async function startWorker(): Promise<PgBoss> {
  const boss = await installQueues(env().DATABASE_URL);
  for (const [name, handle] of Object.entries(handlers) as [QueueName, Handler][]) {
    for (let i = 0; i < (LOOPS[name] ?? 1); i++) {
      await boss.work(name, { pollingIntervalSeconds: 1, batchSize: 1, includeMetadata: true }, async (batch) => {
        for (const job of batch) {
          const started = performance.now();
          try {
            await handle(job.data, { retryCount: job.retryCount, retryLimit: job.retryLimit });
            log.info({ event: 'job', queue: name, jobId: job.id, outcome: 'done', durationMs: Math.round(performance.now() - started) }, 'job');
          } catch (err) {
            log.warn({ event: 'job', queue: name, jobId: job.id, outcome: 'failed, will retry', durationMs: Math.round(performance.now() - started), err: { message: (err as Error)?.message, code: (err as { code?: string })?.code } }, 'job');
            throw err;
          }
        }
      });
    }
  }
  // WORKER_SCHEDULES=off (npm test): queued jobs only, no cron entries or start-up sweeps; tests run sweeps themselves
  if (process.env.WORKER_SCHEDULES !== 'off') await schedules(boss);
  return boss;
}
