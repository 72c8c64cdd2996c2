/**
 * From quiz to first cut, over the API on the real PostgreSQL: a reloaded quiz resumes its open attempt
 * (and does not count again), an attempt left past its time limit expires and counts; induction sessions hold
 * their seats in the database under concurrency (20 requests for 4 seats → 4 × 201, 16 × 409), refuse people
 * who may not take a seat with the reason, keep a waitlist that gets the freed seat by e-mail, send e-mails with
 * an .ics; a session at a machine holds its time as a class block; the roster signs people off (clearance
 * `cleared`, then the machine can be booked) and marks absentees (seat released, person told, no-show counted).
 * Calendar day used: 30 days ahead (Laser A and Laser C), no other file books then.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Client, body } from '../support/client';
import { closeTestDb, testDb } from '../support/db';
import { newPerson } from '../support/people';
import { iso, machines, setTestRules, siteTime, type MachineRef } from '../support/booking';
import { startAttempt } from '../../src/lib/server/quizzes';
import { remindSeats } from '../../src/lib/server/induction-sessions/reminders';
import { closeDb } from '../../src/lib/server/db';
import { stopJobs } from '../../src/lib/server/jobs';
import type { QuizQuestion } from '../../src/lib/quiz-rules';
import { attachment, to, waitForMail } from '../support/mail';

const DAY = 30;
let instructor: Client;
let admin: Client;
let lasers: Record<'laser-a' | 'laser-b' | 'laser-c', MachineRef>;
let groups: { id: string; code: string; name: string; checklist: string[]; publishedQuizId: string | null }[];
const glass = () => groups.find((g) => g.code === 'glass-tube')!;
const rf = () => groups.find((g) => g.code === 'rf-laser')!;

beforeAll(async () => {
  instructor = await Client.as('instructor');
  admin = await Client.as('admin');
  groups = (await body(await instructor.get('/api/machine-groups'))).groups;
  lasers = await machines(admin);
  await setTestRules(admin, lasers['laser-a'].id);
  await setTestRules(admin, lasers['laser-c'].id);
});

afterAll(async () => {
  await stopJobs();
  await closeDb();
  await closeTestDb();
});

/** The .ics attached to a message in the mail fake (maildev names stored attachments by generatedFileName). */
async function icsOf(mail: { id: string; attachments?: { filename: string; generatedFileName?: string }[] }): Promise<string> {
  const att = mail.attachments?.find((a) => a.filename === 'induction.ics');
  expect(att, 'an induction.ics attachment').toBeTruthy();
  return attachment(mail.id, att!.generatedFileName ?? att!.filename);
}

const personId = async (email: string) => (await testDb()('people').where({ email }).first('id')).id as string;

async function bank(attemptId: string): Promise<QuizQuestion[]> {
  const row = await testDb()('quiz_attempts as a').join('quiz_versions as v', 'v.id', 'a.quiz_version_id').where('a.id', attemptId).first('v.questions');
  return row.questions;
}

/** A new person (the seeds' factory: signing up is not the subject) who passes the glass-tube quiz through the API (clearance: awaiting sign-off). */
async function quizPassed(label: string) {
  const p = await newPerson(label);
  const quizId = glass().publishedQuizId!;
  const start = await p.client.send('POST', `/api/quizzes/${quizId}/attempt`);
  expect(start.status).toBe(201);
  const a = await body(start);
  const key = await bank(a.attemptId);
  const answers = Object.fromEntries(a.questions.map((q: { id: string }) => [q.id, key.find((k) => k.id === q.id)!.correct]));
  const r = await body(await p.client.send('POST', `/api/quizzes/${quizId}/attempts/${a.attemptId}`, { answers }));
  expect(r.clearanceState).toBe('awaiting sign-off');
  return { ...p, id: await personId(p.email) };
}

async function publish(c: Client, over: Record<string, unknown>) {
  return c.send('POST', '/api/induction-sessions', { groupId: glass().id, kind: 'first', capacity: 4, bring: 'A 3 mm plywood offcut', ...over });
}

