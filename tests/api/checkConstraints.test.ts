// The database itself refuses a state, status, role or kind the product does not know, and
// accepts every value the shared enums offer (a new enum value without a migration that widens
// the column's CHECK constraint fails here). Raw SQL on purpose: no service or model in between.
import { beforeAll, describe, expect, it } from 'vitest';
import type pg from 'pg';
import { useDemoApp } from '../helpers/demoApp.js';
import { ROLES } from '../../shared/protocol/roles.js';
import { DUT_KINDS, LIMIT_UNITS, STUDY_STATUSES } from '../../shared/protocol/api.js';
import { ORIENTATIONS, QUANTITIES } from '../../shared/protocol/captures.js';
import { COUNTER_TYPES, REFERENCE_KINDS } from '../../shared/protocol/uncertainty.js';
import { ATTACHMENT_OWNERS, REVIEW_ACTIONS } from '../../shared/protocol/review.js';
import { ReadingFlag } from '../../shared/protocol/reading.js';

const demo = useDemoApp();

beforeAll(async () => {
  // Rows in the tables the demo seed leaves empty, written raw so each column has a row to test.
  const pool = demo.t.db.pool;
  const study = (await pool.query(`SELECT id FROM studies ORDER BY id LIMIT 1`)).rows[0]
    .id as number;
  await pool.query(
    `INSERT INTO study_reviews (study_id, revision, action, from_status, to_status) VALUES ($1, 1, 'start', 'draft', 'running')`,
    [study],
  );
  await pool.query(
    `INSERT INTO captures (dut_id, checkpoint_id, quantity, unit, gate_time, started_at, created_at, updated_at)
     SELECT (SELECT min(id) FROM duts), (SELECT min(id) FROM checkpoints), 'frequency', 'Hz', 1, now(), now(), now()`,
  );
  await pool.query(
    `INSERT INTO readings (capture_id, seq, t, value) SELECT max(id), 0, 0, 1 FROM captures`,
  );
  await pool.query(
    `INSERT INTO mail_outbox (kind, to_address, subject, body) VALUES ('test', 'a@example.test', 's', 'b')`,
  );
  await pool.query(
    `INSERT INTO attachments (study_id, owner_type, owner_id, filename, content_type, size_bytes, sha256, storage_key, uploaded_by)
     SELECT $1, 'study', $1, 'a.txt', 'text/plain', 1, repeat('0', 64), 'k', (SELECT min(id) FROM users)`,
    [study],
  );
});

/** Runs `sql` on the first row of `table` inside a transaction that is always rolled back. */
async function tryOnFirstRow(
  pool: pg.Pool,
  table: string,
  set: string,
  params: unknown[],
): Promise<{ code?: string; rows: number }> {
  const client = await pool.connect();
  try {
    await client.query('BEGIN');
    const res = await client.query(
      `UPDATE ${table} SET ${set} WHERE ctid = (SELECT ctid FROM ${table} LIMIT 1)`,
      params,
    );
    return { rows: res.rowCount ?? 0 };
  } catch (error) {
    return { code: (error as { code?: string }).code, rows: 0 };
  } finally {
    await client.query('ROLLBACK');
    client.release();
  }
}

// [table, column, values the shared enums offer today (null: only the bad value is checked)]
const COLUMNS: Array<[string, string, readonly string[] | null]> = [
  ['users', 'role', ROLES],
  ['studies', 'status', STUDY_STATUSES],
  ['instruments', 'kind', null],
  ['instruments', 'counter_type', COUNTER_TYPES],
  ['frequency_references', 'kind', REFERENCE_KINDS],
  ['duts', 'kind', DUT_KINDS],
  ['duts', 'limit_unit', LIMIT_UNITS],
  ['captures', 'state', null],
  ['captures', 'quantity', QUANTITIES],
  ['captures', 'counter_type', COUNTER_TYPES],
  ['captures', 'orientation', ORIENTATIONS],
  ['study_reviews', 'action', REVIEW_ACTIONS],
  ['study_reviews', 'from_status', STUDY_STATUSES],
  ['study_reviews', 'to_status', STUDY_STATUSES],
  ['attachments', 'owner_type', ATTACHMENT_OWNERS],
  ['mail_outbox', 'status', ['queued', 'retrying', 'sent', 'failed']],
];

describe('CHECK constraints on state, status, role and kind columns', () => {
  it.each(COLUMNS)('%s.%s refuses a value no enum offers', async (table, column) => {
    const res = await tryOnFirstRow(demo.t.db.pool, table, `${column} = $1`, ['bogus']);
    expect(res.code).toBe('23514'); // check_violation (PostgreSQL error codes, appendix A)
  });

  it.each(COLUMNS.filter(([, , values]) => values !== null))(
    '%s.%s accepts every value of its shared enum',
    async (table, column, values) => {
      for (const value of values!) {
        const res = await tryOnFirstRow(demo.t.db.pool, table, `${column} = $1`, [value]);
        expect(res, `${table}.${column} = '${value}'`).toEqual({ rows: 1 });
      }
    },
  );

  it('a stored link profile names a known link kind', async () => {
    const bad = await tryOnFirstRow(demo.t.db.pool, 'instruments', `link_profile = $1::jsonb`, [
      JSON.stringify({ kind: 'carrier-pigeon' }),
    ]);
    expect(bad.code).toBe('23514');
    for (const kind of ['serial', 'simulator']) {
      const good = await tryOnFirstRow(demo.t.db.pool, 'instruments', `link_profile = $1::jsonb`, [
        JSON.stringify({ kind }),
      ]);
      expect(good).toEqual({ rows: 1 });
    }
  });

  it('a reading carries only the known flag bits', async () => {
    const all = Object.values(ReadingFlag).reduce((a, b) => a | b, 0);
    expect((await tryOnFirstRow(demo.t.db.pool, 'readings', 'flags = $1', [all])).rows).toBe(1);
    expect((await tryOnFirstRow(demo.t.db.pool, 'readings', 'flags = $1', [all + 1])).code).toBe(
      '23514',
    );
    expect((await tryOnFirstRow(demo.t.db.pool, 'readings', 'flags = $1', [-1])).code).toBe(
      '23514',
    );
  });
});
