/**
 * The one error type that domain modules throw: a kind (what went wrong, in the domain's words), a code the API
 * returns, a message a person can act on, and the fields it concerns. The web layer maps the kind to an HTTP status
 * once (`route()` in http.ts); domain code never names a status, and callers that need to know what went wrong read
 * `kind` or `code`. Infrastructure: it imports nothing.
 */
export type ErrorKind =
  /** the request itself could not be read (not JSON, a form that would not parse) */
  | 'bad_request'
  /** nobody is signed in */
  | 'unauthenticated'
  /** a card or a settled balance is needed first */
  | 'payment_required'
  /** signed in, but not allowed */
  | 'forbidden'
  /** no such record (a malformed id is not found too) */
  | 'not_found'
  /** the record's state does not allow it now (taken, already done, in use) */
  | 'conflict'
  /** it existed but is gone for good (an expired link) */
  | 'gone'
  /** the body or a file is larger than allowed */
  | 'too_large'
  /** the body or a file is not of a type we take */
  | 'unsupported_type'
  /** some fields are not valid (see fields) */
  | 'invalid'
  /** too many tries: wait (retryAfterSeconds) */
  | 'too_many'
  /** a service we depend on cannot be reached just now */
  | 'unavailable';

/** What a caller may do next, when the kind alone does not say. */
export interface ErrorHints {
  /** with `too_many`: how long to wait before trying again */
  retryAfterSeconds?: number;
  /** with `unauthenticated`: the credentials scheme that is expected (e.g. `Bearer` for a device token) */
  challenge?: string;
}

export class DomainError extends Error {
  constructor(
    public readonly kind: ErrorKind,
    public readonly code: string,
    message: string,
    public readonly fields?: Record<string, string>,
    public readonly hints: ErrorHints = {},
  ) {
    super(message);
    this.name = 'DomainError';
  }
}

const KIND_OF_STATUS: Record<number, ErrorKind> = {
  400: 'bad_request', 401: 'unauthenticated', 402: 'payment_required', 403: 'forbidden', 404: 'not_found', 409: 'conflict',
  410: 'gone', 413: 'too_large', 415: 'unsupported_type', 422: 'invalid', 429: 'too_many', 503: 'unavailable',
};

/**
 * @deprecated Throw a DomainError with a kind. Kept only so code written before the change still merges and runs;
 * the throw sites are rewritten mechanically (codemod-domain-errors.mjs) and this goes once none is left.
 */
export class HttpError extends DomainError {
  constructor(
    public readonly status: number,
    code: string,
    message: string,
    fields?: Record<string, string>,
    headers?: Record<string, string>,
  ) {
    const retry = headers?.['retry-after'];
    const challenge = headers?.['www-authenticate'];
    super(KIND_OF_STATUS[status] ?? 'invalid', code, message, fields, {
      ...(retry === undefined ? {} : { retryAfterSeconds: Number(retry) }),
      ...(challenge === undefined ? {} : { challenge }),
    });
  }
}
