import type pg from 'pg';
import { to as copyTo } from 'pg-copy-streams';

/** A capture's readings as typed arrays, in sequence order. */
export interface Series {
  seq: Int32Array;
  t: Float64Array;
  value: Float64Array;
  flags: Int16Array;
}

export interface SeriesPoint {
  seq: number;
  t: number;
  value: number;
  flags?: number;
}

export const TILE_BASE = 64;
const MAX_LEVEL = 20;

function grow<T extends Int32Array | Float64Array | Int16Array>(a: T, n: number): T {
  const out = new (a.constructor as new (n: number) => T)(n);
  out.set(a);
  return out;
}

/** The 11-byte signature, flags and extension length that open a binary COPY (19 bytes). */
const COPY_HEADER = 19;

/**
 * Parses the tuples of `COPY (SELECT seq, t, value, flags …) TO STDOUT (FORMAT binary)` into
 * typed arrays as the bytes arrive: per tuple an int16 field count (−1 ends the data), then per
 * field an int32 length and the big-endian value (int4, float8, float8, int2).
 */
class SeriesParser {
  s: Series = {
    seq: new Int32Array(1024),
    t: new Float64Array(1024),
    value: new Float64Array(1024),
    flags: new Int16Array(1024),
  };
  n = 0;
  private rest: Buffer = Buffer.alloc(0);
  private headerSeen = false;
  private ended = false;

  push(chunk: Buffer): void {
    const buf = this.rest.length ? Buffer.concat([this.rest, chunk]) : chunk;
    let o = 0;
    if (!this.headerSeen) {
      if (buf.length < COPY_HEADER) {
        this.rest = buf;
        return;
      }
      o = COPY_HEADER + buf.readInt32BE(15);
      this.headerSeen = true;
    }
    for (;;) {
      if (this.ended || buf.length - o < 2) break;
      const fields = buf.readInt16BE(o);
      if (fields === -1) {
        this.ended = true;
        o += 2;
        break;
      }
      // Four fields of 4, 8, 8 and 2 bytes, each after its 4-byte length: 40 bytes with the count.
      if (buf.length - o < 40) break;
      if (fields !== 4) throw new Error(`binary COPY tuple of ${fields} fields, 4 expected`);
      if (this.n === this.s.seq.length) {
        const size = this.n * 2;
        this.s = {
          seq: grow(this.s.seq, size),
          t: grow(this.s.t, size),
          value: grow(this.s.value, size),
          flags: grow(this.s.flags, size),
        };
      }
      // Lengths are fixed by the column types (all NOT NULL): int4, float8, float8, int2.
      this.s.seq[this.n] = buf.readInt32BE(o + 6);
      this.s.t[this.n] = buf.readDoubleBE(o + 14);
      this.s.value[this.n] = buf.readDoubleBE(o + 26);
      this.s.flags[this.n] = buf.readInt16BE(o + 38);
      this.n++;
      o += 40;
    }
    this.rest = o < buf.length ? Buffer.from(buf.subarray(o)) : Buffer.alloc(0);
  }

  series(): Series {
    const n = this.n;
    return {
      seq: this.s.seq.slice(0, n),
      t: this.s.t.slice(0, n),
      value: this.s.value.slice(0, n),
      flags: this.s.flags.slice(0, n),
    };
  }
}

/**
 * Loads every reading of a capture (or a seq range) into typed arrays, by a binary `COPY … TO
 * STDOUT` parsed as it streams: a 10,000,000-reading capture costs its typed arrays (22 bytes a
 * reading) and no row objects, and no text is parsed (a row query spent most of a 10 M finish
 * turning text into numbers). Given a pool, the copy runs on one of its connections; given a
 * client, in whatever transaction the caller holds (its snapshot).
 */
