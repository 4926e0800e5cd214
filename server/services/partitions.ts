import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, statSync } from 'node:fs';
import path from 'node:path';
import type pg from 'pg';
import type { Sequelize } from 'sequelize';
import { AppError } from '../errors.js';
import { RECORDING_STATES } from '../../shared/protocol/captureLifecycle.js';

/**
 * The partitions of `readings` and `reading_tiles` (migration 20261202-0200): block k holds the
 * readings and tiles of captures k·READINGS_BLOCK … (k+1)·READINGS_BLOCK − 1 in `readings_p<k>`
 * and `reading_tiles_p<k>`. Blocks are made ahead (the next capture's block and the one after,
 * at startup and whenever a capture opens); a finished block can be detached (kept as a plain
 * table outside the app) or dumped with pg_dump and dropped, and a detached one attached back.
 */
export const READINGS_BLOCK = 1000;
/** The advisory lock key the migration's partition function takes too ('DBRP'). */
const PARTITION_LOCK = 0x44425250;
/** How long taking a partition out (or making the next one ahead) may wait for other statements' locks. */
const LOCK_WAIT = '5s';

export const blockOf = (captureId: number) => Math.floor(captureId / READINGS_BLOCK);
const pad = (block: number) => String(block).padStart(6, '0');
export const readingsTableOf = (block: number) => `readings_p${pad(block)}`;
export const tilesTableOf = (block: number) => `reading_tiles_p${pad(block)}`;

/**
 * Makes sure the block of `captureId` has its partitions (waiting as long as it takes: readings
 * are about to arrive) and makes the next block ahead (waiting at most LOCK_WAIT: a busy moment
 * leaves it to the next capture). Normally one catalog query that finds both.
 */
export async function ensureReadingsPartitions(
  sequelize: Sequelize,
  captureId: number,
): Promise<void> {
  const block = blockOf(captureId);
  const [[have]] = (await sequelize.query(
    `SELECT to_regclass($1) IS NOT NULL AND to_regclass($2) IS NOT NULL AS own,
            to_regclass($3) IS NOT NULL AND to_regclass($4) IS NOT NULL AS next`,
    {
      bind: [
        readingsTableOf(block),
        tilesTableOf(block),
        readingsTableOf(block + 1),
        tilesTableOf(block + 1),
      ],
    },
  )) as [Array<{ own: boolean; next: boolean }>, unknown];
  if (!have.own) {
    await sequelize.query('SELECT driftbench_ensure_readings_partition($1)', { bind: [block] });
  }
  if (!have.next) {
    try {
      await sequelize.transaction(async (transaction) => {
        await sequelize.query(`SET LOCAL lock_timeout = '${LOCK_WAIT}'`, { transaction });
        await sequelize.query('SELECT driftbench_ensure_readings_partition($1)', {
          bind: [block + 1],
          transaction,
        });
      });
    } catch (err) {
      // 55P03 lock_not_available: the next capture tries again; anything else is a real fault.
      if ((err as { parent?: { code?: string } }).parent?.code !== '55P03') throw err;
    }
  }
}

/** The partitions for the next capture id to be handed out, and the block after it (startup). */
export async function ensurePartitionsAhead(sequelize: Sequelize): Promise<void> {
  const [[row]] = (await sequelize.query(
    `SELECT GREATEST((SELECT coalesce(max(id), 0) FROM captures),
       (SELECT CASE WHEN is_called THEN last_value ELSE last_value - 1 END FROM captures_id_seq)) + 1 AS next`,
  )) as [Array<{ next: number }>, unknown];
  await ensureReadingsPartitions(sequelize, Number(row.next));
}

export interface ReadingBlock {
  block: number;
  firstCaptureId: number;
  lastCaptureId: number;
  readingsTable: string;
  tilesTable: string;
  /** `attached`: part of the app; `detached`: kept as plain tables; `dumped`: in a file, dropped. */
  status: 'attached' | 'detached' | 'dumped';
  captures: number;
  /** Captures still recording (open or stalled). */
  recording: number;
  /** Readings of the block's captures (their stored counts; exact, no scan). */
  readings: number;
  /** Bytes of both tables with their indexes (0 once dumped). */
  bytes: number;
  /** When the block's most recent capture ended; null with none or one still recording. */
  lastEndedAt: Date | null;
  /** True when every capture id of the block has been handed out (no new capture can land in it). */
  complete: boolean;
  /** Whether the block may be taken out now (given `olderThanDays`), and if not, why. */
  archivable: boolean;
  reason: string | null;
  archivedAt: Date | null;
  dumpFile: string | null;
}

