/**
 * The local mail fake's inbox (maildev's REST API), read the same way by every test. A wait reads only the messages
 * that arrived since this test process last looked (the inbox holds every file's mail), and makes due only the
 * worker's held-back e-mail jobs that would give the message waited for (support/queue.ts), so a message whose send
 * is waiting out a retry delay arrives now without hurrying anyone else's.
 */
import { makeDue } from './queue';
import { testDb } from './db';
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

async function getJson<T>(pathAndQuery: string): Promise<T> {
  const res = await fetch(new URL(pathAndQuery, webBase()));
  if (!res.ok) throw new Error(`maildev answered ${res.status}`);
  return (await res.json()) as T;
}

/**
 * The messages read so far, in maildev's arrival order, from position `base` of the inbox on. maildev keeps its inbox
 * in arrival order and appends new mail, so only the messages from the last one read on are fetched (`?skip=`); when
 * that one is not where it was (a restarted maildev reloads its folder in another order), the whole inbox is read
 * again. The first look of a process starts at the mail that arrived since the process started: every message a test
 * waits for is one its own process caused (the inbox holds the mail of every file of the run before it).
 */
let seen: Mail[] = [];
let base = 0;
/** when this process started, less a margin: older mail is never what one of its tests waits for */
const STARTED_MS = performance.timeOrigin - 5_000;

async function readInbox(): Promise<Mail[]> {
  if (seen.length) {
    const tail = await getJson<Mail[]>(`/api/email?skip=${base + seen.length - 1}`);
    if (tail[0]?.id === seen[seen.length - 1]!.id) {
      seen = [...seen, ...tail.slice(1)];
      return seen;
    }
    base = 0;
    seen = await getJson<Mail[]>('/api/email');
    return seen;
  }
  // the first look: back from the newest, a page at a time, until a message from before this process started
  const { total } = await getJson<{ total: number }>('/api/email/summary?limit=1');
  let from = Math.max(0, total - 50);
  for (;;) {
    const page = await getJson<Mail[]>(`/api/email?skip=${from}`);
    if (from === 0 || (page[0] && new Date(page[0].time).getTime() < STARTED_MS)) {
      base = from;
      seen = page;
      return seen;
    }
    from = Math.max(0, from - 200);
  }
}

/** The messages in the inbox since this process started (the run's other files' mail too: match on something of your own). */
export async function inbox(): Promise<Mail[]> {
  return [...(await readInbox())];
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
      await makeDueFor(match);
      const found = (await readInbox()).filter((m) => new Date(m.time).getTime() >= after && match(m)).sort((a, b) => new Date(a.time).getTime() - new Date(b.time).getTime());
      return found[found.length - 1];
    },
    { timeoutMs: options.timeoutMs ?? 60_000, intervalMs: 250 },
  );
}

/**
 * The e-mail jobs held back by a retry delay whose message `match` would accept (the job's message read as the mail
 * it would become) are made due now; other files' held-back mail keeps its place.
 */
async function makeDueFor(match: (m: Mail) => boolean): Promise<void> {
  const held = (await testDb()
    .withSchema('pgboss')
    .table('job')
    .where({ name: 'mail.send' })
    .whereIn('state', ['created', 'retry'])
    .where('start_after', '>', testDb().fn.now())
    .select('id', 'data')) as { id: string; data: { to: string; subject: string; text: string; html?: string; attachments?: { filename: string; contentType: string }[] } }[];
  const wanted = held.filter(({ id, data }) => {
    try {
      const attachments = data.attachments?.map((a) => ({ filename: a.filename, contentType: a.contentType }));
      return match({ id, time: new Date().toISOString(), subject: data.subject, to: [{ address: data.to }], text: data.text, html: data.html, ...(attachments ? { attachments } : {}) });
    } catch {
      return true; // a check that cannot read the job's message: make it due rather than miss it
    }
  });
  if (wanted.length) await makeDue('mail.send', wanted.map((j) => j.id));
}

/** The text of one attachment of a message. */
export async function attachment(mailId: string, fileName: string): Promise<string> {
  const res = await fetch(new URL(`/api/email/${mailId}/attachment/${encodeURIComponent(fileName)}`, webBase()));
  return res.text();
}
