import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
  type NonAttribute,
} from 'sequelize';
import type { Study } from './Study.js';
import {
  quantityLimitsView,
  type QuantityKey,
  type QuantityLimit,
} from '../../shared/protocol/dutQuantities.js';

/**
 * A tuning fork's parabola when the DUT gives none (common practice, no source; makers'
 * datasheets print T0 = 25 ± 5 °C and B = −0.034 ppm/°C² within about ±0.006): the tolerances
 * read as rectangular, so u(T0) = 5/√3 °C and u(B) = 0.006/√3 ppm/°C² (JCGM 100 §4.3.7).
 */
export const TUNING_FORK_DEFAULTS = {
  T0: 25,
  uT0: 5 / Math.sqrt(3),
  B: -0.034,
  uB: 0.006 / Math.sqrt(3),
} as const;

/** A device under test on a study's board, with its acceptance limit. */
export class Dut extends Model<InferAttributes<Dut>, InferCreationAttributes<Dut>> {
  declare id: CreationOptional<number>;
  declare studyId: number;
  declare label: string;
  declare kind: string;
  declare nominal: number;
  declare unit: string;
  /** Half-width of a symmetric limit; null when the limit is asymmetric or one-sided. */
  declare limitValue: number | null;
  /** Bounds of an asymmetric or one-sided limit in limitUnit (null: that side is open). */
  declare limitLow: number | null;
  declare limitHigh: number | null;
  /** Tuning fork: turnover T0 °C and parabolic B ppm/°C² with standard uncertainties (null: defaults). */
  declare turnoverC: number | null;
  declare turnoverU: number | null;
  declare parabolicB: number | null;
  declare parabolicBU: number | null;
  declare limitUnit: 'ppm' | 'ppb' | 'Hz' | 'mg' | '%';
  declare position: string | null;
  declare serial: string | null;
  /** Limits of the kind's quantities beyond the primary one (shared/protocol/dutQuantities.ts). */
  declare quantityLimits: Partial<Record<QuantityKey, QuantityLimit>> | null;
  /** Archived: kept with its captures, out of the matrix and the bench (null while in use). */
  declare archivedAt: Date | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
  /** The study, present when a query includes it (`as: 'study'`). */
  declare study?: NonAttribute<Study>;

  toPublic() {
    return {
      id: this.id,
      studyId: this.studyId,
      label: this.label,
      kind: this.kind,
      nominal: this.nominal,
      unit: this.unit,
      limit: this.limitValue,
      limitLow: this.limitValue !== null ? -this.limitValue : this.limitLow,
      limitHigh: this.limitValue !== null ? this.limitValue : this.limitHigh,
      limitUnit: this.limitUnit,
      ...(this.kind === 'tuning-fork' ? { tuningFork: this.tuningFork() } : {}),
      position: this.position,
      serial: this.serial,
      limits: quantityLimitsView(
        this.kind,
        {
          limit: this.limitValue,
          limitLow: this.limitLow,
          limitHigh: this.limitHigh,
          limitUnit: this.limitUnit,
        },
        this.quantityLimits,
      ),
      archived: this.archivedAt != null,
    };
  }

  /** The tuning-fork parameters in force: the DUT's own, else Driftbench's defaults (captureAnalysis). */
  tuningFork(): { T0: number; uT0: number; B: number; uB: number; defaults: boolean } {
    const own =
      this.turnoverC !== null ||
      this.turnoverU !== null ||
      this.parabolicB !== null ||
      this.parabolicBU !== null;
    return {
      T0: this.turnoverC ?? TUNING_FORK_DEFAULTS.T0,
      uT0: this.turnoverU ?? TUNING_FORK_DEFAULTS.uT0,
      B: this.parabolicB ?? TUNING_FORK_DEFAULTS.B,
      uB: this.parabolicBU ?? TUNING_FORK_DEFAULTS.uB,
      defaults: !own,
    };
  }

  static initModel(sequelize: Sequelize): void {
    Dut.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        studyId: { type: DataTypes.INTEGER, allowNull: false },
        label: { type: DataTypes.STRING(120), allowNull: false },
        kind: { type: DataTypes.STRING(30), allowNull: false },
        nominal: { type: DataTypes.DOUBLE, allowNull: false },
        unit: { type: DataTypes.STRING(20), allowNull: false },
        limitValue: DataTypes.DOUBLE,
        limitLow: DataTypes.DOUBLE,
        limitHigh: DataTypes.DOUBLE,
        turnoverC: DataTypes.DOUBLE,
        turnoverU: DataTypes.DOUBLE,
        parabolicB: DataTypes.DOUBLE,
        parabolicBU: { type: DataTypes.DOUBLE, field: 'parabolic_b_u' },
        limitUnit: { type: DataTypes.STRING(8), allowNull: false },
        position: DataTypes.STRING(60),
        serial: DataTypes.STRING(120),
        quantityLimits: DataTypes.JSONB,
        archivedAt: DataTypes.DATE,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'duts', underscored: true },
    );
  }
}
