import type pg from 'pg';
import { Capture, Dut } from '../../server/models/index.js';
import { loadSeries } from '../../server/services/readings.js';
import { prepare, reduce } from '../../server/services/captureAnalysis.js';
import { sealOf } from '../../server/services/seal.js';
import { implausibleNote } from '../../shared/protocol/plausibility.js';
import type { DemoApp } from './demoApp.js';

/**
 * What finishing the capture stores, computed the former way, in one piece on the event loop
 * from the rows as stored: the summary of prepare + reduce for the capture as finished (with the
 * implausible-readings note), as JSON gives it back, and the seal of the rows' serialisation.
 * The finish tests compare what the sliced or worker computation stored with this.
 */
export async function onePieceFinish(pool: pg.Pool, id: number) {
  const series = await loadSeries(pool, id);
  const capture = (await Capture.findByPk(id))!;
  const dut = await Dut.findByPk(capture.dutId);
  capture.state = 'finished';
  const want = reduce(capture, dut, prepare(capture, series));
  const note = implausibleNote(series.flags);
  if (note) want.notes.push(note);
  return { summary: JSON.parse(JSON.stringify(want)), seal: sealOf(series) };
}

/**
 * An open capture (opened by the lead) holding `n` drifting, noisy readings with one far outlier
 * of `size` at seq `at`, stored straight into the table: the ingest has tests of its own, and
 * the finish tests only need the rows.
 */
export async function driftingCapture(demo: DemoApp, n: number, at: number, size: number) {
  const id = await demo.newCapture('lead');
  await demo.storeStraight(
    id,
    n,
    `16e6 + s * 1e-7 + sin(s * 0.7) * 2e-4 + CASE WHEN s = ${at} THEN ${size} ELSE 0 END`,
  );
  return id;
}
