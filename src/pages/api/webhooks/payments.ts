import { DomainError, json, route } from '@lib/server/http';
import { handleWebhook } from '@lib/server/payments/webhooks';

const MAX = 512 * 1024;

/** POST /api/webhooks/payments: provider events, signature checked against STRIPE_WEBHOOK_SECRET (no session). */
export const POST = route(async ({ request }) => {
  const declared = Number(request.headers.get('content-length') ?? '0');
  if (declared > MAX) throw new DomainError('too_large', 'body_too_large', 'The event is too large.');
  const body = await request.text();
  if (body.length > MAX) throw new DomainError('too_large', 'body_too_large', 'The event is too large.');
  return json(await handleWebhook(body, request.headers.get('stripe-signature')));
});
