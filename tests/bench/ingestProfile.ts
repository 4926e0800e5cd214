import path from 'node:path';
import os from 'node:os';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import { PROJECT_ROOT } from '../../server/index.js';
import { ingestReadings } from '../../server/services/ingest.js';
import { copyPathCounts } from '../../server/services/ingestCopy.js';
import { silentHub } from '../../server/services/liveHub.js';
import { findBadReading } from '../../shared/protocol/captures.js';
import { decodeReadingsF64, encodeReadingsF64 } from '../../shared/protocol/readingsBinary.js';
import { float8Array, int2Array, int4Array } from '../../server/db/binaryArrays.js';
import { startBenchServer } from './server.js';

// Where one stream's ingest time goes (issue 15): per batch of 5,000 readings, the body parse and
// check, each database statement of the ingest service (timed by wrapping the pool), the tile
// trigger (the same statements once with it disabled — a measurement only), the HTTP round trip,
// and a COPY of the same rows as the anchor. `npm run bench -- ingestProfile`.
const N = 200_000;
const BATCH = 5_000;
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
const sum = (xs: number[]) => xs.reduce((a, b) => a + b, 0);

type Row = { seq: number; t: number; value: number };
const rows = (n: number, offset = 0): Row[] =>
  Array.from({ length: n }, (_, i) => ({
    seq: offset + i,
    t: (offset + i) * 0.01,
    value: 16e6 + Math.sin(offset + i) * 1e-3,
  }));

/** What a statement is, for the split. */
function statementKey(text: string): string {
  if (/^\s*WITH cap/.test(text))
    return text.includes('ON CONFLICT') ? 'ingest statement (conflict-safe)' : 'ingest statement';
  if (/^\s*WITH tiles/.test(text)) return 'COPY path: tiles + counters + COMMIT';
  if (/^\s*BEGIN; SELECT c\.state/.test(text)) return 'COPY path: BEGIN + lock + checks';
  if (/^\s*COPY/.test(text)) return 'COPY path: COPY (binary)';
  if (text.includes('FROM captures c JOIN duts')) return 'study-lock check';
  if (/^\s*SELECT c\.nominal/.test(text)) return 'plausibility seed (once)';
  return text.trim().slice(0, 40);
}

/**
 * A pool whose queries (and those of the clients it lends) record their time, keyed by what the
 * statement is; a COPY is timed from its start to the end of its stream.
 */
function timedPool(pool: pg.Pool): { pool: pg.Pool; times: Map<string, number[]> } {
  const times = new Map<string, number[]>();
  const note = (key: string, t0: number) => {
    const list = times.get(key) ?? [];
    list.push(performance.now() - t0);
    times.set(key, list);
  };
  const timedQuery =
    (target: { query: (...a: unknown[]) => unknown }) => (text: unknown, values?: unknown[]) => {
      const t0 = performance.now();
      if (typeof text !== 'string') {
        // A COPY stream (pg-copy-streams): timed until it finishes or fails.
        const stream = target.query(text) as NodeJS.EventEmitter;
        const sql = (text as { text?: string }).text ?? 'COPY';
        stream.once('finish', () => note(statementKey(sql), t0));
        return stream;
      }
      return (target.query(text, values) as Promise<unknown>).finally(() =>
        note(statementKey(text), t0),
      );
    };
  const wrapped = Object.create(pool) as pg.Pool;
  const w = wrapped as unknown as Record<string, unknown>;
  w.query = timedQuery(pool as never);
  w.connect = async () => {
    const t0 = performance.now();
    const client = await pool.connect();
    const own = client.query;
    const proxy = Object.create(client) as pg.PoolClient;
    (proxy as unknown as Record<string, unknown>).query = timedQuery({
      query: (...a: unknown[]) => (own as (...x: unknown[]) => unknown).apply(client, a),
    });
    (proxy as unknown as Record<string, unknown>).release = (err?: Error) => {
      note('COPY path: connect → release', t0);
      client.release(err);
    };
    return proxy;
  };
  return { pool: wrapped, times };
}

