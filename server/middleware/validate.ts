import type { z } from 'zod';
import { ValidationError } from '../errors.js';
import { findBadText } from '../../shared/protocol/text.js';

/**
 * Parses `data` with `schema`, or throws a 400 naming each field and its problem. Before the
 * schema, any string anywhere in the input that PostgreSQL could not store (a NUL, a lone
 * surrogate) is refused, so a free-form field (a JSON profile, a record) cannot reach the database
 * with one either.
 */
export function parse<S extends z.ZodType>(schema: S, data: unknown, where = 'body'): z.infer<S> {
  const bad = findBadText(data);
  if (bad) {
    const path = bad.path || where;
    throw new ValidationError(`${path}: ${bad.message}`, [{ path, message: bad.message }]);
  }
  const result = schema.safeParse(data);
  if (result.success) return result.data;
  const details = result.error.issues.map((i) => ({
    path: i.path.length ? i.path.join('.') : where,
    message: i.message,
  }));
  const first = details[0];
  throw new ValidationError(`${first.path}: ${first.message}`, details);
}
