import { Study, Checkpoint, Dut, Instrument, Reference, Capture, User } from '../models/index.js';
import { calibrationStatus } from './calibration.js';
import { QueryTypes } from 'sequelize';

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
  // The same rule and the same flag the Lab page counts by (calibrationStatus().needsAttention);
  // retired equipment is out of service and never counted.
  const [inService, refs] = await Promise.all([
    Instrument.findAll({
      where: { retiredAt: null },
      order: [
        ['calibrationDue', 'ASC'],
        ['id', 'ASC'],
      ],
    }),
    Reference.findAll({
      where: { retiredAt: null },
      order: [
        ['calibrationDue', 'ASC'],
        ['id', 'ASC'],
      ],
    }),
  ]);
  const calibration = [
    ...inService.map((i) => ({
      subject: 'instrument' as const,
      id: i.id,
      name: i.name,
      kind: i.kind as string,
      calibrationDue: i.calibrationDue,
      calibration: calibrationStatus(i),
    })),
    ...refs.map((r) => ({
      subject: 'reference' as const,
      id: r.id,
      name: r.name,
      kind: 'frequency-reference',
      calibrationDue: r.calibrationDue,
      calibration: calibrationStatus(r),
    })),
  ]
    .filter((i) => i.calibration.needsAttention)
    .map((i) => ({ ...i, state: i.calibration.state }));
  const live = await onAir();
  return {
    counts: { studies, checkpoints, duts, instruments, references, captures, users },
    calibration,
    live,
  };
}

/** Captures recording now, with the names a list needs (study › checkpoint › DUT, operator). */
export async function onAir() {
  const rows = await Capture.sequelize!.query<{
    id: number;
    dutId: number;
    checkpointId: number;
    startedAt: Date;
    readings: number;
    dutLabel: string;
    checkpointName: string;
    studyTitle: string;
    studyId: number;
    operator: string | null;
  }>(
    `SELECT c.id, c.dut_id AS "dutId", c.checkpoint_id AS "checkpointId", c.started_at AS "startedAt",
            c.reading_count AS readings, d.label AS "dutLabel", k.name AS "checkpointName",
            s.title AS "studyTitle", s.id AS "studyId", u.name AS operator
     FROM captures c JOIN duts d ON d.id = c.dut_id JOIN checkpoints k ON k.id = c.checkpoint_id
     JOIN studies s ON s.id = d.study_id LEFT JOIN users u ON u.id = c.operator_id
     WHERE c.state = 'open' ORDER BY c.started_at DESC LIMIT 50`,
    { type: QueryTypes.SELECT },
  );
  return rows;
}
