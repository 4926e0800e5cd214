import { DataTypes, Model, type Sequelize, type CreationOptional } from 'sequelize';

/**
 * One calibration of an instrument or a frequency reference, as its certificate states it. History:
 * the database refuses an UPDATE (migration 20261202-0120), so a correction is a new record.
 */
export class CalibrationRecord extends Model {
  declare id: CreationOptional<number>;
  declare instrumentId: number | null;
  declare referenceId: number | null;
  declare calibratedOn: string;
  declare dueOn: string | null;
  declare certificate: string;
  declare issuedBy: string;
  declare uncertainty: string | null;
  declare fractionalOffset: number | null;
  declare standardUncertainty: number | null;
  declare notes: string | null;
  declare recordedBy: number | null;
  declare createdAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize): void {
    CalibrationRecord.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        instrumentId: DataTypes.INTEGER,
        referenceId: DataTypes.INTEGER,
        calibratedOn: { type: DataTypes.DATEONLY, allowNull: false },
        dueOn: DataTypes.DATEONLY,
        certificate: { type: DataTypes.STRING(120), allowNull: false },
        issuedBy: { type: DataTypes.STRING(200), allowNull: false },
        uncertainty: DataTypes.STRING(200),
        fractionalOffset: DataTypes.DOUBLE,
        standardUncertainty: DataTypes.DOUBLE,
        notes: DataTypes.TEXT,
        recordedBy: DataTypes.INTEGER,
        createdAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'calibration_records', underscored: true, updatedAt: false },
    );
  }
}
