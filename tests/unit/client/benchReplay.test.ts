// @vitest-environment happy-dom
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { ReplayClock, createReplay } from '../../../src/composables/useReplay';
import { createLiveSeries } from '../../../src/composables/useLiveSeries';
import type { ReadingOut } from '../../../src/api/captures';

describe('the replay clock', () => {
  beforeEach(() => vi.useFakeTimers());
  afterEach(() => vi.useRealTimers());
  const now = () => Date.now();

  it('advances capture time at its speed only while playing', () => {
    const c = new ReplayClock(now, 1, 1000);
    expect(c.position()).toBe(0);
    vi.advanceTimersByTime(2000);
    expect(c.position()).toBe(0); // not playing yet
    c.play();
    vi.advanceTimersByTime(2000);
    expect(c.position()).toBeCloseTo(2, 9);
    c.setSpeed(100);
    vi.advanceTimersByTime(1000);
    expect(c.position()).toBeCloseTo(102, 9);
  });

  it('holds its position while paused and resumes from it', () => {
    const c = new ReplayClock(now, 10, 1000);
    c.play();
    vi.advanceTimersByTime(1500);
    c.pause();
    expect(c.position()).toBeCloseTo(15, 9);
    vi.advanceTimersByTime(5000);
    expect(c.position()).toBeCloseTo(15, 9);
    c.play();
    vi.advanceTimersByTime(500);
    expect(c.position()).toBeCloseTo(20, 9);
  });

  it('seeks within the capture and stops at its end', () => {
    const c = new ReplayClock(now, 1000, 60, 0);
    c.seek(-5);
    expect(c.position()).toBe(0);
    c.seek(30);
    expect(c.position()).toBe(30);
    c.play();
    vi.advanceTimersByTime(1000);
    expect(c.position()).toBe(60);
    expect(c.ended).toBe(true);
    c.play(); // playing again from the end starts over
    expect(c.position()).toBe(0);
  });

  it('refuses a speed that is not positive', () => {
    expect(() => new ReplayClock(now).setSpeed(0)).toThrow(RangeError);
  });
});

describe('a replay', () => {
  beforeEach(() => vi.useFakeTimers());
  afterEach(() => vi.useRealTimers());

  // 1000 readings, one per 0.1 s (t 0 … 99.9 s), served in seq pages.
  const readings: ReadingOut[] = Array.from({ length: 1000 }, (_, i) => ({
    seq: i,
    t: i / 10,
    value: 1e7 + (i % 7),
  }));
  const fetchPage = vi.fn(async (from: number, to: number) =>
    readings.filter((r) => r.seq >= from && r.seq <= to),
  );

  async function started() {
    const series = createLiveSeries({ nominal: () => 1e7, tau0: () => 0.1, frequency: () => true });
    const replay = createReplay({
      series,
      fetchPage,
      pageSize: 100,
      now: () => Date.now(),
      tickMs: 50,
    });
    await replay.init(999);
    return { series, replay };
  }

  it('feeds the series as the clock passes each reading, fetching pages ahead', async () => {
    const { series, replay } = await started();
    expect(replay.state.duration).toBeCloseTo(99.9, 9);
    replay.setSpeed(10);
    replay.play();
    await vi.advanceTimersByTimeAsync(2000); // 20 s of capture time
    expect(series.ring.total).toBeGreaterThanOrEqual(195);
    expect(series.ring.total).toBeLessThanOrEqual(202);
    expect(fetchPage.mock.calls.some(([from]) => from === 200)).toBe(true); // prefetched ahead
    replay.pause();
    const held = series.ring.total;
    await vi.advanceTimersByTimeAsync(2000);
    expect(series.ring.total).toBe(held);
    replay.dispose();
    series.dispose();
  });

  it('restarts the series from the seeked position', async () => {
    const { series, replay } = await started();
    await replay.seekTo(55);
    expect(series.ring.lastT).toBeCloseTo(55, 9);
    expect(series.ring.tAt(0)).toBeCloseTo(40, 9); // the previous page is kept as history
    replay.setSpeed(1000);
    replay.play();
    await vi.advanceTimersByTimeAsync(1000);
    expect(replay.state.ended).toBe(true);
    expect(series.ring.lastT).toBeCloseTo(99.9, 9);
    replay.dispose();
    series.dispose();
  });
});