/**
 * Every block: attached partitions with their capture range, reading count, size and whether each
 * capture in it has ended more than `olderThanDays` ago, and the blocks taken out before.
 */
export async function listReadingBlocks(
  pool: pg.Pool | pg.PoolClient,
  opts: { olderThanDays: number; now?: Date },
): Promise<ReadingBlock[]> {
  const now = opts.now ?? new Date();
  const cutoff = new Date(now.getTime() - opts.olderThanDays * 86_400_000);
  const { rows } = await pool.query<{
    block: number;
    status: ReadingBlock['status'];
    readings_table: string;
    tiles_table: string;
    captures: number;
    recording: number;
    readings: string;
    bytes: string;
    last_ended_at: Date | null;
    too_recent: number;
    next_id: number;
    archived_at: Date | null;
    dump_file: string | null;
  }>(
    `WITH parts AS (
       SELECT substring(c.relname from 11)::int AS block, c.relname::text AS readings_table,
              'reading_tiles_p' || substring(c.relname from 11) AS tiles_table
       FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid
       WHERE i.inhparent = 'readings'::regclass AND c.relname ~ '^readings_p[0-9]{6}$'),
     blocks AS (
       SELECT block, 'attached' AS status, readings_table, tiles_table, NULL::timestamptz AS archived_at, NULL::text AS dump_file FROM parts
       UNION ALL
       SELECT block, how, readings_table, tiles_table, archived_at, dump_file FROM reading_archives),
     caps AS (
       SELECT id / $1 AS block, count(*)::int AS captures,
              count(*) FILTER (WHERE state = ANY($2::text[]))::int AS recording,
              sum(reading_count)::bigint AS readings,
              CASE WHEN bool_or(state = ANY($2::text[]) OR ended_at IS NULL) THEN NULL ELSE max(ended_at) END AS last_ended_at,
              count(*) FILTER (WHERE ended_at IS NULL OR ended_at > $3)::int AS too_recent
       FROM captures GROUP BY 1)
     SELECT b.block, b.status, b.readings_table, b.tiles_table,
            coalesce(caps.captures, 0) AS captures, coalesce(caps.recording, 0) AS recording,
            coalesce(caps.readings, 0) AS readings,
            CASE WHEN to_regclass(b.readings_table) IS NULL THEN 0
                 ELSE pg_total_relation_size(to_regclass(b.readings_table)) + coalesce(pg_total_relation_size(to_regclass(b.tiles_table)), 0) END AS bytes,
            caps.last_ended_at, coalesce(caps.too_recent, 0) AS too_recent,
            (SELECT GREATEST((SELECT coalesce(max(id), 0) FROM captures),
               (SELECT CASE WHEN is_called THEN last_value ELSE last_value - 1 END FROM captures_id_seq)) + 1) AS next_id,
            b.archived_at, b.dump_file
     FROM blocks b LEFT JOIN caps USING (block) ORDER BY b.block`,
    [READINGS_BLOCK, RECORDING_STATES, cutoff],
  );
  return rows.map((r) => {
    const complete = (r.block + 1) * READINGS_BLOCK <= Number(r.next_id);
    let reason: string | null = null;
    if (r.status !== 'attached') reason = `already ${r.status}`;
    else if (r.recording > 0)
      reason = `${r.recording} capture${r.recording === 1 ? ' is' : 's are'} still recording`;
    else if (!complete) reason = 'new captures will still be numbered in this block';
    else if (r.too_recent > 0)
      reason = `${r.too_recent} capture${r.too_recent === 1 ? '' : 's'} ended less than ${opts.olderThanDays} days ago`;
    return {
      block: r.block,
      firstCaptureId: r.block * READINGS_BLOCK,
      lastCaptureId: (r.block + 1) * READINGS_BLOCK - 1,
      readingsTable: r.readings_table,
      tilesTable: r.tiles_table,
      status: r.status,
      captures: r.captures,
      recording: r.recording,
      readings: Number(r.readings),
      bytes: Number(r.bytes),
      lastEndedAt: r.last_ended_at,
      complete,
      archivable: reason === null,
      reason,
      archivedAt: r.archived_at,
      dumpFile: r.dump_file,
    };
  });
}

/** The path of pg_dump on PATH, or null. */
export function findPgDump(): string | null {
  for (const dir of (process.env.PATH ?? '').split(path.delimiter)) {
    if (dir && existsSync(path.join(dir, 'pg_dump'))) return path.join(dir, 'pg_dump');
  }
  return null;
}