describe('the quiz resumes instead of counting again', () => {
  it('a reload returns the open attempt (200, same id, same questions, saved answers); one attempt is counted', async () => {
    const p = await newPerson('resume');
    const quizId = glass().publishedQuizId!;
    const first = await p.client.send('POST', `/api/quizzes/${quizId}/attempt`);
    expect(first.status).toBe(201);
    const a = await body(first);
    expect(a.timeLimitMinutes).toBe(30);
    const q0 = a.questions[0];
    const saved = await p.client.send('PATCH', `/api/quizzes/${quizId}/attempts/${a.attemptId}`, { answers: { [q0.id]: [q0.options[1].id] } });
    expect(saved.status).toBe(200);
    expect((await body(saved)).answered).toBe(1);
    // the reload
    const again = await p.client.send('POST', `/api/quizzes/${quizId}/attempt`);
    expect(again.status).toBe(200);
    const b = await body(again);
    expect(b.attemptId).toBe(a.attemptId);
    expect(b.resumed).toBe(true);
    expect(b.questions.map((q: { id: string }) => q.id)).toEqual(a.questions.map((q: { id: string }) => q.id));
    expect(b.answers).toEqual({ [q0.id]: [q0.options[1].id] });
    expect(b.submitBy).toBe(a.submitBy);
    const rows = await testDb()('quiz_attempts').where({ person_id: await personId(p.email) });
    expect(rows).toHaveLength(1);
    // answers to questions not drawn are refused, someone else cannot save into it
    expect((await p.client.send('PATCH', `/api/quizzes/${quizId}/attempts/${a.attemptId}`, { answers: { nope: ['a'] } })).status).toBe(422);
    const other = await newPerson('resume-other');
    expect((await other.client.send('PATCH', `/api/quizzes/${quizId}/attempts/${a.attemptId}`, { answers: {} })).status).toBe(404);
  });

  it('an attempt left open past the time limit expires: it counts, and the next start is a new attempt', async () => {
    const p = await newPerson('expired');
    const id = await personId(p.email);
    const quizId = rf().publishedQuizId!;
    const old = await startAttempt(id, quizId, new Date(Date.now() - 40 * 60_000));
    const res = await p.client.send('POST', `/api/quizzes/${quizId}/attempt`);
    expect(res.status).toBe(201);
    expect((await body(res)).attemptId).not.toBe(old.attemptId);
    const late = await p.client.send('POST', `/api/quizzes/${quizId}/attempts/${old.attemptId}`, { answers: {} });
    expect(late.status).toBe(409);
    expect((await body(late)).error.code).toBe('attempt_expired');
    expect(await testDb()('quiz_attempts').where({ person_id: id })).toHaveLength(2);
  });

  it('three attempts that ran out in 24 hours use up the day: 429 daily_limit', async () => {
    const p = await newPerson('daylimit');
    const id = await personId(p.email);
    const quizId = rf().publishedQuizId!;
    for (const h of [3, 2, 1]) await startAttempt(id, quizId, new Date(Date.now() - h * 3_600_000));
    const res = await p.client.send('POST', `/api/quizzes/${quizId}/attempt`);
    expect(res.status).toBe(429);
    expect((await body(res)).error.fields.reason).toBe('daily_limit');
  });
});

