/** A failed delivery of an alert; `retry` says whether trying again may help. */
export class DeliveryError extends Error {
  override name = 'DeliveryError';
  constructor(
    message: string,
    /** True for a timeout, a refused connection, HTTP 408, 429 or 5xx, an SMTP 4xx reply; false when the receiver refused the message for good. */
    readonly retry: boolean,
    options?: ErrorOptions,
  ) {
    super(message, options);
  }
}
