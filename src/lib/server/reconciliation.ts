/**
 * Reconciliation runs: the provider's charges and refunds for a period (SDK list calls) compared with ours
 * (src/lib/reconcile.ts), kept in reconciliation_runs, shown on Admin › Reconciliation and as CSV; a run with
 * mismatches is e-mailed to the admins. Run daily by the worker, by `npm run reconcile`, or from the screen.
 */
import { stringify } from 'csv-stringify/sync';
import { db } from './db';
import { env } from './env';
import { queueMail } from './mail';
import { activeWithRole } from './people';
import { getSettings } from './settings';
import { siteFormat } from '@lib/format';
import { startOfZonedDay, zonedDate } from '@lib/time';
import { knownChargeIds, providerActivity, recordedActivity } from './payments/provider-activity';
import { fromProviderCharge, fromProviderRefund, MISMATCH_TEXT, reconcile, type Mismatch } from '@lib/reconcile';

export interface ReconciliationRun {
  id: string;
  from: Date;
  to: Date;
  trigger: 'daily' | 'command' | 'admin';
  oursCount: number;
  providerCount: number;
  mismatches: Mismatch[];
  createdAt: Date;
}

const toRun = (r: Record<string, any>): ReconciliationRun => ({
  id: r.id, from: r.period_from, to: r.period_to, trigger: r.trigger, oursCount: r.ours_count, providerCount: r.provider_count, mismatches: r.mismatches, createdAt: r.created_at,
});

/** Site days (YYYY-MM-DD, both included) to the instants [from, to). */
export async function periodOfDays(fromDay: string, toDay: string): Promise<{ from: Date; to: Date }> {
  const { timeZone } = await getSettings();
  const next = new Date(`${toDay}T12:00:00Z`);
  next.setUTCDate(next.getUTCDate() + 1);
  return { from: startOfZonedDay(fromDay, timeZone), to: startOfZonedDay(next.toISOString().slice(0, 10), timeZone) };
}

export async function runReconciliation(from: Date, to: Date, trigger: ReconciliationRun['trigger']): Promise<ReconciliationRun> {
  const provider = await providerActivity(from, to);
  const pc = provider.charges.map(fromProviderCharge);
  const pr = provider.refunds.map(fromProviderRefund);
  const ours = await recordedActivity(from, to, pc.map((c) => c.id), pr.map((r) => r.id));
  const known = await knownChargeIds(pc.map((c) => c.ourChargeId).filter((x): x is string => Boolean(x)));
  const mismatches = reconcile({ from, to, providerCharges: pc, providerRefunds: pr, ourCharges: ours.charges, ourRefunds: ours.refunds, knownChargeIds: known });
  const [row] = await db()('reconciliation_runs')
    .insert({ period_from: from, period_to: to, trigger, ours_count: ours.charges.length + ours.refunds.length, provider_count: pc.length + pr.length, mismatches: JSON.stringify(mismatches) })
    .returning('*');
  const run = toRun(row);
  if (mismatches.length) {
    const { timeZone, locale } = await getSettings();
    const day = (d: Date) => siteFormat(locale, timeZone).dateTime(d);
    for (const a of await activeWithRole('admin')) {
      await queueMail(null, a.email, `Card payments do not reconcile: ${mismatches.length} difference${mismatches.length === 1 ? '' : 's'}`, {
        greeting: `Hello ${a.name},`,
        paragraphs: [
          `Comparing our records with the payment provider's for ${day(from)} – ${day(to)} found ${mismatches.length} difference${mismatches.length === 1 ? '' : 's'}:`,
          ...mismatches.slice(0, 10).map((m) => `${m.object} ${m.providerId}: ${MISMATCH_TEXT[m.kind]} (ours: ${m.ours}; provider: ${m.provider})`),
          ...(mismatches.length > 10 ? [`…and ${mismatches.length - 10} more on the screen.`] : []),
        ],
        action: { label: 'Open Reconciliation', url: `${env().PUBLIC_BASE_URL}/admin/reconciliation?run=${run.id}` },
      });
    }
  }
  return run;
}

/** The worker's daily run: yesterday in the site's zone. */
export async function reconcileDaily(now = new Date()): Promise<ReconciliationRun> {
  const { timeZone } = await getSettings();
  const today = zonedDate(now, timeZone);
  const y = new Date(`${today}T12:00:00Z`);
  y.setUTCDate(y.getUTCDate() - 1);
  const { from, to } = await periodOfDays(y.toISOString().slice(0, 10), y.toISOString().slice(0, 10));
  return runReconciliation(from, to, 'daily');
}

export async function listRuns(limit = 20): Promise<ReconciliationRun[]> {
  return (await db()('reconciliation_runs').orderBy('created_at', 'desc').limit(limit)).map(toRun);
}

export async function getRun(id: string): Promise<ReconciliationRun | null> {
  if (!/^[0-9a-f-]{36}$/i.test(id)) return null;
  const r = await db()('reconciliation_runs').where({ id }).first();
  return r ? toRun(r) : null;
}

export function runCsv(run: ReconciliationRun): string {
  return stringify([
    ['period_from', 'period_to', 'object', 'difference', 'our_id', 'provider_id', 'ours', 'provider'],
    ...run.mismatches.map((m) => [run.from.toISOString(), run.to.toISOString(), m.object, MISMATCH_TEXT[m.kind], m.ourId ?? '', m.providerId, m.ours, m.provider]),
  ]);
}
