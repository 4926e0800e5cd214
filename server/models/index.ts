import type { Sequelize } from 'sequelize';
import { User } from './User.js';
import { Instrument } from './Instrument.js';
import { Reference } from './Reference.js';
import { Study } from './Study.js';
import { Checkpoint } from './Checkpoint.js';
import { Dut } from './Dut.js';
import { Capture } from './Capture.js';
import { AuditEvent } from './AuditEvent.js';
import { Attachment } from './Attachment.js';
import { StudyReview } from './StudyReview.js';
import { CalibrationRecord } from './CalibrationRecord.js';
import { TiltCheck } from './TiltCheck.js';

export {
  User,
  Instrument,
  Reference,
  Study,
  Checkpoint,
  Dut,
  Capture,
  AuditEvent,
  Attachment,
  StudyReview,
  CalibrationRecord,
  TiltCheck,
};

let initialised: Sequelize | undefined;

/** Binds every model to `sequelize` and declares the associations. Once per process. */
export function initModels(sequelize: Sequelize): void {
  if (initialised === sequelize) return;
  if (initialised) throw new Error('models are already bound to another connection');
  initialised = sequelize;
  for (const m of [
    User,
    Instrument,
    Reference,
    Study,
    Checkpoint,
    Dut,
    Capture,
    AuditEvent,
    Attachment,
    StudyReview,
    CalibrationRecord,
    TiltCheck,
  ])
    m.initModel(sequelize);

  Study.hasMany(Checkpoint, { as: 'checkpoints', foreignKey: 'studyId' });
  Checkpoint.belongsTo(Study, { as: 'study', foreignKey: 'studyId' });
  Study.hasMany(Dut, { as: 'duts', foreignKey: 'studyId' });
  Dut.belongsTo(Study, { as: 'study', foreignKey: 'studyId' });
  Capture.belongsTo(Dut, { as: 'dut', foreignKey: 'dutId' });
  Capture.belongsTo(Checkpoint, { as: 'checkpoint', foreignKey: 'checkpointId' });
  Capture.belongsTo(Instrument, { as: 'instrument', foreignKey: 'instrumentId' });
  Capture.belongsTo(Reference, { as: 'reference', foreignKey: 'referenceId' });
  Capture.belongsTo(User, { as: 'operator', foreignKey: 'operatorId' });
  Reference.belongsTo(Instrument, { as: 'instrument', foreignKey: 'instrumentId' });
}
