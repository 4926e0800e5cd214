import { CALIBRATION_SOON_DAYS, type CalibrationStatus } from '../../shared/protocol/equipment.js';

const DAY = 86_400_000;

/** Today's calendar date in UTC, YYYY-MM-DD (the day every calibration rule counts from). */
export function utcToday(now = new Date()): string {
  return now.toISOString().slice(0, 10);
}

/** Whole calendar days from `from` to `to` (both YYYY-MM-DD). */
export function daysBetween(from: string, to: string): number {
  return Math.round((Date.parse(`${to}T00:00:00Z`) - Date.parse(`${from}T00:00:00Z`)) / DAY);
}

/**
 * The one rule for an instrument's or a reference's calibration state, used by the lab list, the
 * equipment pages, the dashboard, the bench's warning, the study report and the reminder mail.
 * Days count in whole UTC calendar days from today to the due date:
 * - away at a calibration lab → `away` (whatever the due date says);
 * - no due date → `no-due-date`;
 * - due date passed (days < 0) → `overdue`;
 * - due today up to the 30th day ahead → `due-soon`;
 * - later → `valid`.
 * Overdue, due soon and away need attention; a missing due date does not (an SPI bridge or a
 * thermometer without one is a choice the lab makes, shown but not counted).
 */
export function calibrationStatus(
  equipment: { calibrationDue: string | null; awaySince?: string | null },
  now = new Date(),
): CalibrationStatus {
  const dueOn = equipment.calibrationDue ?? null;
  const awaySince = equipment.awaySince ?? null;
  const daysLeft = dueOn ? daysBetween(utcToday(now), dueOn) : null;
  const state: CalibrationStatus['state'] = awaySince
    ? 'away'
    : daysLeft === null
      ? 'no-due-date'
      : daysLeft < 0
        ? 'overdue'
        : daysLeft <= CALIBRATION_SOON_DAYS
          ? 'due-soon'
          : 'valid';
  return {
    state,
    daysLeft,
    dueOn,
    awaySince,
    needsAttention: state === 'overdue' || state === 'due-soon' || state === 'away',
  };
}
