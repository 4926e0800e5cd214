// @vitest-environment happy-dom
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { createReplay } from '../../../src/composables/useReplay';
import { createLiveSeries } from '../../../src/composables/useLiveSeries';
import type { ReadingOut } from '../../../src/api/captures';

// The replay's reading count: it ends at every stored reading (600 of 600), readings the link
// flagged without a value included, and the statistics' count never lags the replayed one.
describe('the replay count', () => {
  beforeEach(() => vi.useFakeTimers());
  afterEach(() => vi.useRealTimers());

  // 600 readings at 1 s; every 50th is a garbled line stored flagged and without a value.
  const readings: ReadingOut[] = Array.from({ length: 600 }, (_, i) =>
    i % 50 === 7
      ? { seq: i, t: i, value: null as unknown as number, flags: 1 }
      : { seq: i, t: i, value: 1e7 + (i % 5) },
  );
  const fetchPage = async (from: number, to: number) =>
    readings.filter((r) => r.seq >= from && r.seq <= to);

  function started() {
    const series = createLiveSeries({ nominal: () => 1e7, tau0: () => 1, frequency: () => true });
    const replay = createReplay({
      series,
      fetchPage,
      pageSize: 100,
      now: () => Date.now(),
      tickMs: 50,
    });
    return { series, replay };
  }

  it('ends at 600 of 600 readings, the 12 flagged ones without a value included', async () => {
    const { series, replay } = started();
    await replay.init(599);
    replay.setSpeed(1000);
    replay.play();
    await vi.advanceTimersByTimeAsync(2000);
    expect(replay.state.ended).toBe(true);
    expect(series.ring.count).toBe(600); // common practice, no source: every stored reading counted once
    expect(series.ring.flagged).toBe(12); // 600 / 50 flagged readings by construction
    expect(series.stats.value?.n).toBe(600);
    replay.dispose();
    series.dispose();
  });

  it('counts the readings up to the play head after a seek into a later page', async () => {
    const { series, replay } = started();
    await replay.init(599);
    await replay.seekTo(450.5);
    // t = 0 … 450 are 451 readings (one per second from t = 0, by construction)
    expect(series.ring.count).toBe(451);
    replay.dispose();
    series.dispose();
  });

  it("keeps the statistics' count level with the readings between the once-a-second refreshes", async () => {
    const series = createLiveSeries({
      nominal: () => 1e7,
      tau0: () => 1,
      frequency: () => true,
      statsEveryMs: 1000,
    });
    for (let i = 0; i < 21; i++) series.push(i, 1e7 + i);
    await vi.advanceTimersByTimeAsync(1000);
    expect(series.stats.value?.n).toBe(21);
    for (let i = 21; i < 24; i++) series.push(i, 1e7 + i);
    await vi.advanceTimersByTimeAsync(50); // one animation frame, well before the next full refresh
    expect(series.stats.value?.n).toBe(24); // the footer's count at the same moment
    series.dispose();
  });
});
