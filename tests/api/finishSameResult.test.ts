import { describe, expect, it } from 'vitest';
import { useDemoApp } from '../helpers/demoApp.js';
import { onePieceFinish } from '../helpers/finishReference.js';
import { expectTilesAsRebuilt } from '../helpers/tiles.js';
import { checkSeal } from '../../server/services/seal.js';
import type { ReadingIn } from '../../shared/protocol/captures.js';

// Issue 15, cost growth: finish no longer rebuilds the tiles and computes the summary and the seal
// in steps with turns of the event loop between them (server/services/finish.ts). What it stores
// must be what the former one-piece computation gave: the summary of prepare + reduce over all
// the stored rows, the seal of their serialisation (checked again inside PostgreSQL), and tiles
// equal to a rebuild from the rows.
const demo = useDemoApp();

/** A drifting, noisy series with one far outlier (so the outlier step is exercised). */
const readings = (n: number): ReadingIn[] =>
  Array.from({ length: n }, (_, seq) => ({
    seq,
    t: seq,
    value: 16e6 + seq * 1e-6 + Math.sin(seq * 0.7) * 2e-4 + (seq === 1234 ? 5 : 0),
  }));

describe('finishing a capture', () => {
  it('stores the same summary, seal and tiles as computing them in one piece from the rows', async () => {
    const id = await demo.newCapture();
    const sent = readings(6000);
    for (let i = 0; i < sent.length; i += 1500) {
      const res = await demo.postReadings(id, sent.slice(i, i + 1500));
      expect(res.status).toBe(200);
    }
    // The one-piece computation, as finish did it before, on the rows as stored.
    const want = await onePieceFinish(demo.t.db.pool, id);

    // Finish answers 200 and leaves the tiles ingest kept as they were, equal to a rebuild from
    // the rows.
    await expectTilesAsRebuilt(demo, id);
    const row = await demo.t.db.pool.query(
      'SELECT state, summary, seal_sha256, reading_count, highest_seq FROM captures WHERE id = $1',
      [id],
    );
    expect(row.rows[0].state).toBe('finished');
    expect(row.rows[0].reading_count).toBe(6000);
    expect(row.rows[0].highest_seq).toBe(5999);
    expect(row.rows[0].summary).toEqual(want.summary);
    expect(want.summary.counts.outliers).toBeGreaterThan(0);
    expect(row.rows[0].seal_sha256).toBe(want.seal);
    // The digest recomputed by PostgreSQL from the rows (seal.ts, SEAL_SQL) agrees.
    expect((await checkSeal(demo.t.db.pool, id)).verified).toBe(true);
  });
});
