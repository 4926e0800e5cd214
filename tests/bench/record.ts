import { chmodSync, mkdtempSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { performance } from 'node:perf_hooks';
import { destroyCluster, freePort, startCluster } from '../../server/db/cluster.js';
import { ensureDatabase } from '../../server/db/connection.js';
import { prepareDatabase } from '../../server/db/prepare.js';
import { audit, verifyAuditChain } from '../../server/services/audit.js';
import { checkSeal, sealOf } from '../../server/services/seal.js';

// The record's costs on a real PostgreSQL: sealing and re-checking a 1,000,000-reading capture,
// chained audit writes (one writer and four at once, serialised by the chain's lock), and
// verifying the whole chain. Printed, never asserted.
const pct = (xs: number[], p: number) =>
  [...xs].sort((a, b) => a - b)[Math.min(xs.length - 1, Math.floor(xs.length * p))];

export async function benchRecord(): Promise<void> {
  console.log('\nRecord (seals, audit chain)');
  const tmp = mkdtempSync(path.join(os.tmpdir(), 'driftbench-bench-record-'));
  chmodSync(tmp, 0o755);
  const cluster = startCluster(path.join(tmp, 'pg'), await freePort(), () => {});
  try {
    await ensureDatabase(cluster.url('postgres'), 'bench');
    const db = await prepareDatabase(cluster.url('bench'), { demo: true });
    const n = 1_000_000;
    const series = {
      seq: new Int32Array(n),
      t: new Float64Array(n),
      value: new Float64Array(n),
      flags: new Int16Array(n),
    };
    for (let i = 0; i < n; i++) {
      series.seq[i] = i;
      series.t[i] = i * 0.1;
      series.value[i] = 16e6 + Math.sin(i) * 1e-3;
    }
    let t0 = performance.now();
    sealOf(series);
    console.log(
      `  seal of 1,000,000 readings in memory        ${(performance.now() - t0).toFixed(0).padStart(6)} ms`,
    );

    const { rows } = await db.pool.query(
      `INSERT INTO captures (dut_id, checkpoint_id, quantity, unit, gate_time, state, started_at, created_at, updated_at)
       VALUES ((SELECT min(id) FROM duts), (SELECT min(id) FROM checkpoints), 'frequency', 'Hz', 0.1, 'finished', now(), now(), now()) RETURNING id`,
    );
    const id = rows[0].id as number;
    await db.pool.query(
      `INSERT INTO readings (capture_id, seq, t, value, flags)
       SELECT $1, g, g * 0.1, 16e6 + sin(g) * 1e-3, 0 FROM generate_series(0, $2 - 1) g`,
      [id, n],
    );
    await db.pool.query('UPDATE captures SET seal_sha256 = $2 WHERE id = $1', [id, '0'.repeat(64)]);
    t0 = performance.now();
    await checkSeal(db.pool, id);
    console.log(
      `  seal check of a stored 1,000,000-reading capture ${(performance.now() - t0).toFixed(0).padStart(4)} ms (hashed inside PostgreSQL)`,
    );

    const one: number[] = [];
    for (let i = 0; i < 300; i++) {
      const s = performance.now();
      await audit(null, 'bench.event', 'bench', i, { i, from: i, to: i + 1 });
      one.push(performance.now() - s);
    }
    console.log(
      `  audit write, one writer                      p50 ${pct(one, 0.5).toFixed(2)} ms, p95 ${pct(one, 0.95).toFixed(2)} ms`,
    );
    const four: number[] = [];
    t0 = performance.now();
    await Promise.all(
      Array.from({ length: 4 }, async (_, w) => {
        for (let i = 0; i < 150; i++) {
          const s = performance.now();
          await audit(null, 'bench.event', 'bench', w * 1000 + i, { w, i });
          four.push(performance.now() - s);
        }
      }),
    );
    const secs = (performance.now() - t0) / 1000;
    console.log(
      `  audit write, four writers at once            p50 ${pct(four, 0.5).toFixed(2)} ms, p95 ${pct(four, 0.95).toFixed(2)} ms, ${(600 / secs).toFixed(0)} events/s`,
    );
    // Pad the chain to 10,000 events, then verify it end to end.
    for (let i = 0; i < 9_100; i++) await audit(null, 'bench.fill', 'bench', i);
    t0 = performance.now();
    const v = await verifyAuditChain();
    console.log(
      `  verify the chain of ${v.checked} events              ${(performance.now() - t0).toFixed(0).padStart(6)} ms (ok: ${v.ok})`,
    );
    await db.close();
  } finally {
    destroyCluster(cluster);
  }
}

if (
  process.argv[1] &&
  path.resolve(process.argv[1]).endsWith(path.join('tests', 'bench', 'record.ts'))
) {
  await benchRecord();
}
