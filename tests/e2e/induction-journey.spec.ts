/**
 * Journey, from quiz to first cut: an instructor publishes an induction session → a new member (their own
 * account, made through sign-up) takes the glass-tube quiz, reloads half-way and finds the same attempt with
 * the answers kept, passes → books a seat from the Clearances card; Floor and Book say why they cannot book yet
 * and link to the next step → the instructor opens the roster, marks them present, ticks the checklist and
 * signs them off → the member books the group's laser on the calendar. Screenshots of each step, desk and phone.
 * The machine group (a copy of the glass-tube group and its quiz: support/group.ts) and its one laser are the file's
 * own, removed and retired afterwards: the session is among the group's next three sessions whatever other files
 * publish for the demo groups, and the file runs beside others. The session is tomorrow evening in the room.
 */
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, hydrated, shot, signIn, watchErrors, SCREENSHOTS, withBrowser, signInContext } from '../support/browser';
import { Client } from '../support/client';
import { testDb } from '../support/db';
import { SITE_TZ, setTestRules, siteTime } from '../support/booking';
import { createTestGroup, removeTestGroup, type TestGroup } from '../support/group';
import { createTestMachine, retireTestMachine, type TestMachine } from '../support/machine';
import { zonedDate } from '../../src/lib/time';
import type { QuizQuestion } from '../../src/lib/quiz-rules';
import { to, waitForMail } from '../support/mail';
import { dragSelect, goToDay } from '../support/calendar';
import { signUpThroughForm } from '../support/signup';

const DAY = 32;
const web = withBrowser();
let admin: Client;
let group: TestGroup;
let laser: TestMachine;
const stamp = Date.now().toString(36);
const member = { name: `Aroha Induction ${stamp}`, email: `induction-${stamp}@tidewater.example`, password: 'a long passphrase for the laser room' };
const PLACE = `Laser room bench ${stamp}`;

beforeAll(async () => {
  admin = await Client.as('admin');
  group = await createTestGroup('induction', 'glass-tube');
  laser = await createTestMachine(admin, 'induction', group.id);
  await setTestRules(admin, laser.id);
});

afterAll(async () => {
  await retireTestMachine(admin, laser);
  await removeTestGroup(group);
});

const dateOf = (d: Date) => zonedDate(d, SITE_TZ);

async function glassBank(): Promise<QuizQuestion[]> {
  const row = await testDb()('quiz_versions').where({ quiz_id: group.quizId, status: 'published' }).first('questions');
  return row.questions;
}

/** Answers the questions on the page from `from` on (right answers), by the option texts of the bank. */
async function answer(page: Page, bank: QuizQuestion[], from: number, upTo?: number): Promise<void> {
  const sets = page.locator('fieldset[data-question]');
  const n = upTo ?? (await sets.count());
  for (let i = from; i < n; i++) {
    const set = sets.nth(i);
    const id = await set.getAttribute('data-question');
    const q = bank.find((b) => b.id === id)!;
    for (const oid of q.correct) await set.getByLabel(q.options.find((o) => o.id === oid)!.text, { exact: true }).check();
  }
}

/** Both widths of the same screen. */
async function both(page: Page, name: string, first: 'desk' | 'phone' = 'phone') {
  const order = first === 'phone' ? [['phone', PHONE], ['desk', DESK]] as const : [['desk', DESK], ['phone', PHONE]] as const;
  for (const [label, size] of order) {
    await page.setViewportSize(size);
    if (SCREENSHOTS) await page.waitForTimeout(150); // let the layout settle before the picture
    await shot(page, `induction-${name}-${label}`);
  }
}

