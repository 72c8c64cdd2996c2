/**
 * Conventions of every JSON API route: errors as
 * {"error": {"code", "message", "fields"?}} with a 4xx status, never a stack trace.
 */
import { createHash } from 'node:crypto';
import type { APIContext, APIRoute } from 'astro';
import { z, type ZodType } from '@lib/zod';
import { hasAnyRole, type Role } from '@lib/roles';
import type { SignedInPerson } from '@lib/signed-in-person';
import { DomainError, type ErrorKind } from './errors';
import { log } from './log';

export { DomainError };

/** The one place a domain error's kind becomes an HTTP status. */
export const STATUS_OF_KIND: Record<ErrorKind, number> = {
  bad_request: 400,
  unauthenticated: 401,
  payment_required: 402,
  forbidden: 403,
  not_found: 404,
  conflict: 409,
  gone: 410,
  too_large: 413,
  unsupported_type: 415,
  invalid: 422,
  too_many: 429,
  unavailable: 503,
};

/** The status a page answers with for a domain error it shows in the page. */
export function statusOf(err: DomainError): number {
  return STATUS_OF_KIND[err.kind];
}

/** The answer to a domain error: its status, with Retry-After and WWW-Authenticate from its hints. */
export function domainErrorResponse(err: DomainError): Response {
  const headers: Record<string, string> = {};
  if (err.hints.retryAfterSeconds !== undefined) headers['retry-after'] = String(err.hints.retryAfterSeconds);
  if (err.hints.challenge !== undefined) headers['www-authenticate'] = err.hints.challenge;
  return errorResponse(statusOf(err), err.code, err.message, err.fields, Object.keys(headers).length ? headers : undefined);
}

const NO_STORE = { 'cache-control': 'no-store' };

export function json(data: unknown, status = 200, headers: Record<string, string> = {}): Response {
  return new Response(JSON.stringify(data), {
    status,
    headers: { 'content-type': 'application/json; charset=utf-8', ...NO_STORE, ...headers },
  });
}

/**
 * A JSON answer the browser may keep and ask about again (private, revalidated each time): its ETag is a hash of the
 * body, and a request whose If-None-Match names it gets 304 with no body.
 */
export function jsonWithEtag(request: Request, data: unknown): Response {
  const body = JSON.stringify(data);
  const etag = `W/"${createHash('sha256').update(body).digest('base64url').slice(0, 32)}"`;
  const headers = { 'cache-control': 'private, no-cache', etag, vary: 'Cookie' };
  const asked = request.headers.get('if-none-match');
  if (asked && asked.split(',').some((t) => t.trim() === etag)) return new Response(null, { status: 304, headers });
  return new Response(body, { status: 200, headers: { 'content-type': 'application/json; charset=utf-8', ...headers } });
}

export function errorResponse(status: number, code: string, message: string, fields?: Record<string, string>, headers?: Record<string, string>): Response {
  return json({ error: { code, message, ...(fields ? { fields } : {}) } }, status, headers);
}

/** Field messages keyed by dotted path, from a zod error. */
export function fieldMessages(error: z.ZodError): Record<string, string> {
  const fields: Record<string, string> = {};
  for (const issue of error.issues) {
    const key = issue.path.length ? issue.path.map(String).join('.') : '_';
    fields[key] ??= issue.message;
  }
  return fields;
}

/** Wraps a route: maps domain errors (by kind) and validation errors to their answers; anything else is a logged 500 without details. */
export function route(handler: (ctx: APIContext) => Promise<Response> | Response): APIRoute {
  return async (ctx) => {
    try {
      return await handler(ctx);
    } catch (err) {
      if (err instanceof DomainError) return domainErrorResponse(err);
      if (err instanceof z.ZodError) return errorResponse(422, 'invalid', 'Some fields are not valid; see fields.', fieldMessages(err));
      const requestId = ctx.locals.requestId;
      log.error({ event: 'error', requestId, method: ctx.request.method, route: ctx.routePattern, err }, 'request failed');
      return errorResponse(500, 'internal_error', `Something went wrong on our side. Try again; if it persists, tell a steward and quote reference ${requestId}.`, undefined, { 'x-request-id': requestId });
    }
  };
}

const MAX_JSON_BYTES = 256 * 1024;

/** Reads and validates a JSON body: 415 when it is not JSON, 413 when too large, 400 when unparsable, 422 when invalid. */
export async function readJson<T>(request: Request, schema: ZodType<T>): Promise<T> {
  const type = request.headers.get('content-type') ?? '';
  if (!/^application\/json\b/i.test(type)) throw new DomainError('unsupported_type', 'unsupported_media_type', 'Send the body as JSON (Content-Type: application/json).');
  const declared = Number(request.headers.get('content-length') ?? '0');
  if (declared > MAX_JSON_BYTES) throw new DomainError('too_large', 'body_too_large', `The body is larger than ${MAX_JSON_BYTES / 1024} KB.`);
  const text = await readLimited(request, MAX_JSON_BYTES);
  let data: unknown;
  try {
    data = JSON.parse(text);
  } catch {
    throw new DomainError('bad_request', 'bad_json', 'The body is not valid JSON.');
  }
  return parseWith(schema, data);
}

