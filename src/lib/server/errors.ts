/**
 * The one error type that domain modules throw: a code the API returns, a message a person can act on, and the
 * HTTP status the web layer (`route()` in http.ts) answers with. Infrastructure: it imports nothing.
 */
export class HttpError extends Error {
  constructor(
    public readonly status: number,
    public readonly code: string,
    message: string,
    public readonly fields?: Record<string, string>,
    public readonly headers?: Record<string, string>,
  ) {
    super(message);
  }
}
