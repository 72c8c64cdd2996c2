/**
 * Journey: an instructor publishes a new version of a quiz → a new member fails once, then
 * passes → the instructor signs off the practical induction → the member's Clearances screen shows
 * `cleared` → the e-mails (quiz passed, cleared) arrive in maildev, read through its REST API.
 * The quiz is that of a machine group of the file's own (a copy of the RF laser group and its quiz, with one test
 * laser; removed afterwards: support/group.ts), so the demo quizzes other files read stay as seeded and the file runs
 * beside others.
 */
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DESK, PHONE, hydrated, shot, signIn, watchErrors, withBrowser, signInContext } from '../support/browser';
import { Client } from '../support/client';
import { testDb } from '../support/db';
import { createTestGroup, removeTestGroup, type TestGroup } from '../support/group';
import { createTestMachine, retireTestMachine, type TestMachine } from '../support/machine';
import { confirmByDatabase, newPerson } from '../support/people';
import type { QuizQuestion } from '../../src/lib/quiz-rules';
import { to, waitForMail } from '../support/mail';
import { signUpThroughForm } from '../support/signup';

const web = withBrowser();
let admin: Client;
let group: TestGroup;
let laser: TestMachine;

beforeAll(async () => {
  admin = await Client.as('admin');
  group = await createTestGroup('clearance', 'rf-laser');
  laser = await createTestMachine(admin, 'clearance', group.id);
});

afterAll(async () => {
  await retireTestMachine(admin, laser);
  await removeTestGroup(group);
});

const stamp = Date.now().toString(36);
const member = { name: `Kiri Journey ${stamp}`, email: `journey-${stamp}@tidewater.example`, password: 'a long passphrase for the laser room' };
const NEW_PROMPT = `Before you leave the laser room after a job (${stamp}), what do you check?`;

async function publishedBank(): Promise<QuizQuestion[]> {
  const row = await testDb()('quiz_versions').where({ quiz_id: group.quizId, status: 'published' }).first('questions');
  return row.questions;
}

/** Answers every question on the page, rightly or wrongly, by the option texts of the bank. */
async function answerAll(page: Page, bank: QuizQuestion[], right: boolean): Promise<number> {
  const sets = page.locator('fieldset[data-question]');
  const n = await sets.count();
  for (let i = 0; i < n; i++) {
    const set = sets.nth(i);
    const id = await set.getAttribute('data-question');
    const q = bank.find((b) => b.id === id)!;
    const pick = right ? q.correct : [q.options.find((o) => !q.correct.includes(o.id))!.id];
    for (const oid of pick) await set.getByLabel(q.options.find((o) => o.id === oid)!.text, { exact: true }).check();
  }
  return n;
}

