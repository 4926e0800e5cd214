/**
 * Paging of every list route: `?limit=&cursor=`. The answer carries `nextCursor` (an opaque
 * string, or null on the last page); pass it back as `cursor` for the next page. Each list has a
 * default page size and a maximum (LIST_LIMITS); asking for more is a 400.
 */
import { z } from 'zod';

export const LIST_LIMITS = {
  captures: { default: 100, max: 200 },
  users: { default: 100, max: 200 },
  studies: { default: 100, max: 200 },
  instruments: { default: 100, max: 200 },
  references: { default: 100, max: 200 },
} as const;

/** `?limit&cursor` for a list whose page holds at most `max` items. */
export function pageQuery(max: number) {
  return z.object({
    limit: z.coerce.number().int().min(1).max(max, `must be at most ${max}`).optional(),
    cursor: z
      .string()
      .max(200)
      .regex(/^[A-Za-z0-9_-]*$/, 'is not a cursor this server gave')
      .optional(),
  });
}

export interface Page {
  limit: number;
  cursor?: string;
}