export async function loadSeries(
  pool: pg.Pool | pg.PoolClient,
  captureId: number,
  from = 0,
  to = 2_147_483_647,
): Promise<Series> {
  if (!('release' in pool)) {
    const client = await pool.connect();
    try {
      return await loadSeries(client, captureId, from, to);
    } finally {
      client.release();
    }
  }
  const int = (x: number) => {
    if (!Number.isSafeInteger(x)) throw new Error(`loadSeries: ${x} is not a whole number`);
    return Math.max(-2_147_483_648, Math.min(2_147_483_647, x));
  };
  const parser = new SeriesParser();
  const stream = pool.query(
    copyTo(
      `COPY (SELECT seq, t, value, flags FROM readings WHERE capture_id = ${int(captureId)} AND seq BETWEEN ${int(from)} AND ${int(to)} ORDER BY seq) TO STDOUT (FORMAT binary)`,
    ),
  );
  for await (const chunk of stream as AsyncIterable<Buffer>) parser.push(chunk);
  return parser.series();
}

function toPoints(s: Series): SeriesPoint[] {
  const out: SeriesPoint[] = new Array(s.seq.length);
  for (let i = 0; i < s.seq.length; i++) {
    out[i] = s.flags[i]
      ? { seq: s.seq[i], t: s.t[i], value: s.value[i], flags: s.flags[i] }
      : { seq: s.seq[i], t: s.t[i], value: s.value[i] };
  }
  return out;
}

/**
 * Builds the min/max tiles of a capture from all its readings: level L groups 64·2^L consecutive
 * sequence numbers and keeps the lowest and the highest reading of each group. Finish no longer
 * calls it (ingest keeps the tiles as readings go in); it stays as the reference rebuild the
 * tests compare the kept tiles with (tests/helpers/tiles.ts), and for repairs.
 */
export async function buildTiles(
  client: pg.PoolClient | pg.Pool,
  captureId: number,
  s: Series,
): Promise<void> {
  await client.query('DELETE FROM reading_tiles WHERE capture_id = $1', [captureId]);
  const n = s.seq.length;
  if (n === 0) return;
  const maxSeq = s.seq[n - 1];
  for (let level = 0; level <= MAX_LEVEL; level++) {
    const size = TILE_BASE * 2 ** level;
    let bucket = -1;
    let lo = 0;
    let hi = 0;
    const rows: number[][] = [];
    for (let i = 0; i < n; i++) {
      const b = Math.floor(s.seq[i] / size);
      if (b !== bucket) {
        if (bucket >= 0)
          rows.push([bucket, s.seq[lo], s.t[lo], s.value[lo], s.seq[hi], s.t[hi], s.value[hi]]);
        bucket = b;
        lo = hi = i;
      } else {
        if (s.value[i] < s.value[lo]) lo = i;
        if (s.value[i] > s.value[hi]) hi = i;
      }
    }
    rows.push([bucket, s.seq[lo], s.t[lo], s.value[lo], s.seq[hi], s.t[hi], s.value[hi]]);
    const column = (k: number) => rows.map((r) => r[k]);
    await client.query(
      `INSERT INTO reading_tiles (capture_id, level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value)
       SELECT $1, $2, * FROM unnest($3::int[], $4::int[], $5::float8[], $6::float8[], $7::int[], $8::float8[], $9::float8[])`,
      [
        captureId,
        level,
        column(0),
        column(1),
        column(2),
        column(3),
        column(4),
        column(5),
        column(6),
      ],
    );
    if (size > maxSeq) break;
  }
}

/**
 * Readings between seq `from` and `to`. With `maxPoints` and more readings than that, min/max
 * decimation from the tiles (about maxPoints rows read whatever the capture's length). Tiles are
 * kept up to date as readings arrive (migration 20261202-0110), so an open capture reads like a
 * finished one; only when a range has no tiles does PostgreSQL aggregate the raw readings.
 * Without `maxPoints`, every reading.
 */
