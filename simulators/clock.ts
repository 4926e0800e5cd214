/**
 * The clock the simulators run on. Device cores never call setTimeout or Date.now directly:
 * the WebSocket hub gives them the real clock, tests give them a ManualClock and step time.
 */
export interface Clock {
  /** Milliseconds, monotonic. */
  now(): number;
  setTimer(fn: () => void, ms: number): TimerHandle;
  clearTimer(handle: TimerHandle): void;
}

export type TimerHandle = { readonly id: number };

/** The real clock: performance.now() and setTimeout. */
export function realClock(): Clock {
  const timers = new Map<number, ReturnType<typeof setTimeout>>();
  let nextId = 1;
  return {
    now: () => performance.now(),
    setTimer(fn, ms) {
      const id = nextId++;
      timers.set(
        id,
        setTimeout(
          () => {
            timers.delete(id);
            fn();
          },
          Math.max(0, ms),
        ),
      );
      return { id };
    },
    clearTimer(handle) {
      const t = timers.get(handle.id);
      if (t !== undefined) clearTimeout(t);
      timers.delete(handle.id);
    },
  };
}

/** A clock that moves only when told to: `advance(ms)` fires due timers in time order. */
export class ManualClock implements Clock {
  private t = 0;
  private nextId = 1;
  private readonly timers = new Map<number, { due: number; fn: () => void }>();

  now(): number {
    return this.t;
  }

  setTimer(fn: () => void, ms: number): TimerHandle {
    const id = this.nextId++;
    this.timers.set(id, { due: this.t + Math.max(0, ms), fn });
    return { id };
  }

  clearTimer(handle: TimerHandle): void {
    this.timers.delete(handle.id);
  }

  /** Moves time forward by `ms`, firing every timer that falls due, earliest first. */
  advance(ms: number): void {
    const end = this.t + ms;
    for (;;) {
      let best: [number, { due: number; fn: () => void }] | null = null;
      for (const entry of this.timers)
        if (entry[1].due <= end && (!best || entry[1].due < best[1].due)) best = entry;
      if (!best) break;
      this.timers.delete(best[0]);
      this.t = Math.max(this.t, best[1].due);
      best[1].fn();
    }
    this.t = end;
  }

  get pending(): number {
    return this.timers.size;
  }
}
