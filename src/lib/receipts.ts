/** Receipt numbers: a short prefix from the site's name, the year, and the year's sequence (e.g. TCW-2026-00042). */

/** The initials of the site's name (letters and digits only), two to four of them; "BW" when the name gives none. */
export function receiptPrefix(siteName: string): string {
  const words = siteName.normalize('NFKD').replace(/[^\p{L}\p{N}\s]/gu, ' ').split(/\s+/).filter(Boolean);
  let p = words.map((w) => w[0]!).join('').toUpperCase().replace(/[^A-Z0-9]/g, '').slice(0, 4);
  if (p.length === 1) p = (words[0] ?? '').toUpperCase().replace(/[^A-Z0-9]/g, '').slice(0, 3);
  return p.length >= 2 ? p : 'BW';
}

export function formatReceiptNumber(prefix: string, year: number, sequence: number): string {
  if (!Number.isSafeInteger(sequence) || sequence < 1) throw new RangeError('A receipt sequence starts at 1.');
  return `${prefix}-${year}-${String(sequence).padStart(5, '0')}`;
}