describe('from quiz to first cut', () => {
  it('quiz (resumed after a reload) → seat → roster sign-off → the group\'s laser booked', { timeout: 240_000 }, async () => {
    // 1. the instructor publishes a session in the laser room
    const { ctx: ictx, page: ipage } = await web.openAs(null);
    ipage.setDefaultTimeout(20_000);
    const ierrors = watchErrors(ipage);
    await signIn(ipage, 'instructor');
    await ipage.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Sign-offs', exact: true }).click();
    await hydrated(ipage);
    await ipage.getByRole('button', { name: 'Publish a session…' }).click();
    const form = ipage.getByRole('form', { name: 'Publish a session' });
    await form.getByLabel('Machine group').selectOption({ label: group.name });
    // tomorrow evening, so it is among the next three sessions the member's card lists
    await form.getByLabel('Date').fill(dateOf(siteTime(1, 12)));
    await form.getByLabel('From').fill('19:00');
    await form.getByLabel('Until').fill('20:30');
    await form.getByLabel('Room or meeting point').fill(PLACE);
    await both(ipage, 'publish', 'desk');
    await form.getByRole('button', { name: 'Publish the session' }).click();
    const row = ipage.locator('li[data-session-row]').filter({ hasText: PLACE });
    await row.waitFor();
    await expect(row.innerText()).resolves.toMatch(/0 of 4 seats taken/);
    const session = await testDb()('induction_sessions').where({ place: PLACE }).first('id', 'starts_at');
    expect(new Date(session.starts_at).toISOString()).toBe(siteTime(1, 19).toISOString());

    // 2. a new member signs up and takes the quiz on a phone; a reload half-way keeps the attempt and the answers
    const { ctx: mctx, page: mpage } = await web.openAs(null, PHONE);
    mpage.setDefaultTimeout(20_000);
    const merrors = watchErrors(mpage);
    await signUpThroughForm(mpage, member);
    // the address is confirmed from the e-mailed link before the first sign-in
    const confirmation = await waitForMail((m) => to(member.email)(m) && /confirm/i.test(m.subject));
    const link = /\/confirm-email\?token=[A-Za-z0-9_-]+/.exec(`${confirmation.text ?? ''} ${confirmation.html ?? ''}`)?.[0];
    expect(link, 'a confirmation link in the e-mail').toBeTruthy();
    await mpage.goto(link!);
    await Promise.all([mpage.waitForURL(/\/signin\?confirmed=1/), mpage.getByRole('button', { name: 'Confirm my address' }).click()]);
    expect(await testDb()('people').where({ email: member.email.toLowerCase() }).whereNotNull('email_confirmed_at').first('id')).toBeTruthy();
    await signInContext(mpage.context(), member.email);
    await mpage.goto('/clearances');
    const card = mpage.locator(`li[data-group="${group.name}"]`);
    await expect(card.innerText()).resolves.toMatch(/3 of 3 attempts left today/);
    await both(mpage, 'clearances-quiz-due');
    await card.getByRole('link', { name: 'Take the quiz' }).click();
    await hydrated(mpage);
    const facts = mpage.getByRole('definition');
    await expect(mpage.getByLabel('About this quiz').innerText()).resolves.toMatch(new RegExp(`${group.name}[\\s\\S]*10[\\s\\S]*80 %[\\s\\S]*30 minutes[\\s\\S]*3 of 3`));
    expect(await facts.count()).toBeGreaterThan(4);
    await both(mpage, 'quiz-intro');
    await mpage.getByRole('button', { name: 'Start the quiz' }).click();
    await mpage.locator('fieldset[data-question]').first().waitFor();
    const bank = await glassBank();
    await answer(mpage, bank, 0, 4);
    await mpage.getByText(/4 of 10 answered · saved/).waitFor();
    await mpage.reload();
    await mpage.getByText(/Welcome back: this is the attempt you started/).waitFor();
    await expect.poll(() => mpage.locator('fieldset[data-question] input:checked').count()).toBeGreaterThanOrEqual(4);
    await both(mpage, 'quiz-resumed');
    const attempts = await testDb()('quiz_attempts as a').join('people as p', 'p.id', 'a.person_id').where('p.email', member.email).select('a.id');
    expect(attempts).toHaveLength(1);
    await answer(mpage, bank, 4);
    await mpage.getByRole('button', { name: 'Submit answers' }).click();
    await mpage.getByRole('heading', { name: 'Passed', exact: true }).waitFor();
    await both(mpage, 'quiz-passed');

    // 3. the Clearances card offers the next sessions; the member books a seat
    await mpage.goto('/clearances');
    await hydrated(mpage);
    const seat = card.locator('li[data-session]').filter({ hasText: PLACE });
    await expect(seat.innerText()).resolves.toMatch(/4 of 4 seats left/);
    await both(mpage, 'clearances-sessions');
    await seat.getByRole('button', { name: 'Book a seat' }).click();
    await card.getByText(/Seat booked for/).waitFor();
    await card.locator('[data-my-seat]').waitFor();
    await expect(card.locator('[data-next-step]').innerText()).resolves.toMatch(/Come to your induction session/);
    await both(mpage, 'clearances-seat-booked');
    const mail = await waitForMail((m) => to(member.email)(m) && m.subject.startsWith(`Seat booked: ${group.name}`));
    expect((mail as unknown as { attachments?: { filename: string }[] }).attachments?.some((a) => a.filename === 'induction.ics')).toBe(true);

    // 4. Floor and Book say why the member cannot book yet, with the link to the next step
    await mpage.goto('/');
    const floorA = mpage.locator(`li[data-machine="${laser.code}"]`);
    await expect(floorA.locator('[data-not-cleared]').innerText()).resolves.toMatch(/Not cleared yet \(awaiting sign-off\)/);
    expect(await floorA.getByRole('link', { name: `Book ${laser.name}` }).count()).toBe(0);
    await both(mpage, 'floor-not-cleared');
    await mpage.goto(`/book?machine=${laser.id}`);
    await hydrated(mpage);
    await expect(mpage.locator('[data-not-cleared]').innerText()).resolves.toMatch(/not cleared on any laser yet/);
    expect(await mpage.getByRole('form', { name: 'Confirm your booking' }).count()).toBe(0);
    await both(mpage, 'book-not-cleared');
    await mpage.locator('[data-not-cleared]').getByRole('link', { name: /Your next step/ }).first().click();
    await mpage.waitForURL(/\/clearances#group-/);

    // 5. the instructor opens the roster, marks the member present, ticks the checklist and signs off
    await ipage.reload();
    await hydrated(ipage);
    await row.getByRole('button', { name: 'Open the roster' }).click();
    const person = row.locator(`li[data-roster-person="${member.email}"]`);
    await person.waitFor();
    await expect(person.innerText()).resolves.toMatch(/Quiz: passed 100 %/);
    await both(ipage, 'roster-booked', 'desk');
    await person.getByRole('button', { name: 'Present' }).click();
    await ipage.getByText(`${member.name} is marked present.`).waitFor();
    const boxes = person.getByRole('checkbox');
    await boxes.first().waitFor();
    for (let i = 0; i < (await boxes.count()); i++) await boxes.nth(i).check();
    await person.getByLabel('Notes').fill('Framed the job and knew the fire routine.');
    await both(ipage, 'roster-checklist', 'desk');
    await person.getByRole('button', { name: `Sign off ${member.name} as cleared` }).click();
    await ipage.getByText(new RegExp(`${member.name} is cleared \\(basic\\) until the end of`)).waitFor();
    await person.getByText('Signed off (basic)').waitFor();
    await both(ipage, 'roster-signed-off', 'desk');
    const clearance = await testDb()('clearances as c').join('people as p', 'p.id', 'c.person_id').join('machine_groups as g', 'g.id', 'c.group_id')
      .where({ 'p.email': member.email, 'g.id': group.id }).first('c.state');
    expect(clearance.state).toBe('cleared');

    // 6. the member books the group's laser on the calendar
    await mpage.setViewportSize(DESK);
    const day = dateOf(siteTime(DAY, 12));
    await mpage.goto(`/book?machine=${laser.id}`);
    await hydrated(mpage);
    // cleared on the group now: the demo lasers (other groups) are still explained, and the form is there
    await expect(mpage.locator('[data-not-cleared]').innerText()).resolves.toMatch(/You cannot book these machines yet/);
    expect(await mpage.locator(`[data-not-cleared] li[data-machine="${laser.code}"]`).count()).toBe(0);
    expect(await mpage.locator('[data-not-cleared] li[data-machine="laser-b"]').count()).toBe(1);
    await goToDay(mpage, day);
    await dragSelect(mpage, day, '10:00:00', '10:45:00');
    const confirm = mpage.getByRole('form', { name: 'Confirm your booking' });
    await confirm.waitFor();
    await confirm.getByRole('button', { name: 'Book', exact: true }).click();
    await mpage.getByText(new RegExp(`^Booked: ${laser.name}`)).waitFor();
    await both(mpage, 'first-booking', 'desk');
    const booking = await testDb()('bookings as b').join('people as p', 'p.id', 'b.person_id')
      .where({ 'p.email': member.email, 'b.machine_id': laser.id, 'b.state': 'reserved' }).first('b.starts_at');
    expect(new Date(booking.starts_at).toISOString()).toBe(siteTime(DAY, 10).toISOString());

    // 7. the quiz editor has its own address and asks nothing back for a removed question: Undo puts it back
    await ipage.goto(`/quizzes?quiz=${group.quizId}`);
    await hydrated(ipage);
    await expect.poll(() => ipage.getByLabel('Title', { exact: true }).inputValue()).toBe(group.quizTitle);
    const legends = ipage.locator('fieldset legend').filter({ hasText: /^Question \d+$/ });
    const count = await legends.count();
    const first = await ipage.getByLabel('Question 1 text', { exact: true }).inputValue();
    await ipage.getByRole('button', { name: 'Remove question 1', exact: true }).click();
    await ipage.getByText(/Removed “.*” from the draft/).waitFor();
    expect(await legends.count()).toBe(count - 1);
    await both(ipage, 'quiz-editor-undo', 'desk');
    await ipage.getByRole('button', { name: 'Undo' }).click();
    expect(await legends.count()).toBe(count);
    expect(await ipage.getByLabel('Question 1 text', { exact: true }).inputValue()).toBe(first);

    expect(merrors).toEqual([]);
    expect(ierrors).toEqual([]);
    await ictx.close();
    await mctx.close();
  });
});
