import { describe, expect, it } from 'vitest';
import { useDemoApp } from '../helpers/demoApp.js';
import { keptTiles, rebuiltTiles } from '../helpers/tiles.js';
import { TILE_MERGE_ON_CONFLICT } from '../../server/db/tileMerge.js';
import { COPY_MIN_BATCH } from '../../server/services/ingest.js';
import { copyPathCounts } from '../../server/services/ingestCopy.js';

// Issue 15: the tile merge rule lives in one place (server/db/tileMerge.ts). The COPY path uses
// it, and the tile trigger stored by the migrations must carry the same clause word for word.
const demo = useDemoApp();
const squash = (s: string) => s.replace(/\s+/g, ' ').trim();
const batch = (from: number, to: number, value: (s: number) => number) =>
  Array.from({ length: to - from }, (_, i) => ({
    seq: from + i,
    t: from + i,
    value: value(from + i),
  }));

describe('the tile merge rule', () => {
  it('is the one the tile trigger runs', async () => {
    const res = await demo.t.db.pool.query<{ def: string }>(
      "SELECT pg_get_functiondef('driftbench_merge_tiles'::regproc) AS def",
    );
    // The whole clause, up to the end of the statement: not a prefix of a longer or shorter one.
    expect(squash(res.rows[0].def)).toContain(`${squash(TILE_MERGE_ON_CONFLICT)};`);
  });

  it('lets the COPY path rewrite only the tiles a batch changes, and they stay exact', async () => {
    const id = await demo.newCapture();
    const n = COPY_MIN_BATCH * 4;
    // Values 16e6 + 0…10 mHz; the next batch stays inside that range, so no tile above level 1
    // changes (a level-1 tile may still take new readings: the batches meet inside one).
    const copies = copyPathCounts.transactions;
    const first = await demo.postBinary(
      id,
      batch(0, n, (s) => 16e6 + (s % 11) * 1e-3),
    );
    expect(first.status).toBe(200);
    const version = async () =>
      (
        await demo.t.db.pool.query<{ level: number; v: string }>(
          'SELECT level, xmin::text AS v FROM reading_tiles WHERE capture_id = $1 AND level >= 2 ORDER BY level, bucket',
          [id],
        )
      ).rows;
    const before = await version();
    const inside = await demo.postBinary(
      id,
      batch(n, 2 * n, () => 16e6 + 5e-3),
    );
    expect(inside.status).toBe(200);
    expect(copyPathCounts.transactions - copies).toBe(2);
    const after = await version();
    // Every tile the first batch made is still the version it wrote (new buckets are new rows).
    const kept = new Map(after.map((r) => [`${r.level}`, r.v]));
    expect(before.filter((r) => r.level >= 5).every((r) => kept.get(`${r.level}`) === r.v)).toBe(
      true,
    );
    // A new highest value rewrites every level's covering tile.
    const high = await demo.postBinary(
      id,
      batch(2 * n, 3 * n, (s) => (s === 3 * n - 1 ? 16e6 + 1 : 16e6)),
    );
    expect(high.status).toBe(200);
    const top = (await version()).filter((r) => r.level >= 12);
    top.forEach((r) => expect(r.v).not.toBe(kept.get(`${r.level}`)));
    const open = await keptTiles(demo.t.db.pool, id);
    const rebuilt = await rebuiltTiles(demo.t.db.pool, id);
    const topRebuilt = Math.max(...rebuilt.map((r) => r.level as number));
    expect(open.filter((r) => r.level <= topRebuilt)).toEqual(rebuilt);
  });
});
