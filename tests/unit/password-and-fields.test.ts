import { describe, expect, it } from 'vitest';
import { passwordProblem } from '../../src/lib/password-rules';
import { email, isoInstant, pageSize } from '../../src/lib/schemas';
import { renderEmail } from '../../src/lib/email-layout';

describe('password rules (NIST SP 800-63B §5.1.1.2: length over composition, refuse common choices)', () => {
  it('accepts a long phrase of one’s own', () => {
    expect(passwordProblem('copper kettle on the shelf')).toBeNull();
  });
  it('refuses short, common, repeated and e-mail-based passwords with a sentence', () => {
    expect(passwordProblem('short')).toMatch(/at least 10/);
    expect(passwordProblem('password123')).toMatch(/too common/);
    expect(passwordProblem('aaaaaaaaaaaa')).toMatch(/repeat/);
    expect(passwordProblem('marama-2026-pass', { email: 'marama@example.org' })).toMatch(/e-mail/);
    expect(passwordProblem('x'.repeat(201))).toMatch(/at most 200/);
  });
});

describe('shared field schemas', () => {
  it('e-mail is trimmed and lower-cased; nonsense is refused', () => {
    expect(email.parse('  Ana@Example.ORG ')).toBe('ana@example.org');
    expect(email.safeParse('not an address').success).toBe(false);
  });
  it('instants need an explicit offset', () => {
    expect(isoInstant.parse('2026-12-02T09:00:00+13:00').toISOString()).toBe('2026-12-01T20:00:00.000Z');
    expect(isoInstant.safeParse('2026-12-02T09:00:00').success).toBe(false);
    expect(isoInstant.safeParse('2026-13-40T09:00:00Z').success).toBe(false);
  });
  it('page sizes are bounded', () => {
    expect(pageSize.parse(undefined)).toBe(25);
    expect(pageSize.safeParse('201').success).toBe(false);
    expect(pageSize.safeParse('-1').success).toBe(false);
  });
});

describe('e-mail layout', () => {
  it('escapes what people typed and keeps a plain-text part with the same words', () => {
    const { html, text } = renderEmail('Fault on <Laser A>', {
      paragraphs: ['Reported by <script>alert(1)</script>'],
      action: { label: 'Open the machine page', url: 'http://127.0.0.1:4321/m/laser-a?a=1&b=2' },
    });
    expect(html).not.toContain('<script>');
    expect(html).toContain('&lt;script&gt;');
    expect(html).toContain('a=1&amp;b=2');
    expect(text).toContain('Reported by <script>alert(1)</script>');
    expect(text).toContain('Open the machine page: http://127.0.0.1:4321/m/laser-a?a=1&b=2');
  });
});