export interface ArchiveResult {
  block: number;
  how: 'detached' | 'dumped';
  readingsTable: string;
  tilesTable: string;
  captures: number;
  readings: number;
  bytes: number;
  dumpFile: string | null;
}

/**
 * Takes block `block` out of `readings` and `reading_tiles`: refused (409) while one of its
 * captures is recording, while new captures can still be numbered in it, or when one ended less
 * than `olderThanDays` ago. `detach` keeps both tables as plain tables; `dump` then writes them with
 * pg_dump (custom format) to `dumpDir` and drops them. Plain DETACH (not CONCURRENTLY, which cannot
 * run in a transaction) briefly takes the parents' ACCESS EXCLUSIVE lock; it waits at most
 * LOCK_WAIT for running statements and otherwise fails with 409 `busy`, so the lab is never held.
 */
export async function archiveReadingBlock(
  pool: pg.Pool,
  block: number,
  opts: {
    mode: 'detach' | 'dump';
    olderThanDays: number;
    actor: string;
    dumpDir?: string;
    databaseUrl?: string;
    now?: Date;
  },
): Promise<ArchiveResult> {
  const pgDump = opts.mode === 'dump' ? findPgDump() : null;
  if (opts.mode === 'dump') {
    if (!pgDump)
      throw new AppError(409, 'no-pg-dump', 'pg_dump is not on PATH: detach the block instead.');
    if (!opts.dumpDir || !opts.databaseUrl)
      throw new AppError(400, 'validation', 'A dump needs a folder and the database URL.');
  }
  const list = await listReadingBlocks(pool, { olderThanDays: opts.olderThanDays, now: opts.now });
  const found = list.find((b) => b.block === block);
  if (!found) throw new AppError(404, 'not-found', `There is no readings block ${block}.`);
  const r = readingsTableOf(block);
  const t = tilesTableOf(block);
  const client = await pool.connect();
  let result: ArchiveResult;
  try {
    await client.query('BEGIN');
    await client.query(`SET LOCAL lock_timeout = '${LOCK_WAIT}'`);
    await client.query('SELECT pg_advisory_xact_lock($1)', [PARTITION_LOCK]);
    try {
      // The parents first, in the order ingest takes them (readings, then its tiles), so no
      // statement can hold one while waiting for the other.
      await client.query('LOCK TABLE readings, reading_tiles IN ACCESS EXCLUSIVE MODE');
    } catch (err) {
      if ((err as { code?: string }).code === '55P03')
        throw new AppError(
          409,
          'busy',
          `Other statements held the readings tables for over ${LOCK_WAIT}: try again in a quiet moment.`,
        );
      throw err;
    }
    // Checked again under the locks: nothing can open, resume or end a capture of the block now.
    const again = (
      await listReadingBlocks(client, {
        olderThanDays: opts.olderThanDays,
        now: opts.now,
      })
    ).find((b) => b.block === block);
    if (!again || !again.archivable) {
      const open = await client.query<{ id: number; state: string }>(
        'SELECT id, state FROM captures WHERE id >= $1 AND id < $2 AND state = ANY($3::text[]) ORDER BY id LIMIT 5',
        [block * READINGS_BLOCK, (block + 1) * READINGS_BLOCK, RECORDING_STATES],
      );
      throw new AppError(
        409,
        open.rowCount ? 'capture-recording' : 'not-archivable',
        `Readings block ${block} (captures ${found.firstCaptureId}–${found.lastCaptureId}) cannot be archived: ${again?.reason ?? 'it is gone'}.`,
        { block, reason: again?.reason ?? null, recording: open.rows },
      );
    }
    await client.query(`ALTER TABLE readings DETACH PARTITION "${r}"`);
    await client.query(`ALTER TABLE reading_tiles DETACH PARTITION "${t}"`);
    await client.query(
      `INSERT INTO reading_archives (block, first_capture_id, last_capture_id, captures, readings, bytes, how, readings_table, tiles_table, archived_by)
       VALUES ($1, $2, $3, $4, $5, $6, 'detached', $7, $8, $9)`,
      [
        block,
        again.firstCaptureId,
        again.lastCaptureId,
        again.captures,
        again.readings,
        again.bytes,
        r,
        t,
        opts.actor,
      ],
    );
    await client.query('COMMIT');
    result = {
      block,
      how: 'detached',
      readingsTable: r,
      tilesTable: t,
      captures: again.captures,
      readings: again.readings,
      bytes: again.bytes,
      dumpFile: null,
    };
  } catch (err) {
    await client.query('ROLLBACK').catch(() => undefined);
    throw err;
  } finally {
    client.release();
  }
  if (opts.mode === 'detach') return result;

  // Dump the detached tables, check the file, then drop them. A failed dump leaves them detached.
  mkdirSync(opts.dumpDir!, { recursive: true });
  const file = path.resolve(opts.dumpDir!, `driftbench-readings-block-${pad(block)}.dump`);
  const dump = spawnSync(
    pgDump!,
    [
      `--dbname=${opts.databaseUrl}`,
      '--format=custom',
      '--no-owner',
      `--table=public.${r}`,
      `--table=public.${t}`,
      `--file=${file}`,
    ],
    { encoding: 'utf8' },
  );
  if (dump.status !== 0 || !existsSync(file) || statSync(file).size === 0) {
    throw new AppError(
      500,
      'dump-failed',
      `pg_dump failed (${dump.status}): ${dump.stderr?.trim() || dump.error?.message}. Block ${block} stays detached as ${r} and ${t}.`,
    );
  }
  const c2 = await pool.connect();
  try {
    await c2.query('BEGIN');
    await c2.query(`DROP TABLE "${r}", "${t}"`);
    await c2.query(`UPDATE reading_archives SET how = 'dumped', dump_file = $2 WHERE block = $1`, [
      block,
      file,
    ]);
    await c2.query('COMMIT');
  } catch (err) {
    await c2.query('ROLLBACK').catch(() => undefined);
    throw err;
  } finally {
    c2.release();
  }
  return { ...result, how: 'dumped', dumpFile: file };
}

