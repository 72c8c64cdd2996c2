/**
 * Which client a request comes from, for throttling. The server wrapper (scripts/serve.ts) removes every
 * X-Forwarded-* header unless the request came from an address in TRUST_PROXY, and then leaves exactly one
 * X-Forwarded-For value: the client its proxies saw. So here a forwarded address is the vetted one, and without
 * it the socket's address counts. The address travels from the auth route to the credentials check in a header
 * that the route sets itself (any incoming header of that name is replaced), so a client cannot forge it.
 */
export const CLIENT_ADDRESS_HEADER = 'x-beamwarden-client-address';

export function clientAddressOf(ctx: { request: Request; clientAddress?: string }): string {
  const forwarded = ctx.request.headers.get('x-forwarded-for');
  if (forwarded !== null) return forwarded.split(',').map((x) => x.trim()).filter(Boolean).at(-1) ?? 'unknown';
  try {
    return ctx.clientAddress || 'unknown';
  } catch {
    return 'unknown'; // not available (e.g. in some test harnesses)
  }
}
