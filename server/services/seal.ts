import { createHash } from 'node:crypto';
import type pg from 'pg';
import { NotFoundError } from '../errors.js';
import type { Series } from './readings.js';
import { readingsArchived } from './partitions.js';

/**
 * Sealed evidence. When a capture finishes, the SHA-256 of its raw readings in a canonical
 * serialisation is stored with it (`captures.seal_sha256`). The serialisation (docs/record.md):
 * every stored reading in ascending `seq`, each as 22 bytes, big-endian —
 *   seq   : 32-bit unsigned integer
 *   t     : IEEE 754 binary64 (seconds since the capture started)
 *   value : IEEE 754 binary64 (as received, before any correction)
 *   flags : 16-bit signed integer (as stored)
 * with nothing before, between or after the records. An empty capture hashes the empty string.
 */
export const SEAL_RECORD_BYTES = 22;

/** The canonical bytes of a series (in the order given; the caller passes ascending seq). */
export function canonicalReadings(s: Pick<Series, 'seq' | 't' | 'value' | 'flags'>): Buffer {
  const n = s.seq.length;
  const buf = Buffer.alloc(n * SEAL_RECORD_BYTES);
  for (let i = 0, o = 0; i < n; i++, o += SEAL_RECORD_BYTES) {
    buf.writeUInt32BE(s.seq[i], o);
    buf.writeDoubleBE(s.t[i], o + 4);
    buf.writeDoubleBE(s.value[i], o + 12);
    buf.writeInt16BE(s.flags[i], o + 20);
  }
  return buf;
}

/** SHA-256 (hex) of the canonical serialisation. */
export function sealOf(s: Pick<Series, 'seq' | 't' | 'value' | 'flags'>): string {
  return createHash('sha256').update(canonicalReadings(s)).digest('hex');
}

/** Readings serialised per slice by sealOfSliced: 65,536 × 22 bytes, about 1.4 MB. */
export const SEAL_SLICE = 65_536;

/**
 * The same digest as sealOf, hashed one slice of readings at a time with a turn of the event loop
 * between slices, so sealing a capture of millions of readings neither holds the server's loop
 * for the whole serialisation nor builds the whole serialisation (22 bytes a reading) in memory.
 */
export async function sealOfSliced(
  s: Pick<Series, 'seq' | 't' | 'value' | 'flags'>,
  slice = SEAL_SLICE,
): Promise<string> {
  const hash = createHash('sha256');
  const n = s.seq.length;
  for (let from = 0; from < n; from += slice) {
    const to = Math.min(n, from + slice);
    hash.update(
      canonicalReadings({
        seq: s.seq.subarray(from, to),
        t: s.t.subarray(from, to),
        value: s.value.subarray(from, to),
        flags: s.flags.subarray(from, to),
      }),
    );
    if (to < n) await new Promise<void>((resolve) => setImmediate(resolve));
  }
  return hash.digest('hex');
}

export interface SealCheck {
  captureId: number;
  /** The digest stored when the capture finished; null while it is open. */
  sha256: string | null;
  /** How many readings are stored now. */
  readings: number;
  /** The digest of the readings as stored now. */
  recomputed: string;
  /**
   * True when the stored digest matches the readings now; null when there is no seal yet, or when
   * the readings are archived (their partition taken out) and cannot be read to check it.
   */
  verified: boolean | null;
  sealedAt: Date | null;
  /** True when the capture's readings block was archived (server/services/partitions.ts). */
  archived?: boolean;
}

/**
 * The same digest computed inside PostgreSQL, so a check never moves the rows: `int4send`,
 * `float8send` and `int2send` give exactly the big-endian bytes above (seq is never negative, so
 * its signed and unsigned forms agree), concatenated in seq order and hashed with `sha256`.
 */
const SEAL_SQL = `SELECT count(*)::int AS n,
    encode(sha256(coalesce(string_agg(int4send(seq) || float8send(t) || float8send(value) || int2send(flags), ''::bytea ORDER BY seq), ''::bytea)), 'hex') AS h
  FROM readings WHERE capture_id = $1`;

/** Recomputes a capture's seal from its stored rows and compares it with the stored digest. */
export async function checkSeal(pool: pg.Pool, captureId: number): Promise<SealCheck> {
  const { rows } = await pool.query<{ seal_sha256: string | null; sealed_at: Date | null }>(
    'SELECT seal_sha256, sealed_at FROM captures WHERE id = $1',
    [captureId],
  );
  if (rows.length === 0) throw new NotFoundError('Capture');
  const now = await pool.query<{ n: number; h: string }>(SEAL_SQL, [captureId]);
  // No rows may mean an archived block: then the seal cannot be checked, which is not a break.
  if (now.rows[0].n === 0 && (await readingsArchived(pool, captureId))) {
    return {
      captureId,
      sha256: rows[0].seal_sha256,
      readings: 0,
      recomputed: '',
      verified: null,
      sealedAt: rows[0].sealed_at,
      archived: true,
    };
  }
  const recomputed = now.rows[0].h;
  const stored = rows[0].seal_sha256;
  return {
    captureId,
    sha256: stored,
    readings: now.rows[0].n,
    recomputed,
    verified: stored === null ? null : stored === recomputed,
    sealedAt: rows[0].sealed_at,
  };
}
