import { createHash } from 'node:crypto';

/** Headers sent with every answer. The islands are bundled scripts from our own origin. */
export function securityHeaders(https: boolean): Record<string, string> {
  const h: Record<string, string> = {
    'x-content-type-options': 'nosniff',
    'referrer-policy': 'same-origin',
    'x-frame-options': 'DENY',
    'permissions-policy': 'camera=(self), geolocation=(), microphone=()',
    'cross-origin-opener-policy': 'same-origin',
    // answers that are not pages (JSON, CSV, files) load nothing and are never framed
    'content-security-policy': "default-src 'none'; frame-ancestors 'none'; base-uri 'none'; form-action 'none'",
  };
  if (https) h['strict-transport-security'] = 'max-age=31536000; includeSubDomains';
  return h;
}

/**
 * The institution's identity provider (OIDC_ISSUER), where the "Sign in with …" form's answer redirects: a
 * form's redirect to another origin counts under form-action.
 */
function institutionOrigin(): string {
  const issuer = process.env.OIDC_ISSUER;
  if (!issuer) return '';
  try {
    return ` ${new URL(issuer).origin}`;
  } catch {
    return '';
  }
}

/**
 * The policy of an HTML page: scripts only from our origin, plus the page's own inline scripts (Astro's
 * island loader) allowed by their SHA-256 hashes — never 'unsafe-inline' for scripts. Styles may be inline
 * (island libraries set style attributes). No framing, no plugins, forms post only to us (and
 * may be redirected on to the institution's identity provider).
 */
export function pagePolicy(inlineScriptHashes: readonly string[]): string {
  const scripts = ["'self'", ...[...new Set(inlineScriptHashes)].map((h) => `'sha256-${h}'`)].join(' ');
  return [
    "default-src 'self'",
    `script-src ${scripts}`,
    "style-src 'self' 'unsafe-inline'",
    "img-src 'self' data: blob:",
    "font-src 'self' data:",
    "connect-src 'self'",
    "media-src 'self' blob:",
    "worker-src 'self' blob:",
    "object-src 'none'",
    "base-uri 'self'",
    `form-action 'self'${institutionOrigin()}`,
    "frame-ancestors 'none'",
  ].join('; ');
}

/** SHA-256 (base64) of each inline <script> (one without a src attribute) in an HTML document. */
export function inlineScriptHashes(html: string): string[] {
  const out: string[] = [];
  for (const m of html.matchAll(/<script\b([^>]*)>([\s\S]*?)<\/script>/gi)) {
    const attrs = m[1] ?? '';
    if (/\bsrc\s*=/.test(attrs)) continue;
    if (/\btype\s*=\s*["']?application\/(ld\+)?json/i.test(attrs)) continue;
    out.push(createHash('sha256').update(m[2] ?? '', 'utf8').digest('base64'));
  }
  return out;
}
