/** An error with the HTTP status to answer; the message is sent to the client (for status < 500). */
export class HttpError extends Error {
  override name = 'HttpError';
  constructor(
    readonly status: number,
    message: string,
    /** Extra response headers, e.g. `Retry-After` or `WWW-Authenticate`. */
    readonly headers: Readonly<Record<string, string>> = {},
  ) {
    super(message);
  }
}