async function readLimited(request: Request, limit: number): Promise<string> {
  if (!request.body) return '';
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let size = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    size += value.byteLength;
    if (size > limit) {
      await reader.cancel();
      throw new DomainError('too_large', 'body_too_large', `The body is larger than ${limit / 1024} KB.`);
    }
    chunks.push(value);
  }
  return Buffer.concat(chunks).toString('utf8');
}

/** A posted form: text fields as strings ('' when absent or a file), files, and every text field. */
export interface PostedForm {
  /** false when the body could not be read as a form (every field then reads as empty) */
  readonly ok: boolean;
  text(name: string): string;
  /** a text field as sent, undefined when it is absent (or a file) */
  value(name: string): string | undefined;
  files(...names: string[]): File[];
  entries(): [string, string][];
}

/** A form's text without U+0000, which PostgreSQL's text cannot store and no one types: a page re-shows what was kept. */
const withoutNul = (v: string) => (v.includes('\u0000') ? v.replaceAll('\u0000', '') : v);

function postedForm(form: FormData | null): PostedForm {
  return {
    ok: form !== null,
    text: (name) => {
      const v = form?.get(name);
      return typeof v === 'string' ? withoutNul(v) : '';
    },
    value: (name) => {
      const v = form?.get(name);
      return typeof v === 'string' ? withoutNul(v) : undefined;
    },
    files: (...names) => names.flatMap((n) => form?.getAll(n) ?? []).filter((f): f is File => f instanceof File && f.size > 0),
    entries: () => [...(form?.entries() ?? [])].flatMap(([k, v]) => (typeof v === 'string' ? [[withoutNul(k), withoutNul(v)] as [string, string]] : [])),
  };
}

/** A page's posted form (urlencoded or multipart); never throws: an unreadable body reads as an empty form (`ok` false). */
export async function readForm(request: Request): Promise<PostedForm> {
  return postedForm(await request.formData().catch(() => null));
}

/**
 * An API route's multipart body: 415 when it is not multipart/form-data, 413 when it declares more than `maxBytes`,
 * 400 when it cannot be read.
 */
export async function readMultipart(request: Request, opts: { maxBytes: number; tooLarge: string; what: string }): Promise<PostedForm> {
  if (!/^multipart\/form-data\b/i.test(request.headers.get('content-type') ?? '')) {
    throw new DomainError('unsupported_type', 'unsupported_media_type', `Send ${opts.what} as multipart/form-data.`);
  }
  if (Number(request.headers.get('content-length') ?? '0') > opts.maxBytes) throw new DomainError('too_large', 'file_too_large', opts.tooLarge);
  try {
    return postedForm(await request.formData());
  } catch {
    throw new DomainError('bad_request', 'bad_form', 'The form data could not be read.');
  }
}

export function parseWith<T>(schema: ZodType<T>, data: unknown): T {
  const nul = nulAt(data);
  if (nul !== null) throw new DomainError('invalid', 'invalid', 'Some fields are not valid; see fields.', { [nul]: 'Text cannot hold the NUL character (U+0000).' });
  const parsed = schema.safeParse(data);
  if (!parsed.success) throw new DomainError('invalid', 'invalid', 'Some fields are not valid; see fields.', fieldMessages(parsed.error));
  return parsed.data;
}

/**
 * The dotted path (as fieldMessages writes it; `_` for the whole value) of the first string, key or value, that holds
 * U+0000, or null. PostgreSQL's text cannot store that character: such input is refused here, for every route, rather
 * than failing in the database.
 */
function nulAt(value: unknown, path: readonly string[] = [], depth = 0): string | null {
  const here = () => (path.length ? path.join('.') : '_');
  if (typeof value === 'string') return value.includes('\u0000') ? here() : null;
  if (typeof value !== 'object' || value === null || depth > 64) return null;
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) {
      const found = nulAt(value[i], [...path, String(i)], depth + 1);
      if (found !== null) return found;
    }
    return null;
  }
  for (const [k, v] of Object.entries(value)) {
    if (k.includes('\u0000')) return here();
    const found = nulAt(v, [...path, k], depth + 1);
    if (found !== null) return found;
  }
  return null;
}

/** Validates the query string (every value a string; repeated keys keep the last). */
export function readQuery<T>(url: URL, schema: ZodType<T>): T {
  return parseWith(schema, Object.fromEntries(url.searchParams.entries()));
}

export function requireSignedIn(locals: App.Locals): SignedInPerson {
  if (!locals.person) throw new DomainError('unauthenticated', 'sign_in_required', 'Sign in first.');
  return locals.person;
}

export function requireRole(locals: App.Locals, ...roles: Role[]): SignedInPerson {
  const person = requireSignedIn(locals);
  if (!hasAnyRole(person.roles, roles)) {
    throw new DomainError('forbidden', 'forbidden', `This needs the ${roles.join(' or ')} role.`);
  }
  return person;
}

const UUID_RE = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** Is this an id (a UUID) at all? The one check every route and page uses before a look-up. */
export function isId(value: unknown): value is string {
  return typeof value === 'string' && UUID_RE.test(value);
}

/** A route's id parameter: a malformed id is simply not found (404 not_found), never a database error. */
export function idParam(value: string | undefined, what = 'record'): string {
  if (!isId(value)) throw new DomainError('not_found', 'not_found', `No such ${what}.`);
  return value.toLowerCase();
}