describe('induction sessions and seats', () => {
  let session: { id: string; capacity: number };
  let people: Awaited<ReturnType<typeof quizPassed>>[] = [];

  it('only instructors and admins publish; a bad machine or time is refused with field messages', async () => {
    const member = await Client.as('member');
    expect((await publish(member, { startsAt: iso(siteTime(DAY, 9)), endsAt: iso(siteTime(DAY, 10)), place: 'Laser room' })).status).toBe(403);
    const wrongGroup = await publish(instructor, { startsAt: iso(siteTime(DAY, 9)), endsAt: iso(siteTime(DAY, 10)), machineId: lasers['laser-b'].id });
    expect(wrongGroup.status).toBe(422);
    expect((await body(wrongGroup)).error.fields.machineId).toMatch(/not in the/);
    const noPlace = await publish(instructor, { startsAt: iso(siteTime(DAY, 9)), endsAt: iso(siteTime(DAY, 10)) });
    expect(noPlace.status).toBe(422);
    expect((await body(noPlace)).error.fields.place).toBeTruthy();
  });

  it('publishes a 4-seat session in the room; the list shows it with the agreed shape', async () => {
    const res = await publish(instructor, { startsAt: iso(siteTime(DAY, 17)), endsAt: iso(siteTime(DAY, 19)), place: 'Laser room bench' });
    expect(res.status).toBe(201);
    session = await body(res);
    const list = await body(await (await Client.as('member')).get(`/api/induction-sessions?groupId=${glass().id}&from=${encodeURIComponent(iso(siteTime(DAY, 0)))}&to=${encodeURIComponent(iso(siteTime(DAY + 1, 0)))}`));
    const mine = list.find((s: { id: string }) => s.id === session.id);
    expect(mine).toMatchObject({ id: session.id, groupId: glass().id, capacity: 4, seatsTaken: 0, kind: 'first', place: 'Laser room bench', startsAt: siteTime(DAY, 17).toISOString(), endsAt: siteTime(DAY, 19).toISOString() });
  });

  it('20 concurrent seat requests for 4 seats: 4 × 201 and 16 × 409 session_full; 4 seats in the database', async () => {
    people = [];
    for (let i = 0; i < 4; i++) people.push(...(await Promise.all(Array.from({ length: 5 }, (_, j) => quizPassed(`seat${i}${j}`)))));
    const answers = await Promise.all(people.map((p) => p.client.send('POST', `/api/induction-sessions/${session.id}/seats`, {})));
    const statuses = answers.map((r) => r.status).sort();
    expect(statuses.filter((s) => s === 201)).toHaveLength(4);
    expect(statuses.filter((s) => s === 409)).toHaveLength(16);
    const bodies = await Promise.all(answers.map((r) => body(r)));
    expect(bodies.filter((b) => b.error).every((b) => b.error.code === 'session_full')).toBe(true);
    expect(bodies.filter((b) => b.seatId)).toHaveLength(4);
    const seats = await testDb()('induction_seats').where({ session_id: session.id, state: 'booked' });
    expect(seats).toHaveLength(4);
  });

  it('people who may not take a seat get 403 not_eligible with the reason', async () => {
    const fresh = await newPerson('noquiz');
    const r1 = await fresh.client.send('POST', `/api/induction-sessions/${session.id}/seats`, {});
    expect(r1.status).toBe(403);
    const b1 = await body(r1);
    expect(b1.error.code).toBe('not_eligible');
    expect(b1.error.message).toMatch(/Pass the glass-tube lasers quiz first/);
    expect(b1.error.fields.reason).toBe(b1.error.message);
    const cleared = await Client.as('member');
    const b2 = await body(await cleared.send('POST', `/api/induction-sessions/${session.id}/seats`, {}));
    expect(b2.error.code).toBe('not_eligible');
    expect(b2.error.message).toMatch(/already cleared/);
  });

  it('booking a seat e-mails an .ics; cancelling frees the seat for the first on the waitlist, who is e-mailed with an .ics', async () => {
    const seated: typeof people = [];
    for (const p of people) {
      if (await testDb()('induction_seats').where({ session_id: session.id, person_id: p.id, state: 'booked' }).first()) seated.push(p);
    }
    const waiting = people.find((p) => !seated.includes(p))!;
    const booked = await waitForMail((m) => to(seated[0]!.email)(m) && m.subject.startsWith('Seat booked'));
    const ics = await icsOf(booked);
    expect(ics).toContain('BEGIN:VEVENT');
    expect(ics).toContain(`DTSTART:${siteTime(DAY, 17).toISOString().replace(/[-:]/g, '').replace('.000', '')}`);
    expect(ics).toContain('Laser room bench');

    const join = await waiting.client.send('POST', `/api/induction-sessions/${session.id}/waitlist`, {});
    expect(join.status).toBe(201);
    expect((await body(join)).position).toBe(1);
    const cancel = await seated[0]!.client.send('DELETE', `/api/induction-sessions/${session.id}/seats/mine`);
    expect(cancel.status).toBe(200);
    const cancelled = await waitForMail((m) => to(seated[0]!.email)(m) && m.subject.startsWith('Seat cancelled'));
    expect(await icsOf(cancelled)).toContain('STATUS:CANCELLED');
    const offered = await waitForMail((m) => to(waiting.email)(m) && m.subject.startsWith('A seat freed up for you'));
    expect(await icsOf(offered)).toContain('BEGIN:VEVENT');
    expect(await testDb()('induction_seats').where({ session_id: session.id, state: 'booked' })).toHaveLength(4);
    expect(await testDb()('induction_seats').where({ session_id: session.id, person_id: waiting.id, state: 'booked' }).first()).toBeTruthy();
    // a second seat for the same group elsewhere is refused with the reason
    const other = await body(await publish(instructor, { startsAt: iso(siteTime(DAY, 19)), endsAt: iso(siteTime(DAY, 20)), place: 'Studio' }));
    const twice = await body(await waiting.client.send('POST', `/api/induction-sessions/${other.id}/seats`, {}));
    expect(twice.error.code).toBe('not_eligible');
    expect(twice.error.message).toMatch(/already have a seat/);
  });

  it('the day before, each seat gets one reminder with the .ics', async () => {
    const seat = await testDb()('induction_seats as x').join('people as p', 'p.id', 'x.person_id').where({ 'x.session_id': session.id, 'x.state': 'booked' }).first('p.email');
    const before = new Date(siteTime(DAY, 17).getTime() - 20 * 3_600_000);
    expect((await remindSeats(before)).reminded).toBeGreaterThanOrEqual(4);
    expect((await remindSeats(before)).reminded).toBe(0);
    const m = await waitForMail((x) => to(seat.email)(x) && x.subject.startsWith('Tomorrow:'));
    expect(await icsOf(m)).toContain('BEGIN:VEVENT');
  });

  it('the roster: quiz result and attendance; sign-off → cleared → the machine can be booked; an absentee is told and counted', async () => {
    expect((await (await Client.as('member')).get(`/api/induction-sessions/${session.id}/roster`)).status).toBe(403);
    const r = await body(await instructor.get(`/api/induction-sessions/${session.id}/roster`));
    expect(r.entries).toHaveLength(4);
    expect(r.checklist).toEqual(glass().checklist);
    expect(r.entries.every((e: any) => e.quiz?.passed === true && e.quiz.scorePct === 100 && e.seatState === 'booked' && e.clearanceState === 'awaiting sign-off')).toBe(true);
    const [pass, absent] = r.entries;
    const who = people.find((p) => p.id === pass.personId)!;

    // an incomplete checklist is refused and changes nothing
    const some = Object.fromEntries(glass().checklist.map((item, i) => [item, i > 0]));
    const refused = await instructor.send('POST', `/api/induction-sessions/${session.id}/signoffs`, { personId: pass.personId, present: true, checklist: some, level: 'basic', notes: '' });
    expect(refused.status).toBe(422);
    expect((await body(refused)).error.code).toBe('checklist_incomplete');

    const all = Object.fromEntries(glass().checklist.map((item) => [item, true]));
    const ok = await instructor.send('POST', `/api/induction-sessions/${session.id}/signoffs`, { personId: pass.personId, present: true, checklist: all, level: 'basic', notes: 'Calm with the fire routine.' });
    expect(ok.status).toBe(201);
    const so = await body(ok);
    expect(so).toMatchObject({ signedOff: true, state: 'cleared', level: 'basic' });
    expect(so.expiresOn).toMatch(/\d{4}$/);
    const clearance = await testDb()('clearances').where({ person_id: pass.personId, group_id: glass().id }).first();
    expect(clearance.state).toBe('cleared');
    const signoff = await testDb()('signoffs').where({ id: so.signoffId }).first();
    expect(signoff.notes).toBe('Calm with the fire routine.');
    const me = (await body(await who.client.get('/api/clearances/me'))).clearances.find((c: any) => c.groupId === glass().id);
    expect(me.state).toBe('cleared');
    // the booking is allowed now
    const booking = await who.client.send('POST', '/api/bookings', { machineId: lasers['laser-a'].id, startsAt: iso(siteTime(DAY, 14)), endsAt: iso(siteTime(DAY, 15)), materials: [], notes: '' });
    expect(booking.status, await booking.clone().text()).toBe(201);

    // absent: the seat is released, the person told, the no-show counted
    const abs = await instructor.send('POST', `/api/induction-sessions/${session.id}/signoffs`, { personId: absent.personId, present: false });
    expect(abs.status).toBe(200);
    expect((await body(abs)).seatState).toBe('absent');
    const absentEmail = people.find((p) => p.id === absent.personId)!.email;
    await waitForMail((m) => to(absentEmail)(m) && m.subject.startsWith('We missed you'));
    const after = await body(await instructor.get(`/api/induction-sessions/${session.id}/roster`));
    expect(after.counts).toMatchObject({ booked: 4, present: 1, absent: 1, signedOff: 1 });
    const list = await body(await instructor.get(`/api/induction-sessions?groupId=${glass().id}&from=${encodeURIComponent(iso(siteTime(DAY, 0)))}`));
    expect(list.find((s: { id: string }) => s.id === session.id).seatsTaken).toBe(3);
    // the absentee keeps the quiz pass and may book another session
    expect((await testDb()('clearances').where({ person_id: absent.personId, group_id: glass().id }).first()).state).toBe('awaiting sign-off');
    // the walk-in sign-off stays
    const walkIn = await instructor.send('POST', '/api/signoffs', { personId: absent.personId, groupId: glass().id, checklist: glass().checklist.map((item) => ({ item, done: true })), notes: 'walk-in' });
    expect(walkIn.status).toBe(201);
  });

  it('a session at a machine holds its time as a class block: nobody books over it, and it is on the calendar', async () => {
    const res = await publish(instructor, { startsAt: iso(siteTime(DAY, 10)), endsAt: iso(siteTime(DAY, 12)), machineId: lasers['laser-c'].id, place: 'Studio' });
    expect(res.status, await res.clone().text()).toBe(201);
    const s = await body(res);
    expect(s.place).toBe('Laser C — Studio');
    const row = await testDb()('induction_sessions').where({ id: s.id }).first('booking_id');
    const block = await testDb()('bookings').where({ id: row.booking_id }).first();
    expect(block).toMatchObject({ kind: 'class', state: 'reserved', machine_id: lasers['laser-c'].id });
    const member = await Client.as('member');
    const clash = await member.send('POST', '/api/bookings', { machineId: lasers['laser-c'].id, startsAt: iso(siteTime(DAY, 11)), endsAt: iso(siteTime(DAY, 12)), materials: [], notes: '' });
    expect(clash.status).toBe(409);
    expect((await body(clash)).error.code).toBe('slot_taken');
    const feed = await body(await member.get(`/api/bookings?machineId=${lasers['laser-c'].id}&from=${encodeURIComponent(iso(siteTime(DAY, 0)))}&to=${encodeURIComponent(iso(siteTime(DAY + 1, 0)))}`));
    const ev = feed.bookings.find((b: { id: string }) => b.id === row.booking_id);
    expect(ev).toMatchObject({ kind: 'class', courseName: 'First induction: Glass-tube lasers' });
    // publishing over booked machine time is refused
    expect((await publish(instructor, { startsAt: iso(siteTime(DAY, 11)), endsAt: iso(siteTime(DAY, 13)), machineId: lasers['laser-c'].id })).status).toBe(409);
  });
});
