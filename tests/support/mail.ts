/**
 * The local mail fake's inbox (maildev's REST API), read the same way by every test. Each wait makes the worker's
 * held-back e-mail jobs due first (support/queue.ts), so a message whose send is waiting out a retry delay arrives now.
 */
import { makeDue } from './queue';
import { waitUntil } from './wait';

function need(name: string): string {
  const v = process.env[name];
  if (!v) throw new Error(`${name} is not set: run the tests through \`npm test\`.`);
  return v;
}

const webBase = () => process.env.MAILDEV_URL ?? `http://127.0.0.1:${need('TEST_MAIL_WEB_PORT')}`;

/** A message in the mail fake's inbox. */
export interface Mail {
  id: string;
  /** when maildev received it */
  time: string;
  subject: string;
  to: { address: string; name?: string }[];
  text: string;
  html?: string;
  date?: string;
  attachments?: { filename: string; contentType: string; generatedFileName?: string }[];
}

/** Every message in the inbox (the fake keeps earlier runs' and files' mail: match on something of your own). */
export async function inbox(): Promise<Mail[]> {
  const res = await fetch(new URL('/api/email', webBase()));
  if (!res.ok) throw new Error(`maildev answered ${res.status}`);
  return (await res.json()) as Mail[];
}

/** Matches a message to this address. */
export const to = (address: string) => (m: Mail) => m.to.some((t) => t.address.toLowerCase() === address.toLowerCase());

/**
 * The newest message matching `match` (received after `since`, when given), waiting until one arrives. Polls the
 * inbox; a maildev that is restarting counts as "not yet".
 */
export async function waitForMail(match: (m: Mail) => boolean, options: { since?: Date; timeoutMs?: number } = {}): Promise<Mail> {
  const after = options.since ? options.since.getTime() - 1000 : -Infinity;
  return waitUntil(
    'the expected e-mail arriving in the mail fake',
    async () => {
      await makeDue('mail.send');
      const found = (await inbox()).filter((m) => new Date(m.time).getTime() >= after && match(m)).sort((a, b) => new Date(a.time).getTime() - new Date(b.time).getTime());
      return found[found.length - 1];
    },
    { timeoutMs: options.timeoutMs ?? 60_000, intervalMs: 250 },
  );
}

/** The text of one attachment of a message. */
export async function attachment(mailId: string, fileName: string): Promise<string> {
  const res = await fetch(new URL(`/api/email/${mailId}/attachment/${encodeURIComponent(fileName)}`, webBase()));
  return res.text();
}
