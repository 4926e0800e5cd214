import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
  type NonAttribute,
} from 'sequelize';
import type { Dut } from './Dut.js';
import type { Checkpoint } from './Checkpoint.js';
import type { User } from './User.js';
import type { Instrument } from './Instrument.js';
import type { Reference } from './Reference.js';
import type { CaptureTarget } from '../../shared/protocol/captures.js';
import type { LinkProfile } from '../../shared/protocol/linkProfile.js';

/** 'stalled': open, but no readings for too long (the sweep in services/captureLifecycle.ts). */
import type { CaptureState } from '../../shared/protocol/captureLifecycle.js';
export type { CaptureState };

/** One DUT measured at one checkpoint: its identity, conditions and (once finished) its cached summary. */
export class Capture extends Model<InferAttributes<Capture>, InferCreationAttributes<Capture>> {
  declare id: CreationOptional<number>;
  declare dutId: number;
  declare checkpointId: number;
  declare instrumentId: number | null;
  declare referenceId: number | null;
  declare operatorId: number | null;
  declare quantity: 'frequency' | 'acceleration' | 'voltage' | 'counts';
  declare unit: string;
  declare nominal: number | null;
  declare gateTime: number;
  declare deadTime: number | null;
  declare ambientC: number | null;
  declare orientation: string | null;
  declare notes: string | null;
  declare tags: CreationOptional<string[]>;
  declare referenceOffset: number | null;
  declare referenceUncertainty: number | null;
  /** The reference's calibration record and the counter's type, copied when the capture starts. */
  declare referenceVerifiedAt: string | null;
  declare referenceAgeingPerDay: number | null;
  declare referenceAgeingUPerDay: number | null;
  declare counterType: 'gated' | 'reciprocal' | 'time-interval' | null;
  declare counterResolution: number | null;
  /** The link profile the capture ran with (checked by LinkProfile when the capture was created). */
  declare linkProfile: LinkProfile | null;
  declare state: CreationOptional<CaptureState>;
  declare startedAt: CreationOptional<Date>;
  declare endedAt: Date | null;
  declare readingCount: CreationOptional<number>;
  declare highestSeq: CreationOptional<number>;
  declare summary: unknown;
  declare sealSha256: string | null;
  declare sealedAt: Date | null;
  declare plannedMinutes: number | null;
  /** Recorded from a simulator (set at creation, never changed). */
  declare simulated: CreationOptional<boolean>;
  /** What the bench planned: a duration in capture seconds or a number of readings. */
  declare target: CaptureTarget | null;
  declare overdueNotifiedAt: Date | null;
  declare sealBrokenAt: Date | null;
  /** Left out of the evidence by a lead, with the reason (null while it counts). */
  declare excludedAt: Date | null;
  declare excludedBy: number | null;
  declare exclusionReason: string | null;
  /** When the last accepted readings arrived (moved by the ingest statement). */
  declare lastReadingAt: Date | null;
  /** When the sweep marked the capture stalled (kept after it revives, for the record). */
  declare stalledAt: Date | null;
  declare abortReason: string | null;
  declare abortedBy: number | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
  /** Associations (server/models/index.ts), present when a query includes them. */
  declare dut?: NonAttribute<Dut>;
  declare checkpoint?: NonAttribute<Checkpoint>;
  declare operator?: NonAttribute<User>;
  declare instrument?: NonAttribute<Instrument>;
  declare reference?: NonAttribute<Reference>;

  static initModel(sequelize: Sequelize): void {
    Capture.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        dutId: { type: DataTypes.INTEGER, allowNull: false },
        checkpointId: { type: DataTypes.INTEGER, allowNull: false },
        instrumentId: DataTypes.INTEGER,
        referenceId: DataTypes.INTEGER,
        operatorId: DataTypes.INTEGER,
        quantity: { type: DataTypes.STRING(20), allowNull: false },
        unit: { type: DataTypes.STRING(20), allowNull: false },
        nominal: DataTypes.DOUBLE,
        gateTime: { type: DataTypes.DOUBLE, allowNull: false },
        deadTime: DataTypes.DOUBLE,
        ambientC: DataTypes.DOUBLE,
        orientation: DataTypes.STRING(40),
        notes: DataTypes.TEXT,
        tags: { type: DataTypes.ARRAY(DataTypes.STRING(60)), allowNull: false, defaultValue: [] },
        referenceOffset: DataTypes.DOUBLE,
        referenceUncertainty: DataTypes.DOUBLE,
        referenceVerifiedAt: DataTypes.DATEONLY,
        referenceAgeingPerDay: DataTypes.DOUBLE,
        referenceAgeingUPerDay: { type: DataTypes.DOUBLE, field: 'reference_ageing_u_per_day' },
        counterType: DataTypes.STRING(16),
        counterResolution: DataTypes.DOUBLE,
        linkProfile: DataTypes.JSONB,
        state: { type: DataTypes.STRING(20), allowNull: false, defaultValue: 'open' },
        startedAt: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW },
        endedAt: DataTypes.DATE,
        readingCount: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
        highestSeq: { type: DataTypes.INTEGER, allowNull: false, defaultValue: -1 },
        summary: DataTypes.JSONB,
        sealSha256: DataTypes.CHAR(64),
        sealedAt: DataTypes.DATE,
        plannedMinutes: DataTypes.INTEGER,
        simulated: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
        target: DataTypes.JSONB,
        overdueNotifiedAt: DataTypes.DATE,
        sealBrokenAt: DataTypes.DATE,
        excludedAt: DataTypes.DATE,
        excludedBy: DataTypes.INTEGER,
        exclusionReason: DataTypes.TEXT,
        lastReadingAt: DataTypes.DATE,
        stalledAt: DataTypes.DATE,
        abortReason: DataTypes.TEXT,
        abortedBy: DataTypes.INTEGER,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'captures', underscored: true },
    );
  }
}
