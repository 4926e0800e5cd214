/**
 * The live series behind the bench, watch and replay: time and value in typed-array ring buffers
 * (no reactive arrays on the hot path), a windowed, min/max-decimated view for the chart, and
 * live statistics computed from the last ~100 000 readings at most once a second.
 */
import { onBeforeUnmount, shallowRef, type ShallowRef } from 'vue';
import { decimateMinMax } from '../../shared/analysis/decimate';
import { summarize } from '../../shared/analysis/summarize';
import { normalizedPhase } from '../../shared/analysis/phase';
import { secondDifferenceSum } from '../../shared/analysis/estimators';
import { maxM } from '../../shared/analysis/taus';

/** A fixed-capacity ring of (t, value) pairs; the oldest pair is dropped when full. */
export class RingSeries {
  readonly t: Float64Array;
  readonly v: Float64Array;
  /** Readings ever pushed (the ring holds the last min(total, capacity)). */
  total = 0;
  /** Readings whose flags were non-zero (garbled, timed out …). */
  flagged = 0;
  /** Readings known to precede the first one pushed but never held (a watch that starts late). */
  offset = 0;
  /** Readings pushed without a finite value (counted, never drawn or reduced). */
  unplotted = 0;

  constructor(readonly capacity: number) {
    this.t = new Float64Array(capacity);
    this.v = new Float64Array(capacity);
  }

  get length(): number {
    return Math.min(this.total, this.capacity);
  }

  push(t: number, v: number): void {
    const i = this.total % this.capacity;
    this.t[i] = t;
    this.v[i] = v;
    this.total++;
  }

  clear(): void {
    this.total = 0;
    this.flagged = 0;
    this.offset = 0;
    this.unplotted = 0;
  }

  /** Every reading of the capture so far: held, dropped from the ring, skipped at the start, or without a value. */
  get count(): number {
    return this.total + this.offset + this.unplotted;
  }

  /** The k-th held pair, oldest first (0 ≤ k < length). */
  index(k: number): number {
    return (this.total - this.length + k) % this.capacity;
  }

  tAt(k: number): number {
    return this.t[this.index(k)];
  }

  vAt(k: number): number {
    return this.v[this.index(k)];
  }

  /** Time of the newest reading (NaN when empty). */
  get lastT(): number {
    return this.length ? this.tAt(this.length - 1) : NaN;
  }

  /** First held index k with t ≥ time (binary search; times are non-decreasing). */
  lowerBound(time: number): number {
    let lo = 0;
    let hi = this.length;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if (this.tAt(mid) < time) lo = mid + 1;
      else hi = mid;
    }
    return lo;
  }

  /** Copies held pairs [from, to) into fresh contiguous arrays. */
  copy(from: number, to: number): { t: Float64Array; v: Float64Array } {
    const n = Math.max(0, to - from);
    const t = new Float64Array(n);
    const v = new Float64Array(n);
    for (let k = 0; k < n; k++) {
      const i = this.index(from + k);
      t[k] = this.t[i];
      v[k] = this.v[i];
    }
    return { t, v };
  }
}

export interface WindowView {
  t: Float64Array;
  v: Float64Array;
  /** Readings in the window before decimation. */
  count: number;
  decimated: boolean;
  /** The window's time range [start, end]. */
  start: number;
  end: number;
}

/**
 * The readings in a window of `span` seconds ending at `end` (the newest reading when omitted),
 * min/max-decimated to about `pixels` buckets when there are more readings than pixels.
 */
export function windowView(
  ring: RingSeries,
  span: number,
  pixels: number,
  end?: number,
): WindowView {
  const stop = end ?? ring.lastT;
  if (!ring.length || !Number.isFinite(stop)) {
    return {
      t: new Float64Array(0),
      v: new Float64Array(0),
      count: 0,
      decimated: false,
      start: 0,
      end: 0,
    };
  }
  const start = Number.isFinite(span) ? stop - span : -Infinity;
  const from = ring.lowerBound(start);
  let to = ring.lowerBound(stop);
  while (to < ring.length && ring.tAt(to) <= stop) to++;
  const { t, v } = ring.copy(from, to);
  const count = t.length;
  const buckets = Math.max(1, Math.floor(pixels));
  const startT = Number.isFinite(start) ? start : count ? t[0] : 0;
  if (count > buckets) {
    const d = decimateMinMax(t, v, buckets);
    return { t: d.t, v: d.v, count, decimated: d.t.length < count, start: startT, end: stop };
  }
  return { t, v, count, decimated: false, start: startT, end: stop };
}

export interface LiveStats {
  n: number;
  mean: number;
  sd: number;
  /** (mean − nominal)/nominal × 1e6, frequency only. */
  offsetPpm: number | null;
  /** OADEV at τ0, 10 τ0, 100 τ0 (null until enough data). */
  oadev: Array<{ tau: number; dev: number | null }>;
  /** Readings the statistics used (the last ≤ 100 000). */
  used: number;
  flagged: number;
}

/** Most readings the live statistics look at. */
export const LIVE_STATS_LIMIT = 100_000;

/**
 * Live statistics of the newest ≤ `limit` readings: n counts every reading ever pushed; mean, sd
 * and offset are of the used ones; OADEV at m = 1, 10, 100 of the fractional frequency against
 * the nominal (frequency captures only).
 */
