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

/** The median of `sorted[0..n)`, sorted ascending. */
function median(sorted: Float64Array, n: number): number {
  return n % 2 ? sorted[(n - 1) >> 1] : (sorted[n / 2 - 1] + sorted[n / 2]) / 2;
}

/**
 * The order `Float64Array.prototype.sort` puts numbers in (ECMA-262, TypedArray SortCompare):
 * ascending, −0 before +0, NaN last. The window is kept sorted by it, so its median is the one a
 * sort of the window's values gives, bit for bit.
 */
function before(a: number, b: number): boolean {
  if (a < b) return true;
  if (a > b) return false;
  if (a === b) return a === 0 && 1 / a < 1 / b;
  return a === a && b !== b;
}

/** The first index of `xs[0..k)` (sorted by {@link before}) whose value is not before `v`. */
function lowerBound(xs: Float64Array, k: number, v: number): number {
  let lo = 0;
  let hi = k;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (before(xs[mid], v)) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * A running judge of plausibility for one capture. `seed` is the capture's latest accepted values
 * (oldest first); `check` judges one value and, when plausible, adds it to the window.
 *
 * The window is a ring of the last 32 accepted values (which one leaves next) and the same values
 * kept sorted: a push finds the leaving value and the new one's place by binary search and moves
 * at most 31 values. A refresh then reads the median off the sorted window, and the median
 * absolute deviation without a sort: the deviations |x − m| fall from the window's low end up to
 * m and rise from m to its high end, so the two runs are merged from m outwards up to the middle
 * rank. Nothing is allocated per reading, and m and s are the values a sort of copies gives, bit
 * for bit (tests/unit/plausibility.test.ts checks it against the rule written plainly).
 */
export class PlausibilityWindow {
  private readonly ring = new Float64Array(PLAUSIBILITY.window);
  /** Values in the ring (up to its length) and where the next one goes. */
  private count = 0;
  private next = 0;
  /** The window's values in the order of {@link before}: `sorted[0..count)`. */
  private readonly sorted = new Float64Array(PLAUSIBILITY.window);
  /** How many of the window's values are NaN or ±∞ (only a seed brings them). */
  private nonFinite = 0;
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
    const sorted = this.sorted;
    const k = this.count;
    const at = lowerBound(sorted, k, v);
    if (k < this.ring.length) {
      for (let i = k; i > at; i--) sorted[i] = sorted[i - 1];
      sorted[at] = v;
      this.count = k + 1;
    } else {
      // The ring is full: the value written PLAUSIBILITY.window pushes ago leaves.
      const old = this.ring[this.next];
      if (!Number.isFinite(old)) this.nonFinite--;
      const gone = lowerBound(sorted, k, old);
      if (at <= gone) {
        for (let i = gone; i > at; i--) sorted[i] = sorted[i - 1];
        sorted[at] = v;
      } else {
        for (let i = gone; i < at - 1; i++) sorted[i] = sorted[i + 1];
        sorted[at - 1] = v;
      }
    }
    if (!Number.isFinite(v)) this.nonFinite++;
    this.ring[this.next] = v;
    this.next = (this.next + 1) % this.ring.length;
    this.since++;
  }

  private refresh() {
    const k = this.count;
    const sorted = this.sorted;
    const m = median(sorted, k);
    this.m = m;
    this.since = 0;
    if (this.nonFinite > 0) {
      // A seed with NaN or ±∞: their deviations (NaN, ∞) break the two runs' order, so the
      // deviations are sorted as the rule says. (Finite values whose median overflows to ±∞ need
      // no care: every deviation is then ∞ either way.)
      const dev = k === this.dev.length ? this.dev : this.dev.subarray(0, k);
      for (let i = 0; i < k; i++) dev[i] = Math.abs(sorted[i] - m);
      dev.sort();
      this.s = median(dev, k);
      return;
    }
    // Left run: sorted[lo], lo = p−1 … 0, deviations rising; right run: sorted[hi], hi = p … k−1,
    // rising too. Merge them, smallest first, up to rank ⌊k/2⌋ (the upper middle one).
    let lo = lowerBound(sorted, k, m) - 1;
    let hi = lo + 1;
    const upper = k >> 1;
    let prev = 0;
    let cur = 0;
    for (let r = 0; r <= upper; r++) {
      prev = cur;
      if (hi >= k || (lo >= 0 && Math.abs(sorted[lo] - m) <= Math.abs(sorted[hi] - m))) {
        cur = Math.abs(sorted[lo] - m);
        lo--;
      } else {
        cur = Math.abs(sorted[hi] - m);
        hi++;
      }
    }
    this.s = k % 2 ? cur : (prev + cur) / 2;
  }

  /** The window's median as of the last refresh (0 before the first). */
  get median(): number {
    return this.m;
  }

  /** The window's median absolute deviation as of the last refresh (0 before the first). */
  get mad(): number {
    return this.s;
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
