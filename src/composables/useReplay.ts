/**
 * Replay of a stored capture through the live components: a clock in capture seconds that runs
 * at 1×…1000× of wall time, pages of readings fetched by seq range ahead of the play head, and a
 * feeder that hands the live series every reading whose t the clock has passed.
 */
import { onBeforeUnmount, reactive } from 'vue';
import { getReadings, type ReadingOut } from '../api/captures';
import type { LiveSeries } from './useLiveSeries';

export const REPLAY_SPEEDS = [1, 10, 100, 1000] as const;
export type ReplaySpeed = (typeof REPLAY_SPEEDS)[number];

/** A play head in capture seconds: position = base + (now − since)·speed while playing. */
export class ReplayClock {
  private base = 0;
  private since = 0;
  playing = false;
  speed: number;

  constructor(
    private readonly now: () => number = () => performance.now(),
    speed = 1,
    /** Where the capture ends, s; the clock stops there. */
    public duration = Infinity,
    /** Where the capture begins, s. */
    public origin = 0,
  ) {
    this.speed = speed;
    this.base = origin;
  }

  /** The play head, s of capture time, within [origin, duration]. */
  position(): number {
    const p = this.playing
      ? this.base + ((this.now() - this.since) / 1000) * this.speed
      : this.base;
    return Math.min(Math.max(p, this.origin), this.duration);
  }

  get ended(): boolean {
    return this.position() >= this.duration;
  }

  play(): void {
    const ended = this.ended;
    if (this.playing && !ended) return;
    if (ended) this.base = this.origin;
    this.since = this.now();
    this.playing = true;
  }

  pause(): void {
    if (!this.playing) return;
    this.base = this.position();
    this.playing = false;
  }

  seek(position: number): void {
    this.base = Math.min(Math.max(position, this.origin), this.duration);
    this.since = this.now();
  }

  setSpeed(speed: number): void {
    if (!(speed > 0)) throw new RangeError('speed must be positive');
    this.base = this.position();
    this.since = this.now();
    this.speed = speed;
  }
}

interface Page {
  seq: Int32Array;
  t: Float64Array;
  v: Float64Array;
  flags: Uint16Array;
}

export type FetchPage = (from: number, to: number) => Promise<ReadingOut[]>;

export interface ReplayOptions {
  series: LiveSeries;
  /** Readings per request (a seq range). */
  pageSize?: number;
  fetchPage: FetchPage;
  now?: () => number;
  /** Feed interval (ms). */
  tickMs?: number;
}

export interface ReplayState {
  ready: boolean;
  playing: boolean;
  speed: number;
  position: number;
  origin: number;
  duration: number;
  /** Waiting for a page the play head has reached. */
  buffering: boolean;
  ended: boolean;
  error: string | null;
  pagesLoaded: number;
}

function toPage(rows: ReadingOut[]): Page {
  const n = rows.length;
  const p: Page = {
    seq: new Int32Array(n),
    t: new Float64Array(n),
    v: new Float64Array(n),
    flags: new Uint16Array(n),
  };
  for (let i = 0; i < n; i++) {
    p.seq[i] = rows[i].seq;
    p.t[i] = rows[i].t;
    p.v[i] = rows[i].value;
    p.flags[i] = rows[i].flags ?? 0;
  }
  return p;
}

