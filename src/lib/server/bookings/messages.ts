/** What a booking's owner is sent: the confirmation and cancellation e-mails and their calendar (.ics) files. */
import type { Knex } from 'knex';
import { queueMail, renderedMail, sendMailNow, type MailAttachment } from '@lib/server/mail';
import { db } from '@lib/server/db';
import { enqueue, type QueuedJob } from '@lib/server/jobs';
import { env } from '@lib/server/env';
import { buildIcs } from '@lib/ics';
import { toBooking, type Booking, type Conn, type MachineRow, type Row } from './records';
import { siteSettings } from './gate';
import { getSettings, siteLocale } from '@lib/server/settings';
import { siteFormat } from '@lib/format';

export async function formatRange(q: Conn, b: { startsAt: Date; endsAt: Date }, tz: string): Promise<string> {
  return siteFormat(await siteLocale(q), tz).longRange(b.startsAt, b.endsAt);
}

export function bookingIcs(b: Booking, machine: { name: string }, siteName: string, cancelled = false): string {
  return buildIcs(`${siteName} bookings`, [
    {
      id: b.id,
      startsAt: b.startsAt,
      endsAt: b.endsAt,
      summary: b.kind === 'class' ? `${machine.name}: class ${b.courseName}` : `${machine.name} booking`,
      description: 'Check in at the machine within 15 minutes of the start, or the booking becomes a no-show. Never leave a running job unattended.',
      location: `${machine.name}, ${siteName}`,
      cancelled,
    },
  ], { method: 'publish' });
}

/** What a booking's calendar event needs: the row's fields, with the sequence the message carries. */
export interface CalendarBooking {
  id: string; kind: string; course_name: string | null; starts_at: Date; ends_at: Date; calendar_sequence: number;
}

/**
 * The .ics attached to a cancellation or bump e-mail: the confirmation's UID, METHOD:CANCEL, STATUS:CANCELLED and
 * the booking's raised SEQUENCE, so the person's calendar app removes (or strikes through) the event.
 */
export function cancellationAttachment(r: CalendarBooking, machineName: string, siteName: string): MailAttachment {
  const ics = buildIcs(`${siteName} bookings`, [
    {
      id: r.id,
      startsAt: r.starts_at,
      endsAt: r.ends_at,
      summary: r.kind === 'class' ? `${machineName}: class ${r.course_name}` : `${machineName} booking`,
      location: `${machineName}, ${siteName}`,
      cancelled: true,
      sequence: r.calendar_sequence,
    },
  ], { method: 'cancel' });
  return { filename: 'booking-cancelled.ics', contentType: 'text/calendar; charset=utf-8; method=CANCEL', content: Buffer.from(ics, 'utf8').toString('base64') };
}

/** The SQL that raises a booking's calendar sequence by one (in the same UPDATE that cancels or bumps it). */
export const raiseSequence = (trx: Conn) => trx.raw('calendar_sequence + 1');

/** E-mails the owner of a cancelled booking (in the caller's transaction), with the cancellation .ics attached. */
export async function sendCancellation(trx: Knex.Transaction, r: Row, why: string): Promise<void> {
  if (r.kind === 'hold') return;
  const [person, machine, site] = [
    await trx('people').where({ id: r.person_id }).first('email', 'name'),
    await trx('machines').where({ id: r.machine_id }).first('name'),
    await siteSettings(trx),
  ];
  if (!person || !machine) return;
  const range = await formatRange(trx, { startsAt: r.starts_at, endsAt: r.ends_at }, site.timeZone);
  await queueMail(
    trx,
    person.email,
    `Booking cancelled: ${machine.name}, ${range}`,
    {
      greeting: `Hello ${person.name},`,
      paragraphs: [
        `Your ${r.kind === 'class' ? `class block (${r.course_name ?? 'class'})` : 'booking'} on ${machine.name} on ${range} (${site.timeZone}) is cancelled.`,
        why,
        'The attached calendar file removes it from your calendar.',
      ],
      action: { label: 'See your bookings', url: `${env().PUBLIC_BASE_URL}/book` },
    },
    [cancellationAttachment(r, machine.name, site.name)],
  );
}

/** E-mails the booking's confirmation with its .ics (queued in the caller's transaction); `known` saves reading the person. */
export async function sendConfirmation(trx: Knex.Transaction, personId: string, b: Booking, machine: MachineRow, tz: string, siteName: string, known?: { email: string; name: string } | null): Promise<void> {
  const person = known ?? (await trx('people').where({ id: personId }).first('email', 'name'));
  if (!person) return;
  const m = confirmationMail(b, machine, person, { timeZone: tz, name: siteName, locale: await siteLocale(trx) });
  await queueMail(trx, m.to, m.subject, m.content, m.attachments);
}

/** The confirmation e-mail of a booking: subject, text and its .ics (PUBLISH). Pure. */
function confirmationMail(b: Booking, machine: { name: string }, person: { email: string; name: string }, site: { timeZone: string; name: string; locale: string }) {
  const range = siteFormat(site.locale, site.timeZone).longRange(b.startsAt, b.endsAt);
  const ics = bookingIcs(b, machine, site.name);
  return {
    to: person.email,
    subject: `Booking confirmed: ${machine.name}, ${range}`,
    content: {
      greeting: `Hello ${person.name},`,
      paragraphs: [
        `${machine.name} is booked for you on ${range} (${site.timeZone}).`,
        'Check in at the machine within 15 minutes of the start, or the booking becomes a no-show and the time is released.',
        'The attached calendar file adds the booking to your calendar.',
      ],
      action: { label: 'See your bookings', url: `${env().PUBLIC_BASE_URL}/book` },
      footnote: 'Class 4 laser: keep the extractor and air assist on and never leave a running job unattended.',
    },
    attachments: [{ filename: 'booking.ics', contentType: 'text/calendar; charset=utf-8; method=PUBLISH', content: Buffer.from(ics, 'utf8').toString('base64') }],
  };
}

/**
 * Records, in the booking's transaction, that its confirmation is to be sent: the worker builds the e-mail and its
 * .ics (sendBookingConfirmation), so the request and its locks do not wait for that work.
 */
export async function queueConfirmation(trx: Knex.Transaction, bookingId: string): Promise<void> {
  await enqueue(trx, 'booking.confirm', { bookingId });
}

/** queueConfirmation's job, for enqueueAll with the other jobs of a transaction. */
export function confirmationJob(bookingId: string): QueuedJob {
  return { name: 'booking.confirm', data: { bookingId } };
}

/**
 * Worker: builds and sends a booking's confirmation (the same e-mail as sendConfirmation). The message is tried at
 * once; when the mail server does not take it, it is queued as an ordinary `mail.send` job with that queue's
 * retries. A booking gone by then (deleted) gets no message.
 */
export async function sendBookingConfirmation(bookingId: string): Promise<void> {
  const row = (await db()('bookings as b').join('machines as m', 'm.id', 'b.machine_id').join('people as p', 'p.id', 'b.person_id')
    .where('b.id', bookingId).first('b.*', 'm.name as machine_name', 'p.email as person_email', 'p.name as person_name')) as (Row & { machine_name: string; person_email: string; person_name: string }) | undefined;
  if (!row) return;
  const settings = await getSettings();
  const m = confirmationMail(toBooking(row), { name: row.machine_name }, { email: row.person_email, name: row.person_name }, settings);
  const message = renderedMail(m.to, m.subject, m.content, m.attachments);
  try {
    await sendMailNow(message);
  } catch {
    await enqueue(null, 'mail.send', message);
  }
}
