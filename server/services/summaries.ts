import type pg from 'pg';
import type { DriftModel } from '../../shared/analysis/index.js';
import type { Capture, Dut } from '../models/index.js';
import {
  defaultDrift,
  preparedFor,
  reduce,
  SUMMARY_VERSION,
  type CaptureSummary,
} from './captureAnalysis.js';

/**
 * The stored summary of a finished capture, or a fresh reduction of an open one, of a summary
 * stored by an older version (its shape and budget predate SUMMARY_VERSION; the readings never
 * change, so the recomputation is the same evidence read by today's rules), or with a drift model
 * other than the default. Its own module: comparisons and tilt checks both read it and one of
 * them imports the other.
 */
export async function summaryOf(
  pool: pg.Pool,
  c: Capture,
  dut: Dut | null,
  drift?: DriftModel,
): Promise<CaptureSummary> {
  const stored = c.summary as CaptureSummary | null;
  const custom = drift !== undefined && drift !== defaultDrift(c);
  if (c.state !== 'open' && stored && (stored.version ?? 0) >= SUMMARY_VERSION && !custom)
    return stored;
  return reduce(c, dut, await preparedFor(pool, c), custom ? { drift } : {});
}