export function createReplay(opts: ReplayOptions) {
  const size = opts.pageSize ?? 20_000;
  const clock = new ReplayClock(opts.now);
  const state = reactive<ReplayState>({
    ready: false,
    playing: false,
    speed: 1,
    position: 0,
    origin: 0,
    duration: 0,
    buffering: false,
    ended: false,
    error: null,
    pagesLoaded: 0,
  });
  const pages = new Map<number, Page>();
  const loading = new Map<number, Promise<Page>>();
  let lastPage = 0;
  let cursor = { page: 0, index: 0 };
  let timer: ReturnType<typeof setInterval> | null = null;

  function load(p: number): Promise<Page> {
    const have = pages.get(p);
    if (have) return Promise.resolve(have);
    let pending = loading.get(p);
    if (!pending) {
      pending = opts.fetchPage(p * size, (p + 1) * size - 1).then(
        (rows) => {
          const page = toPage(rows);
          pages.set(p, page);
          loading.delete(p);
          state.pagesLoaded = pages.size;
          return page;
        },
        (err) => {
          loading.delete(p);
          throw err;
        },
      );
      loading.set(p, pending);
    }
    return pending;
  }

  function prefetch() {
    for (let p = cursor.page; p <= Math.min(lastPage, cursor.page + 2); p++) {
      if (!pages.has(p))
        load(p).catch((err) => (state.error = String(err instanceof Error ? err.message : err)));
    }
  }

  /** Feeds every reading with t ≤ the play head; returns false when it waits for a page. */
  function feed(position: number): boolean {
    for (;;) {
      const page = pages.get(cursor.page);
      if (!page) return cursor.page > lastPage;
      const { t, v, flags } = page;
      let i = cursor.index;
      while (i < t.length && t[i] <= position) {
        opts.series.push(t[i], v[i], flags[i]);
        i++;
      }
      cursor.index = i;
      if (i < t.length) return true;
      if (cursor.page >= lastPage) return true;
      cursor = { page: cursor.page + 1, index: 0 };
    }
  }

  function tick() {
    const position = clock.position();
    const fed = feed(position);
    prefetch();
    state.buffering = !fed;
    state.position = position;
    state.ended = clock.ended;
    if (state.ended && clock.playing) {
      clock.pause();
      state.playing = false;
      // The last readings arrived in this tick: the statistics include them at once.
      opts.series.refreshStats();
    }
  }

  /** Reads the capture's extent (first and last reading) and the first pages. */
  async function init(highestSeq: number): Promise<void> {
    lastPage = Math.max(0, Math.floor(highestSeq / size));
    try {
      const first = await load(0);
      const last = highestSeq >= 0 ? await load(lastPage) : first;
      state.origin = first.t.length ? first.t[0] : 0;
      state.duration = last.t.length ? last.t[last.t.length - 1] : 0;
      clock.origin = state.origin;
      clock.duration = state.duration;
      clock.seek(state.origin);
      state.position = state.origin;
      state.ready = true;
      prefetch();
    } catch (err) {
      state.error = err instanceof Error ? err.message : String(err);
    }
    timer ??= setInterval(tick, opts.tickMs ?? 50);
  }

  function play() {
    if (clock.ended) void seekTo(state.origin);
    clock.play();
    state.playing = true;
    state.ended = false;
  }

  function pause() {
    clock.pause();
    state.playing = false;
  }

  function setSpeed(s: number) {
    clock.setSpeed(s);
    state.speed = s;
  }

  /** Whether the page (loaded) covers time `pos`, is after it (1) or before it (−1). */
  function where(page: Page, pos: number): -1 | 0 | 1 {
    if (!page.t.length) return 0;
    if (pos < page.t[0]) return 1;
    if (pos > page.t[page.t.length - 1]) return -1;
    return 0;
  }

  /** Moves the play head; the series restarts from the page holding the new position. */
  async function seekTo(pos: number): Promise<void> {
    clock.seek(pos);
    const target = clock.position();
    const span = state.duration - state.origin;
    let p = span > 0 ? Math.round(((target - state.origin) / span) * lastPage) : 0;
    p = Math.min(Math.max(p, 0), lastPage);
    // Readings are evenly spaced only roughly: step to the page whose t range holds the target.
    for (let guard = 0; guard < lastPage + 1; guard++) {
      let page: Page;
      try {
        page = await load(p);
      } catch (err) {
        state.error = err instanceof Error ? err.message : String(err);
        return;
      }
      const w = where(page, target);
      if (w === 1 && p > 0) p--;
      else if (w === -1 && p < lastPage) {
        const next = await load(p + 1);
        if (next.t.length && target < next.t[0]) break;
        p++;
      } else break;
    }
    // Refill from the start of the previous page so the window and stats have history.
    if (p > 0) await load(p - 1).catch(() => undefined);
    opts.series.clear();
    const startPage = p > 0 && pages.has(p - 1) ? p - 1 : p;
    cursor = { page: startPage, index: 0 };
    // Readings before the refilled pages still count as replayed (seqs run on without holes).
    const first = pages.get(startPage);
    const origin = pages.get(0);
    if (first?.seq.length && origin?.seq.length)
      opts.series.ring.offset = first.seq[0] - origin.seq[0];
    feed(target);
    opts.series.refreshStats();
    state.position = target;
    state.ended = clock.ended;
  }

  function dispose() {
    if (timer) clearInterval(timer);
    timer = null;
  }

  return { state, clock, init, play, pause, setSpeed, seekTo, dispose, tick };
}

export type Replay = ReturnType<typeof createReplay>;

/** A replay of capture `id` through `series`, bound to the component's lifetime. */
export function useReplay(id: number, series: LiveSeries, pageSize = 20_000): Replay {
  const r = createReplay({
    series,
    pageSize,
    fetchPage: async (from, to) => (await getReadings(id, { from, to })).readings,
  });
  onBeforeUnmount(r.dispose);
  return r;
}