describe('clearance journey', () => {
  it('instructor publishes, member fails then passes, instructor signs off, member is cleared, mail arrives', { timeout: 150_000 }, async () => {
    // 1. the instructor adds a question to the group's quiz (a copy of the RF laser quiz), previews it and publishes version 2
    const { ctx: ictx, page: ipage } = await web.openAs(null);
    ipage.setDefaultTimeout(15_000);
    const ierrors = watchErrors(ipage);
    await signIn(ipage, 'instructor');
    await ipage.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Quizzes', exact: true }).click();
    await ipage.getByRole('link', { name: `Edit ${group.quizTitle}` }).click();
    await ipage.waitForURL(/\/quizzes\?quiz=/);
    await expect.poll(() => ipage.getByLabel('Title', { exact: true }).inputValue()).toBe(group.quizTitle);
    const before = (await publishedBank()).length;
    await ipage.getByLabel('Wait after a missed attempt (minutes)').fill('0');
    await ipage.getByRole('button', { name: 'Add a question' }).click();
    const n = before + 1;
    await ipage.getByLabel(`Question ${n} topic`, { exact: true }).fill('Leaving the room');
    await ipage.getByLabel(`Question ${n} text`, { exact: true }).fill(NEW_PROMPT);
    await ipage.getByLabel(`Question ${n} option 1`, { exact: true }).fill('The extractor has cleared the fumes and nothing on the bed is smouldering');
    await ipage.getByLabel(`Question ${n} option 2`, { exact: true }).fill('Nothing: the machine switches itself off');
    await ipage.getByLabel(`Question ${n} option 1 is correct`, { exact: true }).check();
    await ipage.getByRole('tab', { name: 'Preview' }).click();
    await expect.poll(() => ipage.getByRole('region', { name: 'Preview' }).innerText()).toContain(NEW_PROMPT);
    await shot(ipage, 'quizzes-preview-desk');
    await ipage.getByRole('tab', { name: 'Edit' }).click();
    await ipage.getByRole('button', { name: 'Save and publish' }).click();
    await expect.poll(() => ipage.getByRole('status').first().innerText().catch(() => '')).toMatch(/Published version 2/);
    await shot(ipage, 'quizzes-list-desk');
    const bank = await publishedBank();
    expect(bank).toHaveLength(n);
    expect(bank.some((q) => q.prompt === NEW_PROMPT)).toBe(true);

    // 2. a new member signs up, fails the quiz once, then passes it
    const { ctx: mctx, page: mpage } = await web.openAs(null, PHONE);
    mpage.setDefaultTimeout(15_000);
    const merrors = watchErrors(mpage);
    await signUpThroughForm(mpage, member);
    await confirmByDatabase(member.email);
    await signInContext(mpage.context(), member.email);
    await mpage.goto('/clearances');
    const rfCard = mpage.locator(`li[data-group="${group.name}"]`);
    await expect(rfCard.locator('[data-state]').getAttribute('data-state')).resolves.toBe('quiz due');
    await shot(mpage, 'clearances-quiz-due-phone');
    await Promise.all([mpage.waitForURL(/\/clearances\/quiz\//), rfCard.getByRole('link', { name: 'Take the quiz' }).click()]);
    await hydrated(mpage); // a press before the quiz island hydrates would do nothing
    await mpage.getByRole('button', { name: 'Start the quiz' }).click();
    await mpage.locator('fieldset[data-question]').first().waitFor();
    expect(await answerAll(mpage, bank, false)).toBe(10);
    await shot(mpage, 'quiz-attempt-phone');
    await mpage.getByRole('button', { name: 'Submit answers' }).click();
    await expect(mpage.getByRole('heading', { name: 'Not passed this time' }).waitFor()).resolves.toBeUndefined();
    const missed = await mpage.getByRole('list', { name: 'Missed topics' }).innerText();
    expect(missed.length).toBeGreaterThan(3);
    await shot(mpage, 'quiz-failed-phone');
    await mpage.getByRole('button', { name: 'Try again' }).click();
    await mpage.locator('fieldset[data-question]').first().waitFor();
    await answerAll(mpage, bank, true);
    await mpage.getByRole('button', { name: 'Submit answers' }).click();
    await mpage.getByRole('heading', { name: 'Passed', exact: true }).waitFor();
    await expect(mpage.locator('main').innerText()).resolves.toMatch(/book a practical sign-off with an instructor/);
    await shot(mpage, 'quiz-passed-phone');
    const attempts = await testDb()('quiz_attempts as a').join('people as p', 'p.id', 'a.person_id').join('quiz_versions as v', 'v.id', 'a.quiz_version_id')
      .where('p.email', member.email).orderBy('a.started_at').select('a.passed', 'v.version');
    expect(attempts.map((a) => a.passed)).toEqual([false, true]);
    expect(attempts.every((a) => a.version === 2)).toBe(true);

    // 3. the instructor signs off the practical induction from the queue
    await ipage.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Sign-offs', exact: true }).click();
    const entry = ipage.locator(`li[data-person="${member.email}"]`);
    await entry.waitFor().catch(async (e) => {
      await shot(ipage, 'signoffs-queue-failure');
      throw e;
    });
    await entry.getByRole('button', { name: `Open the checklist for ${member.name}` }).click();
    const boxes = entry.getByRole('checkbox');
    for (let i = 0; i < (await boxes.count()); i++) await boxes.nth(i).check();
    await entry.getByLabel('Notes').fill('Showed every step calmly; knew the fire routine.');
    await shot(ipage, 'signoff-form-desk');
    await entry.getByRole('button', { name: `Sign off ${member.name} as cleared` }).click();
    await ipage.getByText(new RegExp(`is cleared \\(basic\\) on ${group.name} until the end of`)).waitFor();
    expect(ierrors).toEqual([]);

    // 4. the member's Clearances screen shows cleared
    await mpage.goto('/clearances');
    await expect(rfCard.locator('[data-state]').getAttribute('data-state')).resolves.toBe('cleared');
    await expect(rfCard.innerText()).resolves.toMatch(/Cleared until/);
    await shot(mpage, 'clearances-cleared-phone');
    await mpage.setViewportSize(DESK);
    await shot(mpage, 'clearances-cleared-desk');
    expect(merrors).toEqual([]);

    // 5. the e-mails arrived, with HTML and plain-text parts
    const passed = await waitForMail((m) => to(member.email)(m) && m.subject === `Quiz passed — book your practical sign-off: ${group.name}`);
    expect(passed.text).toMatch(/practical sign-off/);
    expect(passed.html).toMatch(/<html/);
    const cleared = await waitForMail((m) => to(member.email)(m) && m.subject === `You are cleared: ${group.name}`);
    expect(cleared.text).toMatch(new RegExp(`cleared \\(basic\\) on ${group.name} until`));
    await ictx.close();
    await mctx.close();
  });

  it('the quiz says "saved" only once the latest answers are stored; an earlier save never lands after a later one', async () => {
    const taker = await newPerson('quiz-save');
    const { ctx, page, errors } = await web.openAs(taker.email, DESK);
    // the first save is held on its way to the server; the order in which saves reach the server is kept
    let release!: () => void;
    const held = new Promise<void>((r) => (release = r));
    const arrived: number[] = [];
    let sent = 0;
    await page.route('**/api/quizzes/*/attempts/*', async (route) => {
      if (route.request().method() !== 'PATCH') return route.continue();
      const n = ++sent;
      if (n === 1) await held;
      arrived.push(n);
      await route.continue();
    });
    await page.goto('/clearances');
    await Promise.all([page.waitForURL(/\/clearances\/quiz\//), page.locator(`li[data-group="${group.name}"]`).getByRole('link', { name: 'Take the quiz' }).click()]);
    await hydrated(page);
    await page.getByRole('button', { name: 'Start the quiz' }).click();
    const sets = page.locator('fieldset[data-question]');
    await sets.first().waitFor();
    const bank = await publishedBank();
    const pick = async (i: number) => {
      const id = await sets.nth(i).getAttribute('data-question');
      const q = bank.find((b) => b.id === id)!;
      await sets.nth(i).getByLabel(q.options.find((o) => o.id === q.correct[0])!.text, { exact: true }).check();
      return q.id;
    };
    const first = await pick(0);
    await expect.poll(() => sent).toBe(1); // the first save is on its way (and held)
    const second = await pick(1);
    // the window in which a second save would be sent beside the held one (the page waits 250 ms after a change)
    await new Promise((r) => setTimeout(r, 800));
    await expect(page.getByRole('status').filter({ hasText: 'answered' }).innerText()).resolves.toMatch(/2 of 10 answered · saving/);
    release();
    await page.getByText('2 of 10 answered · saved').waitFor();
    expect(arrived).toEqual([1, 2]);
    const row = await testDb()('quiz_attempts as a').join('people as p', 'p.id', 'a.person_id').where('p.email', taker.email).first('a.answers');
    expect(Object.keys(row.answers as Record<string, string[]>).sort()).toEqual([first, second].sort());
    expect(errors).toEqual([]);
    await ctx.close();
  });

  it('an admin sees the machine groups with their settings; a member is refused the instructor screens', async () => {
    const { ctx: actx, page: apage, errors } = await web.openAs(null);
    await signIn(apage, 'admin');
    await apage.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Machine groups', exact: true }).click();
    const glassForm = apage.getByRole('form', { name: 'Glass-tube lasers' });
    await expect.poll(() => glassForm.getByLabel('Validity (days)').inputValue()).toBe('365');
    await expect(glassForm.innerText()).resolves.toContain('Laser A, Laser C');
    await expect(apage.getByRole('form', { name: 'RF laser' }).getByLabel('When it lapses').inputValue()).resolves.toBe('quiz_and_signoff');
    await shot(apage, 'machine-groups-desk');
    expect(errors).toEqual([]);
    await actx.close();

    const { ctx: mctx, page: mpage } = await web.openAs(null, PHONE);
    await signInContext(mctx, 'member');
    for (const path of ['/quizzes', '/signoffs', '/admin/machine-groups']) expect((await mpage.goto(path))?.status()).toBe(403);
    await mctx.close();
  });
});
