/**
 * Outgoing e-mail. Modules call queueMail inside their transaction; the worker sends through SMTP
 * (maildev locally) with retries, so a mail server that is down delays a message but never loses it.
 */
import nodemailer, { type Transporter } from 'nodemailer';
import type { Knex } from 'knex';
import { env } from './env';
import { enqueue } from './jobs';
import { log } from './log';
import { renderEmail, type EmailContent } from '@lib/email-layout';

export interface MailAttachment {
  filename: string;
  contentType: string;
  /** base64 */
  content: string;
}

export interface MailMessage {
  to: string;
  subject: string;
  text: string;
  html: string;
  attachments?: MailAttachment[];
}

/** Queue a message built from the shared layout (HTML and plain text). */
export async function queueMail(trx: Knex.Transaction | null, to: string, subject: string, content: EmailContent, attachments?: MailAttachment[]): Promise<void> {
  await enqueue(trx, 'mail.send', renderedMail(to, subject, content, attachments));
}

/** The message queueMail queues: the house layout rendered to HTML and text. */
export function renderedMail(to: string, subject: string, content: EmailContent, attachments?: MailAttachment[]): MailMessage {
  const { html, text } = renderEmail(subject, content);
  return { to, subject, html, text, ...(attachments ? { attachments } : {}) };
}

let transport: Transporter | undefined;

function smtp(): Transporter {
  const e = env();
  transport ??= nodemailer.createTransport({
    host: e.SMTP_HOST,
    port: e.SMTP_PORT,
    // SMTP_TLS: tls = implicit TLS (465); starttls = upgrade and refuse to go on without it; none = plain (the local fake)
    secure: e.SMTP_TLS === 'tls',
    requireTLS: e.SMTP_TLS === 'starttls',
    ignoreTLS: e.SMTP_TLS === 'none',
    ...(e.SMTP_USER ? { auth: { user: e.SMTP_USER, pass: e.SMTP_PASSWORD } } : {}),
    connectionTimeout: 5000,
    greetingTimeout: 5000,
    socketTimeout: 10000,
  });
  return transport;
}

/** Sends one message now; throws when the server is unreachable (the worker retries). */
export async function sendMailNow(message: MailMessage): Promise<void> {
  const started = performance.now();
  const sent = await smtp().sendMail({
    from: env().MAIL_FROM,
    to: message.to,
    subject: message.subject,
    text: message.text,
    html: message.html,
    attachments: message.attachments?.map((a) => ({
      filename: a.filename,
      contentType: a.contentType,
      content: Buffer.from(a.content, 'base64'),
    })),
  });
  // the provider call, without the server's credentials or the message body
  log.info({ event: 'provider_call', provider: 'mail', outcome: 'sent', messageId: sent.messageId, attachments: message.attachments?.length ?? 0, durationMs: Math.round(performance.now() - started) }, 'mail sent');
}