export function computeLiveStats(
  ring: RingSeries,
  opts: { nominal: number | null; tau0: number; frequency: boolean; limit?: number },
): LiveStats {
  const limit = opts.limit ?? LIVE_STATS_LIMIT;
  const len = ring.length;
  const { v } = ring.copy(Math.max(0, len - limit), len);
  const taus = [1, 10, 100].map((m) => ({ tau: m * opts.tau0, dev: null as number | null }));
  const base: LiveStats = {
    n: ring.count,
    mean: NaN,
    sd: NaN,
    offsetPpm: null,
    oadev: taus,
    used: v.length,
    flagged: ring.flagged,
  };
  if (v.length === 0) return base;
  if (v.length === 1) return { ...base, mean: v[0] };
  const s = summarize(v);
  base.mean = s.mean;
  base.sd = s.sd;
  const nominal = opts.nominal ?? 0;
  if (opts.frequency && nominal > 0) {
    base.offsetPpm = ((s.mean - nominal) / nominal) * 1e6;
    if (v.length >= 3 && opts.tau0 > 0) {
      const y = new Float64Array(v.length);
      for (let i = 0; i < v.length; i++) y[i] = (v[i] - nominal) / nominal;
      // The bare estimator (NIST SP 1065 eq 11, the sum `stability` uses): the live panel
      // shows the deviations only, and the full analysis (noise identification, EDF and
      // intervals) cost a long task every second at 1,000 readings/s (issue 15).
      const u = normalizedPhase(y, opts.tau0, 'frequency');
      const top = maxM('oadev', u.length);
      [1, 10, 100].forEach((m, k) => {
        if (m > top) return;
        const terms = u.length - 2 * m;
        taus[k].dev = Math.sqrt(secondDifferenceSum(u, m, 1) / (2 * terms * m * m));
      });
    }
  }
  return base;
}

export interface LiveSeriesOptions {
  capacity?: number;
  nominal: () => number | null;
  tau0: () => number;
  frequency: () => boolean;
  /** Least time between statistics updates (ms). */
  statsEveryMs?: number;
}

export interface LiveSeries {
  ring: RingSeries;
  /** Bumped (at most once per animation frame) when readings arrive: the chart redraws on it. */
  version: ShallowRef<number>;
  stats: ShallowRef<LiveStats | null>;
  push(t: number, v: number, flags?: number): void;
  pushMany(readings: ArrayLike<{ t: number; value: number; flags?: number }>): void;
  clear(): void;
  /** Recomputes the statistics now (e.g. after a seek). */
  refreshStats(): void;
  dispose(): void;
}

/** A live series with throttled change notifications and once-a-second statistics. */
export function createLiveSeries(opts: LiveSeriesOptions): LiveSeries {
  const ring = new RingSeries(opts.capacity ?? 1 << 20);
  const version = shallowRef(0);
  const stats = shallowRef<LiveStats | null>(null);
  let dirty = false;
  let statsDirty = false;
  let raf: number | null = null;
  const every = opts.statsEveryMs ?? 1000;

  const schedule =
    typeof requestAnimationFrame === 'function'
      ? requestAnimationFrame
      : (cb: () => void) => setTimeout(cb, 16) as unknown as number;
  const cancel =
    typeof cancelAnimationFrame === 'function'
      ? cancelAnimationFrame
      : (id: number) => clearTimeout(id);

  function refreshStats() {
    statsDirty = false;
    try {
      stats.value = computeLiveStats(ring, {
        nominal: opts.nominal(),
        tau0: opts.tau0(),
        frequency: opts.frequency(),
      });
    } catch {
      // a series the analysis refuses (e.g. non-finite values): keep the last figures
    }
  }

  function touch() {
    dirty = true;
    statsDirty = true;
    if (raf === null) {
      raf = schedule(() => {
        raf = null;
        if (dirty) {
          dirty = false;
          version.value++;
          // The full statistics follow once a second; the counts never lag the footer.
          const s = stats.value;
          if (!s && ring.length) refreshStats();
          else if (s && (s.n !== ring.count || s.flagged !== ring.flagged))
            stats.value = { ...s, n: ring.count, flagged: ring.flagged };
        }
      });
    }
  }

  const statsTimer = setInterval(() => {
    if (statsDirty) refreshStats();
  }, every);

  return {
    ring,
    version,
    stats,
    push(t, v, flags = 0) {
      if (flags) ring.flagged++;
      if (Number.isFinite(v)) ring.push(t, v);
      else ring.unplotted++;
      touch();
    },
    pushMany(readings) {
      for (let i = 0; i < readings.length; i++) {
        const r = readings[i];
        if (r.flags) ring.flagged++;
        if (Number.isFinite(r.value)) ring.push(r.t, r.value);
        else ring.unplotted++;
      }
      if (readings.length) touch();
    },
    clear() {
      ring.clear();
      stats.value = null;
      touch();
    },
    refreshStats,
    dispose() {
      clearInterval(statsTimer);
      if (raf !== null) cancel(raf);
      raf = null;
    },
  };
}

/** {@link createLiveSeries} bound to the component's lifetime. */
export function useLiveSeries(opts: LiveSeriesOptions): LiveSeries {
  const s = createLiveSeries(opts);
  onBeforeUnmount(s.dispose);
  return s;
}
