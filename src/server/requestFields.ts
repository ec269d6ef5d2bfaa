import type { Request } from 'express';
import { HttpError } from './HttpError.ts';
import type { ServerContext } from './context.ts';
import type { ServiceControl } from './serviceControl.ts';

/** Checks of query strings, path parameters and JSON bodies; every failure is a 400 naming the field. */

const ID = /^[A-Za-z0-9][A-Za-z0-9_-]{0,63}$/;

/** A required time bound (a local date YYYY-MM-DD or an ISO 8601 time), as text for parseTimeBound. */
export function queryBound(req: Request, name: string): string {
  const v = req.query[name];
  if (typeof v !== 'string' || v === '') throw new HttpError(400, `query parameter ${name} is required (a date YYYY-MM-DD or an ISO 8601 time)`);
  if (v.length > 64) throw new HttpError(400, `query parameter ${name} is too long (at most 64 characters)`);
  return v;
}

/** An optional id (letters, digits, - and _). */
export function queryId(req: Request, name: string): string | undefined {
  const v = req.query[name];
  if (v === undefined || v === '') return undefined;
  if (typeof v !== 'string' || !ID.test(v)) throw new HttpError(400, `query parameter ${name} must be an id (letters, digits, - and _)`);
  return v;
}

/** An optional whole number in min..max inclusive. */
export function queryInt(req: Request, name: string, min: number, max: number): number | undefined {
  const v = req.query[name];
  if (v === undefined || v === '') return undefined;
  const n = typeof v === 'string' && /^-?\d{1,9}$/.test(v) ? Number(v) : NaN;
  if (!(Number.isInteger(n) && n >= min && n <= max)) throw new HttpError(400, `query parameter ${name} must be a whole number from ${min} to ${max}`);
  return n;
}

/** An optional choice among `allowed`. */
export function queryChoice<T extends string>(req: Request, name: string, allowed: readonly T[]): T | undefined {
  const v = req.query[name];
  if (v === undefined || v === '') return undefined;
  if (typeof v !== 'string' || !(allowed as readonly string[]).includes(v)) throw new HttpError(400, `query parameter ${name} must be one of ${allowed.join(', ')}`);
  return v as T;
}

/** The parsed JSON body, which must be an object. */
export function jsonObject(req: Request): Record<string, unknown> {
  const body: unknown = req.body;
  if (body === undefined) throw new HttpError(400, 'request body must be a JSON object sent with Content-Type: application/json');
  if (typeof body !== 'object' || body === null || Array.isArray(body)) throw new HttpError(400, 'request body must be a JSON object');
  return body as Record<string, unknown>;
}

/** The running service's control, or 503 when the app runs without one. */
export function serviceOf(ctx: ServerContext): ServiceControl {
  if (!ctx.control) throw new HttpError(503, 'this server runs without a counting service: zones and learning are not available');
  return ctx.control;
}

/** The `:id` path parameter, a camera of the running service (else 404). */
export function cameraParam(req: Request, control: ServiceControl): string {
  const id = req.params.id;
  if (typeof id !== 'string' || !ID.test(id) || control.zones(id) === undefined) throw new HttpError(404, `no camera ${JSON.stringify(String(id).slice(0, 64))}`);
  return id;
}