export async function benchIngestProfile(): Promise<void> {
  const bench = await startBenchServer();
  const pool = new pg.Pool({ connectionString: bench.url, max: 1 });
  const batches = N / BATCH;
  const f1 = (x: number) => x.toFixed(2).padStart(7);
  try {
    console.log(
      `\nIssue 15 — one stream's ingest, per batch of ${BATCH.toLocaleString('en-US')} (load ${os.loadavg()[0].toFixed(2)})`,
    );
    const jsonBodies = Array.from({ length: batches }, (_, b) =>
      JSON.stringify({ readings: rows(BATCH, b * BATCH) }),
    );
    const binBodies = Array.from({ length: batches }, (_, b) =>
      Buffer.from(encodeReadingsF64(rows(BATCH, b * BATCH))),
    );

    // 1. In this process, no database: parse and check, and the binary parameters.
    const parse: number[] = [];
    const check: number[] = [];
    const decode: number[] = [];
    const params: number[] = [];
    for (let b = 0; b < batches; b++) {
      let t0 = performance.now();
      const body = JSON.parse(jsonBodies[b]) as { readings: Row[] };
      parse.push(performance.now() - t0);
      t0 = performance.now();
      findBadReading(body.readings);
      check.push(performance.now() - t0);
      t0 = performance.now();
      const cols = decodeReadingsF64(binBodies[b]);
      decode.push(performance.now() - t0);
      if ('reason' in cols) throw new Error(cols.reason);
      t0 = performance.now();
      int4Array(cols.seq);
      float8Array(cols.t);
      float8Array(cols.value);
      int2Array(cols.flags);
      params.push(performance.now() - t0);
    }
    console.log(`  JSON.parse of the body        ${f1(median(parse))} ms`);
    console.log(`  findBadReading (checks)       ${f1(median(check))} ms`);
    console.log(`  binary body → columns         ${f1(median(decode))} ms`);
    console.log(`  four binary array parameters  ${f1(median(params))} ms`);

    // 2. The ingest service in this process against the bench database, statement by statement.
    const user = { id: 0, role: 'technician' as const };
    const who = await pool.query<{ id: number }>(
      "SELECT id FROM users WHERE role = 'technician' ORDER BY id LIMIT 1",
    );
    user.id = who.rows[0].id;
    // `inFlight` batches at once, each started when one before it answers (as the uploader's
    // pipelining does): batches that queue together share one COPY transaction (ingestCopy.ts).
    const service = async (label: string, inFlight = 1) => {
      const id = await bench.newCapture();
      const { pool: tp, times } = timedPool(pool);
      const total: number[] = [];
      const before = { ...copyPathCounts };
      const t0 = performance.now();
      let next = 0;
      const lane = async () => {
        while (next < batches) {
          const b = next++;
          const s = performance.now();
          await ingestReadings(tp, silentHub, user, id, binBodies[b]);
          total.push(performance.now() - s);
        }
      };
      await Promise.all(Array.from({ length: inFlight }, lane));
      const rate = N / ((performance.now() - t0) / 1000);
      const txs = copyPathCounts.transactions - before.transactions;
      const held = copyPathCounts.batches - before.batches;
      console.log(
        `  ${label}: ${Math.round(rate).toLocaleString('en-US')} readings/s, ${f1(median(total))} ms a batch in the service (${held} batches by COPY in ${txs} transactions), of which:`,
      );
      for (const [key, list] of times)
        console.log(
          `      ${key.padEnd(34)} ${f1(median(list))} ms median (${list.length}×, ${f1(sum(list) / batches)} ms a batch on average)`,
        );
      return rate;
    };
    const fk = await pool.query<{ conname: string; def: string }>(
      `SELECT conname, pg_get_constraintdef(oid) AS def FROM pg_constraint
       WHERE conrelid = 'readings'::regclass AND contype = 'f'`,
    );
    await service(
      `service as it runs (${fk.rows.length ? 'readings → captures foreign key checked per row' : 'no per-row foreign key check'})`,
    );
    if (fk.rows.length) {
      // Each row's foreign-key check, measured by dropping the key for one run (put back after).
      await pool.query(`ALTER TABLE readings DROP CONSTRAINT ${fk.rows[0].conname}`);
      try {
        await service('service without the foreign key (measurement only)');
      } finally {
        await pool.query(
          `ALTER TABLE readings ADD CONSTRAINT ${fk.rows[0].conname} ${fk.rows[0].def} NOT VALID`,
        );
      }
    }
    await service('service, 3 batches in flight', 3);
    await pool.query('ALTER TABLE readings DISABLE TRIGGER readings_merge_tiles');
    try {
      await service('service, trigger disabled (measurement only)');
    } finally {
      await pool.query('ALTER TABLE readings ENABLE TRIGGER readings_merge_tiles');
    }

    // 3. Through HTTP: the whole request, JSON and binary, and a bare round trip.
    const headers = await bench.headers('technician');
    const http = async (binary: boolean) => {
      const id = await bench.newCapture();
      const per: number[] = [];
      const t0 = performance.now();
      for (let b = 0; b < batches; b++) {
        const s = performance.now();
        const res = await fetch(`${bench.base}/api/captures/${id}/readings`, {
          method: 'POST',
          headers: binary
            ? { ...headers, 'content-type': 'application/vnd.driftbench.readings+f64' }
            : headers,
          body: binary ? binBodies[b] : jsonBodies[b],
        });
        if (!res.ok) throw new Error(`ingest answered ${res.status}`);
        await res.arrayBuffer();
        per.push(performance.now() - s);
      }
      return { rate: N / ((performance.now() - t0) / 1000), ms: median(per) };
    };
    const json = await http(false);
    const bin = await http(true);
    const trips: number[] = [];
    for (let i = 0; i < 50; i++) {
      const s = performance.now();
      await (await fetch(`${bench.base}/api/auth/me`, { headers })).arrayBuffer();
      trips.push(performance.now() - s);
    }
    console.log(
      `  HTTP, JSON body               ${f1(json.ms)} ms a batch (${Math.round(json.rate).toLocaleString('en-US')} readings/s)`,
    );
    console.log(
      `  HTTP, binary body             ${f1(bin.ms)} ms a batch (${Math.round(bin.rate).toLocaleString('en-US')} readings/s)`,
    );
    console.log(
      `  HTTP round trip, GET /api/auth/me ${f1(median(trips))} ms (authentication's user query included)`,
    );

    // 4. The anchor: COPY of the same rows into a logged table with the same primary key.
    await pool.query(
      'CREATE TABLE bench_copy_profile (LIKE readings INCLUDING DEFAULTS INCLUDING CONSTRAINTS INCLUDING INDEXES)',
    );
    const client = await pool.connect();
    try {
      const t0 = performance.now();
      const stream = client.query(
        copyFrom('COPY bench_copy_profile (capture_id, seq, t, value, flags) FROM STDIN'),
      );
      const lines = function* () {
        for (let b = 0; b < N; b += BATCH)
          yield rows(BATCH, b)
            .map((r) => `1\t${r.seq}\t${r.t}\t${r.value}\t0\n`)
            .join('');
      };
      await pipeline(Readable.from(lines()), stream);
      const ms = performance.now() - t0;
      console.log(
        `  COPY anchor                   ${f1(ms / batches)} ms a batch (${Math.round(N / (ms / 1000)).toLocaleString('en-US')} rows/s)`,
      );
    } finally {
      client.release();
    }
  } finally {
    await pool.end();
    await bench.stop();
  }
}

if (
  process.argv[1] &&
  path.resolve(process.argv[1]) === path.resolve(PROJECT_ROOT, 'tests/bench/ingestProfile.ts')
) {
  await benchIngestProfile();
}
