import type { z } from 'zod';
import { ValidationError } from '../errors.js';

/** Parses `data` with `schema`, or throws a 400 naming each field and its problem. */
export function parse<S extends z.ZodType>(schema: S, data: unknown, where = 'body'): z.infer<S> {
  const result = schema.safeParse(data);
  if (result.success) return result.data;
  const details = result.error.issues.map((i) => ({
    path: i.path.length ? i.path.join('.') : where,
    message: i.message,
  }));
  const first = details[0];
  throw new ValidationError(`${first.path}: ${first.message}`, details);
}
