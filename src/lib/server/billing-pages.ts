/** What the Account and receipt pages need, gathered on the server (pages never import the database). */
import { env } from './env';
import { getSettings } from './settings';
import { accountSummary, refundsOf } from './payments/account';
import { getCharge } from './payments/charge-records';
import { hasAnyRole } from '@lib/roles';
import { zonedDate } from '@lib/time';
import type { SignedInPerson } from '@lib/signed-in-person';

export async function accountPage(personId: string) {
  const [summary, settings] = await Promise.all([accountSummary(personId), getSettings()]);
  return { summary, timeZone: settings.timeZone, locale: settings.locale, siteName: settings.name, testMode: env().STRIPE_SECRET_KEY.startsWith('sk_test_') };
}

/** A receipt is shown to the person charged, and to stewards and admins. */
export async function receiptPage(viewer: SignedInPerson, chargeId: string) {
  if (!/^[0-9a-f-]{36}$/i.test(chargeId)) return null;
  const charge = await getCharge(chargeId);
  if (!charge) return null;
  const staff = hasAnyRole(viewer.roles, ['steward', 'admin']);
  if (charge.personId !== viewer.id && !staff) return null;
  const settings = await getSettings();
  // wall-clock minutes and, when the person gave it, the machine's job-timer reading (shown side by side)
  const { getSession } = await import('./machine-sessions');
  const session = charge.sessionId ? await getSession(charge.sessionId) : null;
  const times = session ? { wallClockMinutes: session.beamMinutes, jobTimerMinutes: session.jobTimerMinutes } : null;
  return { charge, refunds: await refundsOf(chargeId), times, timeZone: settings.timeZone, locale: settings.locale, siteName: settings.name, staff };
}

/** Admin › Pricing: machines, every version (newest first), the one in force, today's date in the site zone. */
export async function pricingPage() {
  const [{ listVersions, versionAt }, { listMachines }] = await Promise.all([import('./prices'), import('./machines')]);
  const [versions, current, machines, settings] = await Promise.all([listVersions(), versionAt(new Date()), listMachines(), getSettings()]);
  const today = zonedDate(new Date(), settings.timeZone);
  return {
    machines: machines.map((m) => ({ id: m.id, name: m.name })),
    versions: versions.map((v) => ({ ...v, effectiveFrom: v.effectiveFrom.toISOString(), createdAt: v.createdAt.toISOString() })),
    currentId: current?.id ?? null,
    timeZone: settings.timeZone,
    locale: settings.locale,
    today,
    site: { currency: settings.currency, taxRatePercent: settings.taxRatePercent, pricesIncludeTax: settings.pricesIncludeTax },
  };
}
