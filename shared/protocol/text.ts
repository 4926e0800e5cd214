/**
 * Text and date fields every schema shares. PostgreSQL cannot store a NUL character in text, and
 * a lone UTF-16 surrogate is not valid Unicode (it cannot be encoded as UTF-8): both are refused
 * here, at the schema, with a 400 naming the field — never a 500 from the database further on.
 */
import { z } from 'zod';

// A high surrogate not followed by a low one, or a low surrogate not preceded by a high one.
const LONE_SURROGATE = /[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/;

/** Why a string cannot be stored as text, or null when it can. */
export function textProblem(s: string): string | null {
  if (s.includes('\u0000')) return 'must not contain a NUL character';
  if (LONE_SURROGATE.test(s)) return 'must be valid Unicode text (it holds a lone surrogate)';
  return null;
}

/** The first string anywhere in a JSON value that cannot be stored, with its path; null when all can. */
export function findBadText(
  value: unknown,
  path: string[] = [],
  depth = 0,
): { path: string; message: string } | null {
  if (depth > 64) return null;
  if (typeof value === 'string') {
    const problem = textProblem(value);
    return problem ? { path: path.join('.'), message: problem } : null;
  }
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) {
      const hit = findBadText(value[i], [...path, String(i)], depth + 1);
      if (hit) return hit;
    }
    return null;
  }
  if (typeof value === 'object' && value !== null) {
    for (const [k, v] of Object.entries(value)) {
      const keyProblem = textProblem(k);
      if (keyProblem) return { path: [...path, k].join('.'), message: `key ${keyProblem}` };
      const hit = findBadText(v, [...path, k], depth + 1);
      if (hit) return hit;
    }
  }
  return null;
}

/** A zod refinement adding {@link textProblem}'s check to any string schema. */
function storable<S extends z.ZodType<string | null | undefined>>(schema: S) {
  return schema.superRefine((s, ctx) => {
    if (typeof s !== 'string') return;
    const problem = textProblem(s);
    if (problem) ctx.addIssue({ code: 'custom', message: problem });
  });
}

/**
 * A stored text field: trimmed (unless `trim: false`), `min`–`max` characters, no NUL and no lone
 * surrogate. `Text({ max: 120, min: 1 })` is a required name.
 */
export function Text(opts: { max: number; min?: number; trim?: boolean }) {
  let s = z.string();
  if (opts.trim !== false) s = s.trim();
  if (opts.min)
    s = s.min(opts.min, opts.min === 1 ? 'is required' : `must be at least ${opts.min} characters`);
  s = s.max(opts.max, `must be at most ${opts.max} characters`);
  return storable(s);
}

/** Earliest and latest calendar dates Driftbench accepts (calibration due dates, verifications). */
export const DATE_MIN = '1900-01-01';
export const DATE_MAX = '2199-12-31';

/** True when `s` is a real calendar date YYYY-MM-DD (no 31 February) between DATE_MIN and DATE_MAX. */
export function isCalendarDate(s: string): boolean {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(s)) return false;
  const d = new Date(`${s}T00:00:00Z`);
  return (
    !Number.isNaN(d.getTime()) &&
    d.toISOString().slice(0, 10) === s &&
    s >= DATE_MIN &&
    s <= DATE_MAX
  );
}

/** A calendar date as YYYY-MM-DD, checked as a real date in the accepted range. */
export const CalendarDate = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date as YYYY-MM-DD')
  .refine((s) => isCalendarDate(s), `is not a calendar date between ${DATE_MIN} and ${DATE_MAX}`);
