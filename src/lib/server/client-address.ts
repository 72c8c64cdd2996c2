/**
 * Which client a request comes from, for throttling. Astro's `clientAddress` takes the first
 * X-Forwarded-For value when the header is there, which any client can write: so a forwarded address is used
 * only when TRUSTED_PROXY_HOPS says how many proxies of ours stand in front (the entry that many from the end
 * is the one our nearest proxy saw). Without that setting every request that sends the header shares one
 * bucket, so forging it gains nothing. The address travels from the auth route to the credentials check in a
 * header that the route sets itself (any incoming header of that name is replaced), so a client cannot forge it.
 */
export const CLIENT_ADDRESS_HEADER = 'x-beamwarden-client-address';

export function clientAddressOf(ctx: { request: Request; clientAddress?: string }): string {
  const forwarded = ctx.request.headers.get('x-forwarded-for');
  if (forwarded !== null) {
    const hops = Number(process.env.TRUSTED_PROXY_HOPS ?? '0');
    if (!Number.isInteger(hops) || hops <= 0) return 'forwarded-unverified';
    const list = forwarded.split(',').map((s) => s.trim()).filter(Boolean);
    return list[Math.max(0, list.length - hops)] ?? 'unknown';
  }
  try {
    return ctx.clientAddress || 'unknown';
  } catch {
    return 'unknown'; // not available (e.g. in some test harnesses)
  }
}
