import { Study, Checkpoint, Dut, Instrument, Reference, Capture, User } from '../models/index.js';
import { calibrationState } from './lab.js';

/** Counts for the dashboard, instruments whose calibration needs attention, and captures on air. */
export async function dashboard() {
  const [studies, checkpoints, duts, instruments, references, captures, users] = await Promise.all([
    Study.count(),
    Checkpoint.count(),
    Dut.count(),
    Instrument.count(),
    Reference.count(),
    Capture.count(),
    User.count({ where: { active: true } }),
  ]);
  const all = await Instrument.findAll({ order: [['calibrationDue', 'ASC']] });
  const calibration = all
    .map((i) => ({ id: i.id, name: i.name, kind: i.kind, calibrationDue: i.calibrationDue, state: calibrationState(i.calibrationDue) }))
    .filter((i) => i.state === 'overdue' || i.state === 'due-soon');
  const open = await Capture.findAll({ where: { state: 'open' }, order: [['startedAt', 'DESC']], limit: 50 });
  const live = open.map((c) => ({ id: c.id, dutId: c.dutId, checkpointId: c.checkpointId, startedAt: c.startedAt, readingCount: c.readingCount }));
  return { counts: { studies, checkpoints, duts, instruments, references, captures, users }, calibration, live };
}
