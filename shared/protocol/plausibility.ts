/**
 * Implausible readings, flagged by the server at ingest (bit `ReadingFlag.implausible`). One
 * absurd number — a counter's 1e308, a garbled line that happened to parse — must not block a
 * capture's analysis or its finish; it is kept, flagged and left out of the analysis.
 *
 * The rule (our own, common practice, no source; shown to the user beside the flag counts):
 *   1. magnitude: |v| > 1e15 is implausible for every quantity Driftbench records;
 *   2. nominal: when the capture has a nominal value N > 0, |v − N| > N (outside 0…2N);
 *   3. running median: once 8 readings have been accepted, with m the median and s the median
 *      absolute deviation of the last 32 accepted readings, |v − m| > 10⁴·s and
 *      |v − m| > 10⁻³·|m| (both must hold, so a quiet source's ordinary step is never flagged).
 */

export const PLAUSIBILITY = {
  maxMagnitude: 1e15,
  nominalFactor: 1,
  window: 32,
  minWindow: 8,
  madFactor: 1e4,
  relativeFloor: 1e-3,
  /** The median is refreshed every this many accepted readings (a cost bound on big batches). */
  refreshEvery: 8,
} as const;

/** The rule in one sentence, for the capture page and the API notes. */
export const IMPLAUSIBLE_RULE_TEXT =
  'flagged implausible at ingest: |value| > 1e15, or more than 100 % away from the nominal, or more than ' +
  '10 000 median absolute deviations and 0.1 % away from the median of the previous 32 readings';

function median(sorted: Float64Array): number {
  const n = sorted.length;
  return n % 2 ? sorted[(n - 1) >> 1] : (sorted[n / 2 - 1] + sorted[n / 2]) / 2;
}

/**
 * A running judge of plausibility for one capture. `seed` is the capture's latest accepted values
 * (oldest first); `check` judges one value and, when plausible, adds it to the window.
 *
 * The window is a ring of the last 32 accepted values, and a refresh sorts copies in two buffers
 * made once: the ingest judges every reading of a batch, so nothing is allocated per reading.
 */
export class PlausibilityWindow {
  private readonly ring = new Float64Array(PLAUSIBILITY.window);
  /** Values in the ring (up to its length) and where the next one goes. */
  private count = 0;
  private next = 0;
  private readonly sorted = new Float64Array(PLAUSIBILITY.window);
  private readonly dev = new Float64Array(PLAUSIBILITY.window);
  private since = Infinity;
  private m = 0;
  private s = 0;

  constructor(
    private readonly nominal: number | null,
    seed: ArrayLike<number> = [],
  ) {
    for (let i = 0; i < seed.length; i++) this.push(seed[i]);
  }

  private push(v: number) {
    this.ring[this.next] = v;
    this.next = (this.next + 1) % this.ring.length;
    if (this.count < this.ring.length) this.count++;
    this.since++;
  }

  private refresh() {
    const k = this.count;
    // The window's order does not matter to a median: the ring is copied as it lies.
    const sorted = k === this.sorted.length ? this.sorted : this.sorted.subarray(0, k);
    sorted.set(k === this.ring.length ? this.ring : this.ring.subarray(0, k));
    sorted.sort();
    this.m = median(sorted);
    const dev = k === this.dev.length ? this.dev : this.dev.subarray(0, k);
    for (let i = 0; i < k; i++) dev[i] = Math.abs(sorted[i] - this.m);
    dev.sort();
    this.s = median(dev);
    this.since = 0;
  }

  /** True when `v` is plausible (and then it joins the window); false when it is to be flagged. */
  check(v: number): boolean {
    if (!Number.isFinite(v) || Math.abs(v) > PLAUSIBILITY.maxMagnitude) return false;
    const n = this.nominal;
    if (n !== null && n > 0 && Math.abs(v - n) > PLAUSIBILITY.nominalFactor * n) return false;
    if (this.count >= PLAUSIBILITY.minWindow) {
      if (this.since >= PLAUSIBILITY.refreshEvery) this.refresh();
      const d = Math.abs(v - this.m);
      if (d > PLAUSIBILITY.madFactor * this.s && d > PLAUSIBILITY.relativeFloor * Math.abs(this.m))
        return false;
    }
    this.push(v);
    return true;
  }
}

/** The note shown with an analysis when some readings carry the implausible flag (bit 5), or null. */
export function implausibleNote(flags: ArrayLike<number>): string | null {
  let k = 0;
  for (let i = 0; i < flags.length; i++) if (flags[i] & (1 << 5)) k++;
  return k
    ? `${k} reading(s) ${IMPLAUSIBLE_RULE_TEXT}; kept in the record, left out of the analysis.`
    : null;
}
