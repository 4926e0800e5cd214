/**
 * A watched capture's progress against what the bench planned: how far along it is, the wall
 * time left at the pace readings are arriving, and whether it has stalled (no reading for much
 * longer than the pace predicts). Pure: the caller records arrivals and passes the clock.
 */

import type { CaptureRecord } from '../../shared/protocol/models';

/** What the bench planned for a capture: a duration in capture seconds or a reading count (the contract's). */
export type WatchTarget = NonNullable<CaptureRecord['target']>;

/** One arrival: wall time (ms), capture time of the newest reading (s), readings so far. */
export interface Arrival {
  wall: number;
  t: number;
  count: number;
}

export interface WatchProgress {
  /** 0…1, null without a target. */
  fraction: number | null;
  /** Wall seconds left at the recent pace, null while the pace is unknown or without a target. */
  leftS: number | null;
  /** No reading for longer than {@link stallAfterS} at the recent pace. */
  stalled: boolean;
  /** Wall seconds since the newest reading arrived. */
  quietS: number;
}

/** Least quiet time (s) before a capture is called stalled, whatever its pace (Driftbench's choice). */
export const MIN_STALL_S = 15;

/**
 * Seconds of silence after which a capture counts as stalled: five expected intervals between
 * readings at the recent pace (τ0 in capture seconds over the capture-to-wall rate), and at least
 * {@link MIN_STALL_S}.
 */
export function stallAfterS(tau0: number, captureSecondsPerWallSecond: number | null): number {
  const interval =
    captureSecondsPerWallSecond && captureSecondsPerWallSecond > 0
      ? tau0 / captureSecondsPerWallSecond
      : tau0;
  return Math.max(MIN_STALL_S, 5 * interval);
}

/**
 * Progress from the oldest and newest arrivals of a recent window (`first`, `last`), at wall
 * time `now` (ms). The pace is taken from the window, so a simulator at 100× or a pause shows.
 */
export function watchProgress(
  target: WatchTarget | null,
  first: Arrival | null,
  last: Arrival | null,
  now: number,
  tau0: number,
): WatchProgress {
  if (!last) return { fraction: target ? 0 : null, leftS: null, stalled: false, quietS: 0 };
  const quietS = Math.max(0, (now - last.wall) / 1000);
  const span = first ? (last.wall - first.wall) / 1000 : 0;
  const tRate = first && span > 0 && last.t > first.t ? (last.t - first.t) / span : null;
  const nRate =
    first && span > 0 && last.count > first.count ? (last.count - first.count) / span : null;
  const stalled = quietS > stallAfterS(tau0, tRate);
  if (!target) return { fraction: null, leftS: null, stalled, quietS };
  if (target.kind === 'duration') {
    const fraction = Math.min(1, Math.max(0, last.t / target.seconds));
    const leftS = tRate ? Math.max(0, (target.seconds - last.t) / tRate) : null;
    return { fraction, leftS, stalled, quietS };
  }
  const fraction = Math.min(1, Math.max(0, last.count / target.n));
  const leftS = nRate ? Math.max(0, (target.n - last.count) / nRate) : null;
  return { fraction, leftS, stalled, quietS };
}

/** "about 3 min left", "about 40 s left", "about 2.5 h left". */
export function leftText(leftS: number): string {
  if (leftS < 90) return `about ${Math.max(1, Math.round(leftS))} s left`;
  if (leftS < 5400) return `about ${Math.round(leftS / 60)} min left`;
  return `about ${(leftS / 3600).toFixed(1)} h left`;
}
