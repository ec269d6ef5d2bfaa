import express, { type NextFunction, type Request, type RequestHandler, type Response } from 'express';
import { HttpError } from './HttpError.ts';

/** Largest JSON body accepted by the change routes. */
export const BODY_LIMIT = '256kb';

/** Deepest nesting of objects and lists a body may have (a zone with perspective boxes needs 5). */
export const MAX_BODY_DEPTH = 32;

/**
 * The JSON body parser of the change routes: at most {@link BODY_LIMIT} (413 beyond) and
 * {@link MAX_BODY_DEPTH} levels of nesting (400 beyond). JSON.parse itself takes deep nesting,
 * but any recursive walk of the value afterwards (validation, JSON.stringify in a message) would
 * overflow the stack, so the depth is checked first, iteratively.
 */
export function jsonBody(): RequestHandler {
  const parse = express.json({ limit: BODY_LIMIT });
  return (req: Request, res: Response, next: NextFunction) => {
    parse(req, res, (error?: unknown) => {
      if (error) next(error);
      else if (jsonDepth(req.body, MAX_BODY_DEPTH) > MAX_BODY_DEPTH) next(new HttpError(400, `request body is nested too deeply (more than ${MAX_BODY_DEPTH} levels of objects and lists)`));
      else next();
    });
  };
}

/** Nesting depth of a parsed JSON value (a scalar is 0, `[]` and `{}` are 1), counted up to `stop` + 1. */
export function jsonDepth(value: unknown, stop = Infinity): number {
  let deepest = 0;
  const stack: [unknown, number][] = [[value, 0]];
  while (stack.length > 0) {
    const [v, depth] = stack.pop()!;
    if (typeof v !== 'object' || v === null) continue;
    const d = depth + 1;
    if (d > deepest) deepest = d;
    if (deepest > stop) return deepest;
    for (const child of Array.isArray(v) ? v : Object.values(v)) if (typeof child === 'object' && child !== null) stack.push([child, d]);
  }
  return deepest;
}
