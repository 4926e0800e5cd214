import { onBeforeUnmount, ref, shallowRef } from 'vue';
import { getReadings, type ReadingOut } from '../api/captures';

/** Points asked of the server for any view of the chart (min/max decimated beyond that). */
export const SERIES_MAX_POINTS = 2000;
/**
 * Ranges up to this many readings are fetched whole: the server's min/max tiles group 64 readings
 * at their finest level, so a 3000-reading range would otherwise come back as under 100 points.
 */
export const SERIES_RAW_LIMIT = 10_000;

/** maxPoints for a seq range: every reading when the range is small, else ~2000 min/max points. */
export function maxPointsFor(span: number): number {
  return span <= SERIES_RAW_LIMIT ? SERIES_RAW_LIMIT : SERIES_MAX_POINTS;
}
const REFINE_DELAY_MS = 250;

/** A window of readings as the chart draws it. */
export interface SeriesWindow {
  seq: Int32Array;
  t: Float64Array;
  value: Float64Array;
  flags: Int16Array;
  /** True when the server min/max-decimated this window. */
  decimated: boolean;
}

export function toWindow(readings: ReadingOut[], decimated: boolean): SeriesWindow {
  const n = readings.length;
  const w: SeriesWindow = {
    seq: new Int32Array(n),
    t: new Float64Array(n),
    value: new Float64Array(n),
    flags: new Int16Array(n),
    decimated,
  };
  for (let i = 0; i < n; i++) {
    const r = readings[i];
    w.seq[i] = r.seq;
    w.t[i] = r.t;
    w.value[i] = r.value;
    w.flags[i] = r.flags ?? 0;
  }
  return w;
}

/** Index of the last element ≤ x in a sorted array (0 when none). */
function floorIndex(a: Float64Array, x: number): number {
  let lo = 0;
  let hi = a.length - 1;
  let best = 0;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (a[mid] <= x) {
      best = mid;
      lo = mid + 1;
    } else hi = mid - 1;
  }
  return best;
}

/**
 * The seq range covering times tMin…tMax in a window, widened by one point on each side so the
 * line runs to the chart's edges.
 */
export function seqRangeFor(
  w: SeriesWindow,
  tMin: number,
  tMax: number,
): { from: number; to: number } | null {
  if (w.t.length === 0) return null;
  const a = Math.max(0, floorIndex(w.t, tMin) - 1);
  const b = Math.min(w.t.length - 1, floorIndex(w.t, tMax) + 2);
  let from = Infinity;
  let to = -Infinity;
  // Decimated windows hold min/max pairs whose seqs are not monotonic within a bucket.
  for (let i = a; i <= b; i++) {
    from = Math.min(from, w.seq[i]);
    to = Math.max(to, w.seq[i]);
  }
  return { from, to };
}

/**
 * Chart data from a window: x = t, y = value or offset in ppm from `nominal` (`ppm` true).
 * Flagged readings are left out of the line and listed apart; between non-consecutive seqs of an
 * undecimated window a null keeps the gap a gap.
 */
export function chartColumns(w: SeriesWindow, opts: { nominal: number | null; ppm: boolean }) {
  const x: number[] = [];
  const y: Array<number | null> = [];
  /** The seq of each x (−1 at a gap's null), for the hover readout. */
  const seqs: number[] = [];
  const flaggedT: number[] = [];
  const scale =
    opts.ppm && opts.nominal
      ? (v: number) => ((v - opts.nominal!) / opts.nominal!) * 1e6
      : (v: number) => v;
  let prevSeq = -1;
  let prevT = NaN;
  for (let i = 0; i < w.seq.length; i++) {
    if (w.flags[i] !== 0) {
      flaggedT.push(w.t[i]);
      // A garbled reading was still received: the line runs past it, no gap.
      prevSeq = w.seq[i];
      continue;
    }
    if (!w.decimated && prevSeq >= 0 && w.seq[i] - prevSeq > 1 && w.t[i] > prevT) {
      x.push((prevT + w.t[i]) / 2);
      y.push(null);
      seqs.push(-1);
    }
    x.push(w.t[i]);
    y.push(scale(w.value[i]));
    seqs.push(w.seq[i]);
    prevSeq = w.seq[i];
    prevT = w.t[i];
  }
  return { x, y, seqs, flaggedT };
}

/**
 * A stored capture's readings for the time-series chart: an overview decimated to ~2000 points,
 * and, when the user zooms, the visible seq range fetched again (debounced) so a zoom into a
 * long capture reaches the raw readings.
 */
export function useCaptureSeries(captureId: () => number, readingCount: () => number) {
  const overview = shallowRef<SeriesWindow | null>(null);
  const current = shallowRef<SeriesWindow | null>(null);
  const loading = ref(false);
  const refining = ref(false);
  const error = shallowRef<unknown>(null);
  let controller: AbortController | null = null;
  let timer: ReturnType<typeof setTimeout> | null = null;
  let generation = 0;

  function abort(): void {
    controller?.abort();
    controller = new AbortController();
  }

  async function load(): Promise<void> {
    const mine = ++generation;
    abort();
    loading.value = true;
    error.value = null;
    try {
      const page = await getReadings(
        captureId(),
        { maxPoints: maxPointsFor(readingCount()) },
        { signal: controller!.signal },
      );
      if (mine !== generation) return;
      overview.value = toWindow(page.readings, page.decimated);
      current.value = overview.value;
    } catch (cause) {
      if (mine === generation && !(cause instanceof DOMException && cause.name === 'AbortError'))
        error.value = cause;
    } finally {
      if (mine === generation) loading.value = false;
    }
  }

  /** The visible time range changed: show the overview again, or fetch that range in detail. */
  function refine(tMin: number, tMax: number): void {
    if (timer) clearTimeout(timer);
    timer = setTimeout(() => void doRefine(tMin, tMax), REFINE_DELAY_MS);
  }

  async function doRefine(tMin: number, tMax: number): Promise<void> {
    const all = overview.value;
    const base = current.value;
    if (!all || !base || all.t.length === 0) return;
    const full = tMin <= all.t[0] && tMax >= all.t[all.t.length - 1];
    if (full) {
      if (current.value !== all) current.value = all;
      return;
    }
    // A window already holding every reading of the range needs nothing more.
    if (!base.decimated && base.t[0] <= tMin && base.t[base.t.length - 1] >= tMax) return;
    const range = seqRangeFor(base, tMin, tMax);
    if (!range) return;
    const mine = ++generation;
    abort();
    refining.value = true;
    try {
      const page = await getReadings(
        captureId(),
        { from: range.from, to: range.to, maxPoints: maxPointsFor(range.to - range.from + 1) },
        { signal: controller!.signal },
      );
      if (mine === generation) current.value = toWindow(page.readings, page.decimated);
    } catch (cause) {
      if (mine === generation && !(cause instanceof DOMException && cause.name === 'AbortError'))
        error.value = cause;
    } finally {
      if (mine === generation) refining.value = false;
    }
  }

  onBeforeUnmount(() => {
    if (timer) clearTimeout(timer);
    controller?.abort();
  });

  return { overview, current, loading, refining, error, load, refine };
}
