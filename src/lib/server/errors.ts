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
