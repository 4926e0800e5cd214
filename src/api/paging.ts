/**
 * Every list route answers one page (`?limit&cursor`, see shared/protocol/paging.ts) with a
 * `nextCursor`. The pages that show a whole list follow the cursors here, up to `max` items.
 */
import { http, type RequestOptions } from './http';

/** Items of every page of `path` under `key`, following `nextCursor`, at most `max` of them. */
export async function allPages<T>(
  path: string,
  key: string,
  max = 2000,
  pageSize = 200,
  options?: RequestOptions,
): Promise<T[]> {
  const items: T[] = [];
  let cursor: string | null = null;
  do {
    const sep = path.includes('?') ? '&' : '?';
    const limit = Math.min(pageSize, max - items.length);
    const url = `${path}${sep}limit=${limit}${cursor ? `&cursor=${encodeURIComponent(cursor)}` : ''}`;
    const page: Record<string, unknown> = await http.get<Record<string, unknown>>(url, options);
    items.push(...((page[key] as T[] | undefined) ?? []));
    cursor = typeof page.nextCursor === 'string' ? page.nextCursor : null;
  } while (cursor && items.length < max);
  return items;
}
