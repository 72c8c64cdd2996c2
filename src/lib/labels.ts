/** Machine labels: the URL a label encodes and the short cautions printed on it. Pure, no I/O. */

/** The three cautions printed on every machine label (the full set is on the hazard sheet). */
export const LABEL_CAUTIONS = [
  'Class 4 laser inside: never defeat an interlock or open the lid while it can fire.',
  'Never leave a running job; watch for flame.',
  'Extraction and air assist on; CO2 extinguisher at hand.',
] as const;

/** The address a machine's QR label opens: `<base>/m/<code>`. */
export function machinePageUrl(baseUrl: string, code: string): string {
  return `${baseUrl.replace(/\/+$/, '')}/m/${encodeURIComponent(code)}`;
}

/** Greedy word wrap to at most `width` characters per line. */
export function wrapText(text: string, width: number): string[] {
  const lines: string[] = [];
  let line = '';
  for (const word of text.split(/\s+/).filter(Boolean)) {
    if (line && line.length + 1 + word.length > width) {
      lines.push(line);
      line = word;
    } else line = line ? `${line} ${word}` : word;
  }
  if (line) lines.push(line);
  return lines;
}

export function escapeXml(s: string): string {
  return s.replace(/[<>&"']/g, (c) => ({ '<': '&lt;', '>': '&gt;', '&': '&amp;', '"': '&quot;', "'": '&apos;' })[c]!);
}

/**
 * Whether a label address can be reached from a phone in the room: not a loopback or unspecified host
 * (localhost, 127.x.x.x, ::1, 0.0.0.0). Labels are not printed until the site's public address passes.
 */
export function isPublicAddress(baseUrl: string | null | undefined): boolean {
  if (!baseUrl) return false;
  let host: string;
  try {
    host = new URL(baseUrl).hostname.toLowerCase().replace(/^\[|\]$/g, '');
  } catch {
    return false;
  }
  if (host === 'localhost' || host.endsWith('.localhost') || host === '::1' || host === '0.0.0.0' || host === '::') return false;
  if (/^127\.\d+\.\d+\.\d+$/.test(host)) return false;
  return true;
}