/**
 * Attaches a detached block back (after pg_restore, for a dumped one: restore the file first, then
 * call this). PostgreSQL checks every row lies in the block's range while attaching.
 */
export async function attachReadingBlock(pool: pg.Pool, block: number): Promise<void> {
  const r = readingsTableOf(block);
  const t = tilesTableOf(block);
  const client = await pool.connect();
  try {
    await client.query('BEGIN');
    await client.query('SELECT pg_advisory_xact_lock($1)', [PARTITION_LOCK]);
    const { rows } = await client.query<{ r: boolean; t: boolean }>(
      `SELECT to_regclass($1) IS NOT NULL AS r, to_regclass($2) IS NOT NULL AS t
       FROM reading_archives WHERE block = $3`,
      [r, t, block],
    );
    if (!rows.length)
      throw new AppError(404, 'not-found', `Readings block ${block} is not archived.`);
    if (!rows[0].r || !rows[0].t)
      throw new AppError(
        409,
        'not-restored',
        `Restore ${r} and ${t} from the block's dump (pg_restore) before attaching it.`,
      );
    const lo = block * READINGS_BLOCK;
    const hi = lo + READINGS_BLOCK;
    await client.query(
      `ALTER TABLE readings ATTACH PARTITION "${r}" FOR VALUES FROM (${lo}) TO (${hi})`,
    );
    await client.query(
      `ALTER TABLE reading_tiles ATTACH PARTITION "${t}" FOR VALUES FROM (${lo}) TO (${hi})`,
    );
    await client.query('DELETE FROM reading_archives WHERE block = $1', [block]);
    await client.query('COMMIT');
  } catch (err) {
    await client.query('ROLLBACK').catch(() => undefined);
    throw err;
  } finally {
    client.release();
  }
}

/** True when the block holding `captureId`'s readings has been taken out. */
export async function readingsArchived(pool: pg.Pool, captureId: number): Promise<boolean> {
  const { rowCount } = await pool.query('SELECT 1 FROM reading_archives WHERE block = $1', [
    blockOf(captureId),
  ]);
  return (rowCount ?? 0) > 0;
}

/** 410 `readings-archived` when the block holding `captureId`'s readings has been taken out. */
export async function assertReadingsOnline(pool: pg.Pool, captureId: number): Promise<void> {
  const { rows } = await pool.query<{
    block: number;
    how: string;
    archived_at: Date;
    first_capture_id: number;
    last_capture_id: number;
  }>(
    'SELECT block, how, archived_at, first_capture_id, last_capture_id FROM reading_archives WHERE block = $1',
    [blockOf(captureId)],
  );
  if (!rows.length) return;
  const a = rows[0];
  throw new AppError(
    410,
    'readings-archived',
    `The readings of capture ${captureId} were archived on ${a.archived_at.toISOString().slice(0, 10)} ` +
      `with captures ${a.first_capture_id}–${a.last_capture_id} (${a.how === 'dumped' ? 'dumped to a file' : 'kept outside the app'}). ` +
      'Its record and seal stay; an administrator can attach the block back to show its readings and their analysis.',
    { block: a.block, how: a.how, archivedAt: a.archived_at.toISOString() },
  );
}
