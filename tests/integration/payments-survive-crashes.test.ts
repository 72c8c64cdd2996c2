/**
 * Money that survives a crash. Each provider call is a job recorded with the change that asks for it:
 * - the app process is killed (SIGKILL, by its PID) right after a booking commits and before its hold is made
 *   (the payment fake is paused with SIGSTOP so the hold cannot be made first) → after the app is started again and
 *   the fake resumed, the hold exists exactly once at the provider;
 * - the payment fake is paused (SIGSTOP) during a booking and during a refund, then resumed (SIGCONT) → both
 *   complete, each exactly once (counted at the provider through the SDK), and the person sees "hold pending" and
 *   "refund pending" in between;
 * - reconciliation finds a mismatch planted on each side (a provider charge we never recorded, a charge of ours the
 *   provider never made);
 * - receipts get distinct sequential numbers under concurrency and are dated when the money is taken.
 * The shared app is never stopped; the shared payment fake is always resumed (finally / afterAll).
 */
import { randomUUID } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import Stripe from 'stripe';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Service } from '../../scripts/lib/stack';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import { chargeBeamTime } from '../../src/lib/server/payments/billing';
import { getCharge } from '../../src/lib/server/payments/charge-records';
import { providerChargesOf } from '../../src/lib/server/payments/provider-activity';
import { runIntent } from '../../src/lib/server/payments/intents';
import { saveCard } from '../../src/lib/server/payments/cards';
import { iso, machines, setTestRules, siteTime, type MachineRef } from '../support/booking';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { clearedNew } from '../support/people';
import { waitForMail } from '../support/mail';
import { waitTimed } from '../support/wait';
import { freePort, startApp } from '../support/processes';
import { makeDue } from '../support/queue';

const stripe = new Stripe('sk_test_beamwarden_local', { host: '127.0.0.1', port: Number(process.env.TEST_STRIPE_PORT), protocol: 'http' });
const fakePid = () => Number(fs.readFileSync(path.join(process.env.TEST_DATA_DIR!, 'run', 'payments.pid'), 'utf8').trim());
let paused = false;
function pauseFake(): void {
  process.kill(fakePid(), 'SIGSTOP');
  paused = true;
}
function resumeFake(): void {
  if (!paused) return;
  process.kill(fakePid(), 'SIGCONT');
  paused = false;
}

let admin: Client;
let laser: MachineRef;
const spawned: Service[] = [];

/** A second app process of our own (the shared one is never killed), listening on a free port. */
async function startOwnApp(port: number): Promise<Service> {
  const { service } = await startApp('app-crash', { port });
  spawned.push(service);
  return service;
}

async function member(label: string): Promise<{ client: Client; id: string; email: string }> {
  const who = await clearedNew(label, ['laser-c']);
  await saveCard(who.id, 'tok_visa');
  return { client: who.client, id: who.id, email: who.email };
}

const bookingBody = (startsAt: Date, endsAt: Date) => ({ machineId: laser.id, startsAt: iso(startsAt), endsAt: iso(endsAt), materials: [], notes: 'money-crash test' });

beforeAll(async () => {
  admin = await Client.as('admin');
  laser = (await machines(admin))['laser-c'];
  await setTestRules(admin, laser.id);
});

// a test that timed out must not leave the shared fake paused for the next one
beforeEach(() => resumeFake());

