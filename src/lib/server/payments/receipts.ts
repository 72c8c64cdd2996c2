/** Receipts: the number and date given when money is taken, and the e-mail that carries them. */
import type { Knex } from 'knex';
import { formatReceiptNumber, receiptPrefix } from '@lib/receipts';
import { siteFormat } from '@lib/format';
import { zonedDate } from '@lib/time';
import { env } from '@lib/server/env';
import { queueMail } from '@lib/server/mail';
import { getSettings, siteMoney } from '@lib/server/settings';
import { personFor, updateCharge, type Charge } from './charge-records';

/**
 * Dates the receipt (now: when the money is taken) and gives it the next number of the year in the site's zone:
 * one upsert on the year's counter, whose row lock makes concurrent charges take turns (no number given twice).
 */
export async function assignReceipt(trx: Knex.Transaction, chargeId: string): Promise<void> {
  const row = await trx('charges').where({ id: chargeId }).forUpdate().first('receipt_number');
  if (!row || row.receipt_number) return;
  // read on this transaction's connection: a second pooled connection per open transaction can starve the pool
  const { name, timeZone } = await getSettings(trx);
  const now = new Date();
  const year = Number(zonedDate(now, timeZone).slice(0, 4));
  const r = await trx.raw(
    'INSERT INTO receipt_counters (year, last_number) VALUES (?, 1) ON CONFLICT (year) DO UPDATE SET last_number = receipt_counters.last_number + 1 RETURNING last_number',
    [year],
  );
  const n = Number((r as { rows: { last_number: number }[] }).rows[0]!.last_number);
  await updateCharge(trx, chargeId, { receipt_number: formatReceiptNumber(receiptPrefix(name), year, n), charged_at: now });
}

export async function queueReceipt(trx: Knex.Transaction, c: Charge): Promise<void> {
  const p = await personFor(c.personId, trx);
  const lines = await Promise.all(c.breakdown.lines.map(async (l) => `${l.label}: ${await siteMoney(l.amountMinor, c.currency)}`));
  if (c.breakdown.carriedInMinor) lines.push(`Earlier small sums carried to this charge: ${await siteMoney(c.breakdown.carriedInMinor, c.currency)}`);
  const site = await getSettings(trx);
  const rate = siteFormat(site.locale, site.timeZone).percent(c.breakdown.taxRateBp / 10_000);
  const tax = `${c.breakdown.taxMode === 'inclusive' ? 'Includes' : 'Plus'} ${rate} tax: ${await siteMoney(c.breakdown.taxMinor, c.currency)}`;
  const paid = c.method === 'recharge' ? `Billed to cost centre ${c.costCentre}` : `Paid by card: ${await siteMoney(c.capturedMinor, c.currency)}`;
  await queueMail(trx, p.email, `Receipt: ${await siteMoney(c.amountMinor, c.currency)}`, {
    greeting: `Hello ${p.name},`,
    paragraphs: [...(c.receiptNumber ? [`Receipt ${c.receiptNumber}`] : []), ...lines, tax, `Total: ${await siteMoney(c.amountMinor, c.currency)}`, paid],
    action: { label: 'Printable receipt', url: `${env().PUBLIC_BASE_URL}/account/receipts/${c.id}` },
  });
}
