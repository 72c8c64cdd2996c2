/** Headers sent with every answer. The islands are bundled scripts from our own origin. */
export function securityHeaders(https: boolean): Record<string, string> {
  const h: Record<string, string> = {
    'x-content-type-options': 'nosniff',
    'referrer-policy': 'same-origin',
    'x-frame-options': 'DENY',
    'permissions-policy': 'camera=(self), geolocation=(), microphone=()',
    'cross-origin-opener-policy': 'same-origin',
  };
  if (https) h['strict-transport-security'] = 'max-age=31536000; includeSubDomains';
  return h;
}
