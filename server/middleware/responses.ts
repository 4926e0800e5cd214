import type { NextFunction, Request, Response } from 'express';
import type { z } from 'zod';
import { ruleFor } from '../../shared/protocol/roles.js';
import {
  ApiErrorBody,
  RESPONSES,
  responseSpec,
  type JsonRouteKey,
  type ResponseKey,
} from '../../shared/protocol/responses.js';

/**
 * What a handler may pass for a response typed by the contract: the schema's type, except that a
 * timestamp or day may still be a `Date` (JSON turns it into the string the schema names).
 */
export type Wire<T> = T extends string
  ? T | Date
  : T extends readonly (infer U)[]
    ? readonly Wire<U>[]
    : T extends object
      ? { [K in keyof T]: Wire<T[K]> }
      : T;

/**
 * Sends `value` as the JSON answer of route `key`, typed by its response schema in
 * `shared/protocol/responses.ts` (a drift between the service and the contract fails typecheck).
 */
export function reply<K extends JsonRouteKey>(
  res: Response,
  key: K,
  value: Wire<z.input<(typeof RESPONSES)[K]>>,
  status = 200,
): void {
  void key;
  res.status(status).json(value);
}

/**
 * Sends `text`, JSON already serialised elsewhere (the analysis worker's answer), as route `key`'s
 * answer without parsing it again on the server's thread. The key must be a JSON route of the
 * contract; under test `validateResponses()` parses the text and checks it like any other answer.
 */
export function replyText(res: Response, key: JsonRouteKey, text: string, status = 200): void {
  void key;
  res.status(status).type('application/json').send(text);
}

/** The routes whose answer is a CSV download. */
export type CsvRouteKey = {
  [K in ResponseKey]: (typeof RESPONSES)[K] extends 'csv' ? K : never;
}[ResponseKey];

/** Sends `body` as route `key`'s CSV download, saved by the browser as `filename`. */
export function replyCsv(res: Response, key: CsvRouteKey, filename: string, body: string): void {
  void key;
  res.setHeader('content-type', 'text/csv; charset=utf-8');
  res.setHeader('content-disposition', `attachment; filename="${filename}"`);
  res.send(body);
}

/** The first problem of a body against a schema, as `path: message`, or null when it conforms. */
export function contractProblem(schema: z.ZodType, body: unknown): string | null {
  const r = schema.safeParse(body);
  if (r.success) return null;
  const i = r.error.issues[0];
  return `${i.path.length ? i.path.join('.') : '(body)'}: ${i.message}`;
}

/**
 * Checks every JSON answer of `/api` against the contract (`RESPONSES`, keyed by the same route
 * table the guard uses): a success body against its route's schema, an error against the error
 * envelope. A body that does not conform is replaced by a 500 `response-drift` naming the route
 * and the field, so a test that reads it fails. On only where `enabled` (tests): production does
 * not pay for parsing its own answers.
 */
export function validateResponses(enabled = process.env.NODE_ENV === 'test') {
  return (req: Request, res: Response, next: NextFunction): void => {
    if (!enabled) return next();
    const rule = ruleFor(req.method, req.originalUrl.split('?')[0]);
    const send = res.send.bind(res);
    res.send = (body?: unknown) => {
      const type = String(res.getHeader('content-type') ?? '');
      if (!rule || typeof body !== 'string' || !type.includes('json')) return send(body);
      const spec = responseSpec(rule.key);
      let problem: string | null;
      if (res.statusCode >= 400) {
        // The health route answers its own shape with 503 when the database is away.
        problem = contractProblem(ApiErrorBody, JSON.parse(body));
        if (problem && typeof spec === 'object') problem = contractProblem(spec, JSON.parse(body));
      } else if (spec === undefined) {
        problem = 'no response schema in shared/protocol/responses.ts';
      } else if (typeof spec === 'string') {
        problem = `answers ${spec}, not JSON`;
      } else {
        problem = contractProblem(spec, JSON.parse(body));
      }
      if (!problem) return send(body);
      const message = `${rule.key} answered ${res.statusCode} with a body outside the contract: ${problem}`;
      console.error(`[contract] ${message}`);
      res.status(500);
      return send(JSON.stringify({ error: { code: 'response-drift', message } }));
    };
    next();
  };
}
