import { chromium } from 'playwright-core';
const base = `http://127.0.0.1:${process.env.PORT}`;
const [,, who, path, name, w, h, action] = process.argv;
const b = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ['--headless','--no-sandbox','--disable-gpu','--disable-quic','--no-first-run','--disable-background-networking','--disable-component-update','--disable-sync'] });
const ctx = await b.newContext({ viewport: { width: Number(w), height: Number(h) }, locale: 'en-NZ' });
const page = await ctx.newPage();
page.on('console', (m) => { if (m.type() === 'error') console.log('console:', m.text()); });
page.on('pageerror', (e) => console.log('pageerror:', e.message));
await page.goto(base + '/signin');
await page.getByLabel('E-mail').fill(`${who}@tidewater.example`);
await page.getByLabel('Password').fill('beamwarden-demo');
await Promise.all([page.waitForLoadState('load'), page.getByRole('button', { name: 'Sign in' }).click()]);
await page.goto(base + path);
await page.waitForLoadState('networkidle');
await page.waitForTimeout(800);
if (action === 'book') {
  const f = page.getByRole('form', { name: /Book by date/ });
  await f.getByRole('button', { name: 'Book', exact: true }).click();
  await page.waitForTimeout(1500);
  await page.screenshot({ path: `screenshots/${name}-viewport.png` });
}
await page.screenshot({ path: `screenshots/${name}.png`, fullPage: true });
await b.close();