export async function readSeries(
  pool: pg.Pool,
  captureId: number,
  /** `finished` no longer changes the path (open captures have tiles too); kept for the callers. */
  opts: { from?: number; to?: number; maxPoints?: number; finished: boolean; highestSeq: number },
): Promise<{ readings: SeriesPoint[]; decimated: boolean }> {
  const from = opts.from ?? 0;
  const to = Math.min(opts.to ?? opts.highestSeq, opts.highestSeq);
  if (to < from) return { readings: [], decimated: false };
  const span = to - from + 1;
  if (!opts.maxPoints || span <= opts.maxPoints) {
    return { readings: toPoints(await loadSeries(pool, captureId, from, to)), decimated: false };
  }
  const buckets = Math.max(1, Math.floor(opts.maxPoints / 2));
  {
    // The finest level whose tiles over the range leave room for the two partial edges.
    let level = 0;
    while (level < MAX_LEVEL && Math.ceil(span / (TILE_BASE * 2 ** level)) + 2 > buckets) level++;
    const size = TILE_BASE * 2 ** level;
    // Tiles are aligned to their own size, the range is not: use the tiles that lie wholly
    // inside it and take the two partial edges from the raw readings (under 2·size rows), so no
    // extreme inside the range is lost and none outside it is shown.
    const firstFull = Math.ceil(from / size);
    const lastFull = Math.floor((to + 1) / size) - 1;
    if (lastFull - firstFull >= 1) {
      const res = await pool.query<[number, number, number, number, number, number]>({
        text: `SELECT min_seq, min_t, min_value, max_seq, max_t, max_value FROM reading_tiles
               WHERE capture_id = $1 AND level = $2 AND bucket BETWEEN $3 AND $4 ORDER BY bucket`,
        values: [captureId, level, firstFull, lastFull],
        rowMode: 'array',
      });
      if ((res.rowCount ?? 0) > 0) {
        const head =
          from < firstFull * size
            ? edgeExtremes(await loadSeries(pool, captureId, from, firstFull * size - 1))
            : [];
        const tail =
          to >= (lastFull + 1) * size
            ? edgeExtremes(await loadSeries(pool, captureId, (lastFull + 1) * size, to))
            : [];
        return {
          readings: [...head, ...tilesToPoints(res.rows, from, to), ...tail],
          decimated: true,
        };
      }
    }
  }
  const size = Math.ceil(span / buckets);
  const res = await pool.query<[number, number, number, number, number, number]>({
    text: `WITH r AS (SELECT seq, t, value, (seq - $2) / $4 AS b FROM readings WHERE capture_id = $1 AND seq BETWEEN $2 AND $3),
           agg AS (SELECT b, min(value) AS mn, max(value) AS mx FROM r GROUP BY b),
           lo AS (SELECT DISTINCT ON (r.b) r.b, r.seq, r.t, r.value FROM r JOIN agg USING (b) WHERE r.value = agg.mn ORDER BY r.b, r.seq),
           hi AS (SELECT DISTINCT ON (r.b) r.b, r.seq, r.t, r.value FROM r JOIN agg USING (b) WHERE r.value = agg.mx ORDER BY r.b, r.seq)
           SELECT lo.seq, lo.t, lo.value, hi.seq, hi.t, hi.value FROM lo JOIN hi USING (b) ORDER BY b`,
    values: [captureId, from, to, size],
    rowMode: 'array',
  });
  return { readings: tilesToPoints(res.rows, from, to), decimated: true };
}

/** The lowest and the highest reading of a short run, in seq order. */
function edgeExtremes(s: Series): SeriesPoint[] {
  const n = s.seq.length;
  if (n === 0) return [];
  let lo = 0;
  let hi = 0;
  for (let i = 1; i < n; i++) {
    if (s.value[i] < s.value[lo]) lo = i;
    if (s.value[i] > s.value[hi]) hi = i;
  }
  const point = (i: number): SeriesPoint => ({ seq: s.seq[i], t: s.t[i], value: s.value[i] });
  if (lo === hi) return [point(lo)];
  return lo < hi ? [point(lo), point(hi)] : [point(hi), point(lo)];
}

function tilesToPoints(
  rows: Array<[number, number, number, number, number, number]>,
  from: number,
  to: number,
): SeriesPoint[] {
  const out: SeriesPoint[] = [];
  for (const [minSeq, minT, minV, maxSeq, maxT, maxV] of rows) {
    const a = { seq: minSeq, t: minT, value: minV };
    const b = { seq: maxSeq, t: maxT, value: maxV };
    const pair = minSeq === maxSeq ? [a] : minSeq < maxSeq ? [a, b] : [b, a];
    for (const p of pair) if (p.seq >= from && p.seq <= to) out.push(p);
  }
  return out;
}
