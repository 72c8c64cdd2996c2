/** Signing up through the real form in a browser test. */
import type { Page } from 'playwright-core';

/** Fills and sends the sign-up form as `person`; resolves once the page says the confirmation e-mail is on its way. */
export async function signUpThroughForm(page: Page, person: { name: string; email: string; password: string }): Promise<void> {
  await page.goto('/signup');
  await page.getByLabel('Your name').fill(person.name);
  await page.getByLabel('E-mail').fill(person.email);
  await page.getByLabel('Password').fill(person.password);
  await Promise.all([page.waitForURL(/\/signup\?sent=1/), page.getByRole('button', { name: 'Create account' }).click()]);
}
