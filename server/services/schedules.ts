import { QueryTypes } from 'sequelize';
import type { Logger } from 'pino';
import { Study } from '../models/index.js';
import { enqueueMail } from './mail.js';
import { startStallSweep } from './captureLifecycle.js';
import type { LiveHub } from './liveHub.js';
import { calibrationStatus } from './calibration.js';

/**
 * The e-mail schedules that run in the server process:
 * - calibration: once a day, every instrument whose calibration is due within 30 days or overdue,
 *   one message per instrument to every active admin (once per instrument and day);
 * - open captures: a capture still open after its planned time, one message to its operator.
 * `runSchedules(now)` does one pass and is what the interval calls; tests call it directly.
 */
export async function calibrationReminders(now = new Date()): Promise<number> {
  const sequelize = Study.sequelize!;
  const instruments = (await sequelize.query(
    `SELECT id, name, calibration_due AS "calibrationDue", away_since AS "awaySince" FROM instruments
     WHERE calibration_due IS NOT NULL AND calibration_due <= ($1::date + 30) AND retired_at IS NULL
     ORDER BY calibration_due, id`,
    { bind: [now.toISOString().slice(0, 10)], type: QueryTypes.SELECT },
  )) as Array<{ id: number; name: string; calibrationDue: string; awaySince: string | null }>;
  const admins = (await sequelize.query(
    `SELECT id, email FROM users WHERE role = 'admin' AND active ORDER BY id`,
    {
      type: QueryTypes.SELECT,
    },
  )) as Array<{ id: number; email: string }>;
  const day = now.toISOString().slice(0, 10);
  let queued = 0;
  for (const i of instruments) {
    // The one calibration rule; an instrument away at the calibration lab needs no reminder.
    const { state, daysLeft } = calibrationStatus(i, now);
    if (state !== 'overdue' && state !== 'due-soon') continue;
    const days = daysLeft ?? 0;
    const when =
      state === 'overdue'
        ? `was due on ${i.calibrationDue} (${-days} day(s) ago)`
        : `is due on ${i.calibrationDue} (in ${days} day(s))`;
    for (const a of admins) {
      const sent = await enqueueMail({
        kind: 'calibration-due',
        to: a.email,
        subject: `Driftbench: calibration of “${i.name}” ${state === 'overdue' ? 'is overdue' : 'is due soon'}`,
        text:
          `The calibration of instrument ${i.id} “${i.name}” ${when}.\n\n` +
          'Captures made with it after that date carry an instrument outside its calibration interval. ' +
          'Record its new calibration on its page under Lab once it is calibrated.\n',
        dedupeKey: `calibration:${i.id}:${a.id}:${day}`,
      });
      if (sent) queued++;
    }
  }
  return queued;
}

export async function overdueCaptureReminders(now = new Date()): Promise<number> {
  const sequelize = Study.sequelize!;
  const rows = (await sequelize.query(
    `SELECT c.id, c.started_at AS "startedAt", c.planned_minutes AS "plannedMinutes", u.id AS "userId", u.email, u.name,
            d.label, s.title, s.id AS "studyId"
     FROM captures c JOIN users u ON u.id = c.operator_id JOIN duts d ON d.id = c.dut_id JOIN studies s ON s.id = d.study_id
     WHERE c.state = 'open' AND c.planned_minutes IS NOT NULL AND c.overdue_notified_at IS NULL AND u.active
       AND c.started_at + make_interval(mins => c.planned_minutes) < $1
     ORDER BY c.id`,
    { bind: [now], type: QueryTypes.SELECT },
  )) as Array<{
    id: number;
    startedAt: Date;
    plannedMinutes: number;
    email: string;
    name: string;
    label: string;
    title: string;
    studyId: number;
  }>;
  let queued = 0;
  for (const c of rows) {
    await sequelize.transaction(async (transaction) => {
      const sent = await enqueueMail(
        {
          kind: 'capture-overdue',
          to: c.email,
          subject: `Driftbench: capture #${c.id} of ${c.label} is still open`,
          text:
            `Capture #${c.id} of ${c.label} in study “${c.title}” started at ${new Date(c.startedAt).toISOString()} ` +
            `and was planned to run ${c.plannedMinutes} minute(s); it is still open.\n\n` +
            `Finish it on the bench or its capture page (/captures/${c.id}) if the measurement is done.\n`,
          dedupeKey: `capture-overdue:${c.id}`,
        },
        transaction,
      );
      await sequelize.query('UPDATE captures SET overdue_notified_at = $2 WHERE id = $1', {
        bind: [c.id, now],
        transaction,
      });
      if (sent) queued++;
    });
  }
  return queued;
}

/** One pass of every schedule. */
export async function runSchedules(
  now = new Date(),
): Promise<{ calibration: number; overdueCaptures: number }> {
  return {
    calibration: await calibrationReminders(now),
    overdueCaptures: await overdueCaptureReminders(now),
  };
}

/** Runs the schedules every `intervalMs` (default 10 minutes; the calibration check sends once per day by its dedupe key). */
export function startSchedules(
  opts: { intervalMs?: number; log?: Logger; hub?: Pick<LiveHub, 'publishState'> } = {},
): { stop(): void } {
  const run = () =>
    runSchedules().catch((err: unknown) => opts.log?.error({ err }, 'e-mail schedules failed'));
  const first = setTimeout(run, 5_000);
  const timer = setInterval(run, opts.intervalMs ?? 10 * 60_000);
  first.unref();
  timer.unref();
  // Stalled captures are looked for every minute (the shortest stall is ten minutes).
  const stalls = startStallSweep({ log: opts.log, hub: opts.hub });
  return {
    stop() {
      clearTimeout(first);
      clearInterval(timer);
      stalls.stop();
    },
  };
}
