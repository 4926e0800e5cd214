import { DataTypes, Model, type Sequelize, type CreationOptional } from 'sequelize';
import type { Axis, TiltCheck as TiltCheckView } from '../../shared/protocol/accelerometer.js';
import type { TiltCheckAxis } from '../../shared/analysis/tiltCheck.js';

/** A guided tilt check's result: offset and sensitivity of one axis, the DUT's result at a checkpoint. */
export class TiltCheck extends Model {
  declare id: CreationOptional<number>;
  declare dutId: number;
  declare checkpointId: number;
  declare axis: Axis;
  declare flatCaptureId: number;
  declare invertedCaptureId: number;
  declare onEdgeCaptureId: number | null;
  declare localGravity: number;
  declare lsbMg: number;
  declare orientationErrorDeg: number;
  /** tiltCheckAxis() as computed when the check was recorded (its budgets included). */
  declare result: TiltCheckAxis;
  declare createdBy: number | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  toPublic(): TiltCheckView {
    const r = this.result;
    return {
      id: this.id,
      dutId: this.dutId,
      checkpointId: this.checkpointId,
      axis: this.axis,
      flatCaptureId: this.flatCaptureId,
      invertedCaptureId: this.invertedCaptureId,
      onEdgeCaptureId: this.onEdgeCaptureId,
      localGravity: this.localGravity,
      lsbMg: this.lsbMg,
      orientationErrorDeg: this.orientationErrorDeg,
      idealMg: r.idealMg,
      offsetMg: r.offsetMg,
      sensitivityPct: r.sensitivityPct,
      sensitivityErrorPct: r.sensitivityErrorPct,
      offset: r.offset as TiltCheckView['offset'],
      sensitivity: r.sensitivity as TiltCheckView['sensitivity'],
      onEdgeOffset: r.onEdgeOffset as TiltCheckView['onEdgeOffset'],
      createdBy: this.createdBy,
      createdAt: new Date(this.createdAt).toISOString(),
    };
  }

  static initModel(sequelize: Sequelize): void {
    TiltCheck.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        dutId: { type: DataTypes.INTEGER, allowNull: false },
        checkpointId: { type: DataTypes.INTEGER, allowNull: false },
        axis: { type: DataTypes.CHAR(1), allowNull: false, defaultValue: 'z' },
        flatCaptureId: { type: DataTypes.INTEGER, allowNull: false },
        invertedCaptureId: { type: DataTypes.INTEGER, allowNull: false },
        onEdgeCaptureId: DataTypes.INTEGER,
        localGravity: { type: DataTypes.DOUBLE, allowNull: false },
        lsbMg: { type: DataTypes.DOUBLE, allowNull: false },
        orientationErrorDeg: { type: DataTypes.DOUBLE, allowNull: false },
        result: { type: DataTypes.JSONB, allowNull: false },
        createdBy: DataTypes.INTEGER,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'tilt_checks', underscored: true },
    );
  }
}
