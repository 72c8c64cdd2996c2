import { z } from '@lib/zod';
import { json, readQuery, requireSignedIn, route } from '@lib/server/http';
import { listCharges } from '@lib/server/payments/account';
import { page, pageSize } from '@lib/schemas';
import { chargeJson } from '@lib/server/charge-json';
import { CHARGE_SORTS } from '@lib/account-views';

const query = z.object({
  page,
  pageSize,
  sort: z.enum(CHARGE_SORTS).default('date'),
  dir: z.enum(['asc', 'desc']).default('desc'),
});

/** GET /api/account/charges?page=&pageSize=&sort=&dir= (signed in) → a page of the person's own charges. */
export const GET = route(async ({ locals, url }) => {
  const person = requireSignedIn(locals);
  const opts = readQuery(url, query);
  const { rows, total } = await listCharges(person.id, opts);
  return json({ total, page: opts.page, pageSize: opts.pageSize, rows: rows.map(chargeJson) });
});
