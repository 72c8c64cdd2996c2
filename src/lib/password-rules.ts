/**
 * Password rules for new accounts, after common practice (NIST SP 800-63B §5.1.1.2: at least 8
 * characters, no composition rules, refuse known-common and context-specific choices). We ask for 10.
 */
export const PASSWORD_MIN = 10;
export const PASSWORD_MAX = 200;

const COMMON = new Set([
  'password', 'password1', 'password12', 'password123', 'passw0rd', '1234567890', '12345678910', 'qwertyuiop',
  'qwerty1234', 'iloveyou12', 'letmein123', 'welcome123', 'abc1234567', 'administrator', 'changeme123',
  '0987654321', '1111111111', '1q2w3e4r5t', 'asdfghjkl1', 'lasercutter', 'laserlaser', 'makerspace',
]);

/** Returns a sentence saying what is wrong, or null when the password is acceptable. */
export function passwordProblem(password: string, context: { email?: string; name?: string } = {}): string | null {
  if (password.length < PASSWORD_MIN) return `Use at least ${PASSWORD_MIN} characters.`;
  if (password.length > PASSWORD_MAX) return `Use at most ${PASSWORD_MAX} characters.`;
  const lower = password.toLowerCase();
  if (COMMON.has(lower)) return 'That password is too common; choose a longer phrase of your own.';
  if (/^(.)\1+$/.test(password)) return 'Do not repeat one character; choose a phrase of your own.';
  const local = context.email?.split('@')[0]?.toLowerCase();
  if (local && local.length >= 4 && lower.includes(local)) return 'Do not use your e-mail address in your password.';
  if (context.email && lower === context.email.toLowerCase()) return 'Do not use your e-mail address as your password.';
  return null;
}
