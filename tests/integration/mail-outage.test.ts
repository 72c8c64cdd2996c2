/**
 * A mail server that is down delays a message but never loses it: maildev is stopped, a clearance is
 * suspended (which queues an e-mail), the worker's send fails and is retried, maildev starts again,
 * and the message arrives.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { portOpen } from '../../scripts/lib/stack';
import { startMaildev, stopMaildev } from '../support/maildev';
import { to, waitForMail } from '../support/mail';
import { newPerson } from '../support/people';
import { waitUntil } from '../support/wait';

let stopped = false;

afterAll(async () => {
  // never leave the rest of the run without its mail fake
  if (stopped && !(await portOpen(Number(process.env.TEST_SMTP_PORT)))) await startMaildev();
  await closeTestDb();
});

describe('mail while maildev is stopped', () => {
  it('is retried by the worker and delivered once maildev is back', { timeout: 120_000 }, async () => {
    const instructor = await Client.as('instructor');
    // a person of this file's own, cleared for the glass-tube group (a suspension left behind by a failed run
    // then blocks no demo person and no other file)
    const person = await newPerson('mail-outage', { clearedFor: ['laser-a'] });
    const LAPSED = person.email;
    const clearance = await testDb()('clearances').where({ person_id: person.id }).first('id');

    await stopMaildev();
    stopped = true;
    expect(await portOpen(Number(process.env.TEST_SMTP_PORT))).toBe(false);

    const reason = `Mail outage check ${Date.now()}`;
    const res = await instructor.send('POST', `/api/clearances/${clearance.id}/suspend`, { reason });
    expect(res.status).toBe(200);

    // the worker tried to send and failed: the job waits for a retry, nothing was lost
    await waitUntil('the failed send waiting for its retry', async () => {
      const job = await testDb()
        .withSchema('pgboss')
        .table('job')
        .where({ name: 'mail.send' })
        .whereRaw("data->>'to' = ?", [LAPSED])
        .whereRaw("data->>'text' like ?", [`%${reason}%`])
        .first('state', 'output');
      // the first failed try: pg-boss puts the job in `retry` with the error as its output (it counts retry_count
      // up only when it takes the job again, after the back-off)
      return job && job.state === 'retry' && JSON.stringify(job.output ?? '').length > 2;
    });

    await startMaildev();
    stopped = false;
    // the worker's retry of this message runs now rather than after its back-off (only this one: draining the whole
    // queue would also wait for every reminder other files queued for later days); then the message is there
    await testDb()
      .withSchema('pgboss')
      .table('job')
      .where({ name: 'mail.send' })
      .whereIn('state', ['created', 'retry'])
      .whereRaw("data->>'to' = ?", [LAPSED])
      .update({ start_after: testDb().fn.now() });
    const mail = await waitForMail((m) => to(LAPSED)(m) && (m.text ?? '').includes(reason));
    expect(mail.subject).toBe('Your clearance is suspended: Glass-tube lasers');
    expect(mail.html).toContain(reason);

    // reinstating puts the clearance back in the state it was suspended from
    const back = await instructor.send('POST', `/api/clearances/${clearance.id}/reinstate`, { reason: 'Mail outage check finished' });
    expect((await body(back)).state).toBe('cleared');
  });
});
