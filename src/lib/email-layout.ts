/**
 * The look of every e-mail Beamwarden sends: one heading, short paragraphs, at most one action, and
 * the same words in a plain-text part. Pure; no I/O.
 */
export interface EmailContent {
  greeting?: string;
  paragraphs: string[];
  action?: { label: string; url: string };
  /** Small print under the action, e.g. a safety reminder. */
  footnote?: string;
}

const escapeHtml = (s: string) =>
  s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');

export function renderEmail(subject: string, c: EmailContent): { html: string; text: string } {
  const textParts = [
    c.greeting ?? '',
    ...c.paragraphs,
    c.action ? `${c.action.label}: ${c.action.url}` : '',
    c.footnote ?? '',
    '— Beamwarden',
  ].filter(Boolean);
  const text = textParts.join('\n\n') + '\n';

  const p = (s: string) => `<p style="margin:0 0 14px;line-height:1.5">${escapeHtml(s)}</p>`;
  const html = `<!doctype html><html lang="en"><head><meta charset="utf-8"><title>${escapeHtml(subject)}</title></head>
<body style="margin:0;background:#f7f2e8;color:#262522;font-family:'Work Sans',Arial,sans-serif">
<div style="max-width:560px;margin:0 auto;padding:24px">
<div style="font-weight:700;letter-spacing:.02em;margin-bottom:16px">Beamwarden</div>
<div style="background:#fffdf8;border:1px solid #d9d0bf;border-radius:8px;padding:20px">
<h1 style="font-size:20px;margin:0 0 14px">${escapeHtml(subject)}</h1>
${c.greeting ? p(c.greeting) : ''}
${c.paragraphs.map(p).join('\n')}
${c.action ? `<p style="margin:18px 0"><a href="${escapeHtml(c.action.url)}" style="background:#b3370f;color:#ffffff;padding:10px 16px;border-radius:6px;text-decoration:none;font-weight:600">${escapeHtml(c.action.label)}</a></p>` : ''}
${c.footnote ? `<p style="margin:14px 0 0;font-size:13px;color:#5b564d">${escapeHtml(c.footnote)}</p>` : ''}
</div></div></body></html>`;
  return { html, text };
}
