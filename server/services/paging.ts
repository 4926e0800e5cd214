import { Op, type Includeable, type Model, type ModelStatic, type WhereOptions } from 'sequelize';
import { ValidationError } from '../errors.js';
import type { Page } from '../../shared/protocol/paging.js';

/** Opaque cursor: the sort key of the last item of a page, as base64url JSON. */
export function encodeCursor(key: Array<string | number>): string {
  return Buffer.from(JSON.stringify(key)).toString('base64url');
}

export function decodeCursor(
  cursor: string,
  shape: Array<'string' | 'number'>,
): Array<string | number> {
  let key: unknown;
  try {
    key = JSON.parse(Buffer.from(cursor, 'base64url').toString('utf8'));
  } catch {
    key = null;
  }
  if (
    !Array.isArray(key) ||
    key.length !== shape.length ||
    key.some((v, i) => typeof v !== shape[i])
  ) {
    throw new ValidationError('cursor: is not a cursor this server gave', [
      { path: 'cursor', message: 'is not a cursor this server gave' },
    ]);
  }
  return key as Array<string | number>;
}

export type PageOrder = 'id-asc' | 'id-desc' | 'name-asc';

/**
 * One page of `model` in a stable order (keyset paging: the cursor is the last item's sort key,
 * so pages neither skip nor repeat rows when rows are added meanwhile). `include` joins
 * belongs-to associations into the same query (names for a list, never one query per row).
 */
export async function pageOf<M extends Model>(
  model: ModelStatic<M>,
  page: Page,
  order: PageOrder,
  where: WhereOptions = {},
  nameField = 'name',
  include?: Includeable[],
): Promise<{ rows: M[]; nextCursor: string | null }> {
  const conditions: WhereOptions[] = [where];
  if (page.cursor) {
    if (order === 'name-asc') {
      const [name, id] = decodeCursor(page.cursor, ['string', 'number']);
      conditions.push({
        [Op.or]: [{ [nameField]: { [Op.gt]: name } }, { [nameField]: name, id: { [Op.gt]: id } }],
      } as WhereOptions);
    } else {
      const [id] = decodeCursor(page.cursor, ['number']);
      conditions.push({ id: { [order === 'id-asc' ? Op.gt : Op.lt]: id } } as WhereOptions);
    }
  }
  const sort: Array<[string, string]> =
    order === 'name-asc'
      ? [
          [nameField, 'ASC'],
          ['id', 'ASC'],
        ]
      : [['id', order === 'id-asc' ? 'ASC' : 'DESC']];
  const rows = await model.findAll({
    where: { [Op.and]: conditions } as WhereOptions,
    order: sort,
    limit: page.limit + 1,
    include,
  });
  const more = rows.length > page.limit;
  if (more) rows.length = page.limit;
  const last = rows[rows.length - 1] as unknown as Record<string, unknown> | undefined;
  const nextCursor =
    more && last
      ? encodeCursor(
          order === 'name-asc' ? [String(last[nameField]), Number(last.id)] : [Number(last.id)],
        )
      : null;
  return { rows, nextCursor };
}
