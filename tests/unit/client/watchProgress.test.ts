import { describe, expect, it } from 'vitest';
import {
  MIN_STALL_S,
  leftText,
  stallAfterS,
  watchProgress,
} from '../../../src/composables/watchProgress';

// A watched capture's progress, time left and stall mark. Expected values are worked by hand from
// the arrivals given (common practice, no source); the stall rule is Driftbench's own.
describe("a watched capture's progress", () => {
  it('measures a duration target in capture seconds and the time left at the recent pace', () => {
    // 10× simulator: 100 capture seconds in 10 wall seconds; 300 of 600 s done
    const p = watchProgress(
      { kind: 'duration', seconds: 600 },
      { wall: 0, t: 200, count: 201 },
      { wall: 10_000, t: 300, count: 301 },
      10_500,
      1,
    );
    expect(p.fraction).toBe(0.5);
    expect(p.leftS).toBeCloseTo(30, 9); // 300 s left at 10 capture-s per wall-s
    expect(p.stalled).toBe(false);
  });

  it('measures a count target in readings', () => {
    // 50 readings in 25 s: 2 per second; 150 of 1000 left → 425 s
    const p = watchProgress(
      { kind: 'count', n: 1000 },
      { wall: 0, t: 0, count: 800 },
      { wall: 25_000, t: 0, count: 850 },
      25_000,
      1,
    );
    expect(p.fraction).toBe(0.85);
    expect(p.leftS).toBeCloseTo(75, 9);
  });

  it('says nothing about time left until the pace is known', () => {
    const last = { wall: 0, t: 5, count: 6 };
    expect(watchProgress({ kind: 'duration', seconds: 60 }, last, last, 0, 1).leftS).toBeNull();
    expect(watchProgress(null, null, null, 0, 1)).toEqual({
      fraction: null,
      leftS: null,
      stalled: false,
      quietS: 0,
    });
  });

  it('marks a capture stalled after five expected intervals of silence, and never sooner than 15 s', () => {
    expect(stallAfterS(1, 1)).toBe(MIN_STALL_S); // 5 × 1 s < 15 s
    expect(stallAfterS(10, 1)).toBe(50); // 5 × 10 s gate at real time
    expect(stallAfterS(10, 10)).toBe(MIN_STALL_S); // 10 s gates at 10×: 1 s apart
    const first = { wall: 0, t: 0, count: 1 };
    const last = { wall: 10_000, t: 10, count: 11 };
    expect(watchProgress(null, first, last, 10_000 + 14_000, 1).stalled).toBe(false);
    expect(watchProgress(null, first, last, 10_000 + 16_000, 1).stalled).toBe(true);
  });

  it('words the time left', () => {
    expect(leftText(30)).toBe('about 30 s left');
    expect(leftText(600)).toBe('about 10 min left');
    expect(leftText(9000)).toBe('about 2.5 h left');
  });
});