afterAll(async () => {
  resumeFake();
  for (const s of spawned) if (s.child.exitCode === null && s.child.signalCode === null) s.child.kill('SIGTERM');
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

describe('the app process killed between the booking commit and the hold', () => {
  it('after a restart the hold exists exactly once', async () => {
    const m = await member('crash');
    const port = await freePort();
    let app = await startOwnApp(port);
    const viaOwn = new Client(`http://127.0.0.1:${port}`);
    await viaOwn.fetch('/api/me', { headers: { cookie: m.client.cookieHeader() } });
    const startsAt = siteTime(31, 9);
    const endsAt = siteTime(31, 10);
    pauseFake();
    let killedAfterMs = 0;
    try {
      const started = Date.now();
      // the request is in flight on our own app: its one try at the hold waits on the paused fake
      const inFlight = viaOwn.fetch('/api/bookings', {
        method: 'POST',
        headers: { cookie: m.client.cookieHeader(), 'content-type': 'application/json' },
        body: JSON.stringify(bookingBody(startsAt, endsAt)),
      }).catch(() => null);
      const { value: booking } = await waitTimed('the booking to commit', async () => (await testDb()('bookings').where({ person_id: m.id, machine_id: laser.id }).first('id')) as { id: string } | undefined, 10_000);
      process.kill(app.child.pid!, 'SIGKILL');
      killedAfterMs = Date.now() - started;
      const answer = await inFlight;
      expect(answer, 'the killed app never answered').toBeNull();
      // committed, and no hold made: the only trace of the hold is the job recorded with the booking
      expect(await testDb()('charges').where({ booking_id: booking.id, state: 'held' }).first()).toBeUndefined();
      const job = await testDb().raw("SELECT count(*)::int AS n FROM pgboss.job WHERE name = 'payments.intent' AND data->>'bookingId' = ?", [booking.id]);
      expect(job.rows[0].n).toBe(1);

      // the app comes back (a deploy, a restart after running out of memory), then the provider
      if (app.child.exitCode === null && app.child.signalCode === null) await new Promise((r) => app.child.once('exit', r));
      app = await startOwnApp(port);
      expect((await viaOwn.fetch('/api/me', { headers: { cookie: m.client.cookieHeader() } })).status).toBe(200);
      resumeFake();
      const { value: held, ms } = await waitTimed('the hold to be placed', async () => {
        await makeDue('payments.intent'); // the worker's next try now, not after its back-off
        const c = await testDb()('charges').where({ booking_id: booking.id, kind: 'beam_time' }).first();
        return c?.state === 'held' ? c : null;
      });
      console.log(`crash test: app killed ${killedAfterMs} ms after the request began; hold placed ${ms} ms after the fake resumed`);
      expect(await testDb()('charges').where({ booking_id: booking.id }).count({ n: '*' })).toEqual([{ n: 1 }]);
      const atProvider = await providerChargesOf(m.id);
      expect(atProvider).toHaveLength(1);
      expect(atProvider[0]).toMatchObject({ id: held.provider_charge_id, captured: false, refunded: 0 });
    } finally {
      resumeFake();
      app.child.kill('SIGTERM');
    }
  }, 90_000);
});

describe('the payment fake paused during a booking and a refund', () => {
  it('the booking shows "hold pending", then the hold is made exactly once', async () => {
    const m = await member('pause-book');
    pauseFake();
    let bookingId = '';
    try {
      const res = await m.client.send('POST', '/api/bookings', bookingBody(siteTime(32, 9), siteTime(32, 10)));
      const b = await body<{ id: string; payment: { state: string }; paymentNotice: string }>(res);
      expect(res.status).toBe(201);
      bookingId = b.id;
      expect(b.payment.state).toBe('hold pending');
      expect(b.paymentNotice).toMatch(/retried by itself/);
      // what the person sees on Account meanwhile
      const list = await body<{ rows: { state: string; kind: string }[] }>(await m.client.get('/api/account/charges'));
      expect(list.rows.map((r) => r.state)).toEqual([expect.stringMatching(/^(pending|queued)$/)]);
    } finally {
      resumeFake();
    }
    const { ms } = await waitTimed('the hold after the fake resumed', async () => {
      await makeDue('payments.intent');
      return (await testDb()('charges').where({ booking_id: bookingId }).first())?.state === 'held';
    });
    console.log(`pause test: hold placed ${ms} ms after the fake resumed`);
    const list = await body<{ rows: { state: string }[] }>(await m.client.get('/api/account/charges'));
    expect(list.rows.map((r) => r.state)).toEqual(['held']);
    expect(await providerChargesOf(m.id)).toHaveLength(1);
  }, 90_000);

  it('a refund answers 202 "refund pending" while the fake is paused, then completes exactly once', async () => {
    const m = await member('pause-refund');
    const c = await chargeBeamTime({ personId: m.id, machineId: laser.id, sessionId: randomUUID(), startedAt: new Date(), minutes: 20 });
    expect(c.state).toBe('captured');
    pauseFake();
    try {
      const res = await admin.send('POST', `/api/charges/${c.id}/refund`, { reason: 'machine fault mid-session' });
      const b = await body<{ state: string; charge: { state: string } }>(res);
      expect(res.status).toBe(202);
      expect(b.state).toBe('refund pending');
      const list = await body<{ rows: { id: string; state: string }[] }>(await m.client.get('/api/account/charges'));
      expect(list.rows.find((r) => r.id === c.id)?.state).toBe('refund pending');
      // a second refund while one waits is refused, not doubled
      expect((await admin.send('POST', `/api/charges/${c.id}/refund`, { reason: 'again' })).status).toBe(409);
    } finally {
      resumeFake();
    }
    const { ms } = await waitTimed('the refund after the fake resumed', async () => {
      await makeDue('payments.intent');
      return (await getCharge(c.id))?.state === 'refunded';
    });
    console.log(`pause test: refund done ${ms} ms after the fake resumed`);
    const refunds = await stripe.refunds.list({ charge: c.providerChargeId!, limit: 100 });
    expect(refunds.data).toHaveLength(1);
    expect(refunds.data[0]).toMatchObject({ amount: c.capturedMinor });
    const ours = await testDb()('charge_refunds').where({ charge_id: c.id });
    expect(ours).toHaveLength(1);
    expect(ours[0]).toMatchObject({ state: 'done', provider_refund_id: refunds.data[0]!.id });
    const list = await body<{ rows: { id: string; state: string; refundedMinor: number }[] }>(await m.client.get('/api/account/charges'));
    expect(list.rows.find((r) => r.id === c.id)).toMatchObject({ state: 'refunded', refundedMinor: c.capturedMinor });
  }, 90_000);
});

describe('a provider call that fails for good', () => {
  it('after the last retry the charge is "payment failed" with the reason, and the person and the admins are e-mailed', async () => {
    const m = await member('gives-up');
    // a fee whose provider call has been waiting (as after earlier failed tries)
    const [row] = await testDb()('charges')
      .insert({
        person_id: m.id, tier: 'community', machine_id: laser.id, kind: 'no_show', method: 'card', state: 'queued', pending_op: 'charge:1500', currency: 'NZD',
        amount_minor: 1500, card_amount_minor: 1500, breakdown: JSON.stringify({ lines: [], taxMinor: 0, taxMode: 'inclusive', taxRateBp: 1500 }),
      })
      .returning('id');
    const sent = new Date();
    pauseFake();
    try {
      // the worker's last attempt (retryCount = retryLimit): the provider does not answer within its timeout (PAYMENTS_WORKER_TIMEOUT_MS: 3 s under npm test)
      await runIntent({ kind: 'charge', chargeId: row.id }, { final: true });
    } finally {
      resumeFake();
    }
    const c = await getCharge(row.id);
    expect(c).toMatchObject({ state: 'payment failed', failureMessage: expect.stringMatching(/after every retry/) });
    await waitForMail((mail) => mail.subject === 'Payment failed' && mail.to.some((t) => t.address === m.email), { since: sent });
    await waitForMail((mail) => mail.subject.startsWith('Payment failed for') && mail.to.some((t) => t.address === 'admin@tidewater.example'), { since: sent });
    // what the person sees: the failed payment on Account, and new bookings refused until it is settled
    const list = await body<{ rows: { id: string; state: string }[] }>(await m.client.get('/api/account/charges'));
    expect(list.rows.find((r) => r.id === row.id)?.state).toBe('payment failed');
    expect((await m.client.send('POST', '/api/bookings', bookingBody(siteTime(33, 9), siteTime(33, 10)))).status).toBe(402);
  }, 60_000);
});

describe('reconciliation', () => {
  it('finds a charge only at the provider and a charge only in our records; the screen, the CSV and the admins see them', async () => {
    const m = await member('reconcile');
    const planted = await stripe.charges.create({ amount: 1234, currency: 'nzd', source: 'tok_visa', metadata: { chargeId: randomUUID(), note: 'planted' } });
    const ghostId = `ch_planted${randomUUID().replace(/-/g, '').slice(0, 16)}`;
    const [ours] = await testDb()('charges')
      .insert({
        person_id: m.id, tier: 'community', machine_id: laser.id, kind: 'beam_time', method: 'card', state: 'captured', currency: 'NZD',
        amount_minor: 999, captured_minor: 999, card_amount_minor: 999, breakdown: JSON.stringify({ lines: [], taxMinor: 0, taxMode: 'inclusive', taxRateBp: 0 }),
        provider_charge_id: ghostId,
      })
      .returning('id');
    const sent = new Date();
    const today = new Intl.DateTimeFormat('en-CA', { timeZone: 'Pacific/Auckland', year: 'numeric', month: '2-digit', day: '2-digit' }).format(new Date());
    const res = await admin.send('POST', '/api/reconciliation', { from: today, to: today });
    const run = await body<{ id: string; mismatches: { kind: string; providerId: string; ourId: string | null }[] }>(res);
    expect(res.status).toBe(201);
    expect(run.mismatches).toContainEqual(expect.objectContaining({ kind: 'missing_here', providerId: planted.id }));
    expect(run.mismatches).toContainEqual(expect.objectContaining({ kind: 'missing_at_provider', providerId: ghostId, ourId: ours.id }));
    const csv = await (await admin.get(`/api/reconciliation/${run.id}/csv`)).text();
    expect(csv).toContain(planted.id);
    expect(csv).toContain(ghostId);
    const page = await (await admin.get(`/admin/reconciliation?run=${run.id}`)).text();
    expect(page).toContain(planted.id);
    expect(page).toContain('in our records, not at the provider');
    await waitForMail((mail) => mail.subject.startsWith('Card payments do not reconcile') && mail.to.some((t) => t.address === 'admin@tidewater.example'), { since: sent });
    // the planted row is ours to remove (it would show in later runs)
    await testDb()('charges').where({ id: ours.id }).delete();
  }, 60_000);
});

describe('receipts', () => {
  it('concurrent charges get distinct sequential numbers, dated when the money is taken', async () => {
    const m = await member('receipts');
    const before = new Date();
    const made = await Promise.all(Array.from({ length: 8 }, () => chargeBeamTime({ personId: m.id, machineId: laser.id, sessionId: randomUUID(), startedAt: new Date(Date.now() - 3600_000), minutes: 15 })));
    const numbers = made.map((c) => c.receiptNumber);
    expect(new Set(numbers).size).toBe(8);
    for (const c of made) {
      expect(c.receiptNumber).toMatch(/^TCW-\d{4}-\d{5}$/);
      // dated at the charge, not at the session's start an hour ago
      expect(c.chargedAt!.getTime()).toBeGreaterThanOrEqual(before.getTime() - 1000);
    }
    const seq = numbers.map((n) => Number(n!.split('-')[2])).sort((a, b) => a - b);
    expect(seq[7]! - seq[0]!).toBeGreaterThanOrEqual(7);
    const page = await (await m.client.get(`/account/receipts/${made[0]!.id}`)).text();
    expect(page).toContain(made[0]!.receiptNumber!);
  }, 60_000);

  it('a checked-in session of under a minute pays the price version\'s minimum charge', async () => {
    const m = await member('minimum');
    const c = await chargeBeamTime({ personId: m.id, machineId: laser.id, sessionId: randomUUID(), startedAt: new Date(), minutes: 0 });
    const v = await testDb()('price_versions').where({ id: c.priceVersionId }).first('minimum_charge_minor');
    expect(v.minimum_charge_minor).toBeGreaterThan(0);
    expect(c.breakdown.lines.map((l) => l.kind)).toContain('minimum');
    expect(c.breakdown.lines.filter((l) => l.kind === 'beam_time' || l.kind === 'minimum').reduce((s, l) => s + l.amountMinor, 0)).toBe(v.minimum_charge_minor);
  });
});
