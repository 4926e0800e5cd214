import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
} from 'sequelize';

/** A frequency reference (e.g. a GPS-disciplined 10 MHz) whose fractional offset and uncertainty are known. */
export class Reference extends Model<
  InferAttributes<Reference>,
  InferCreationAttributes<Reference>
> {
  declare id: CreationOptional<number>;
  declare name: string;
  declare nominalHz: number;
  declare fractionalOffset: number;
  declare standardUncertainty: number;
  declare verifiedBy: string | null;
  declare verifiedAt: string | null;
  declare instrumentId: number | null;
  declare kind: 'gnss-disciplined' | 'rubidium' | 'ocxo' | 'internal-timebase' | 'other' | null;
  /** Ageing rate, fractional per day, and its standard uncertainty (null: not recorded). */
  declare ageingPerDay: number | null;
  declare ageingUPerDay: number | null;
  declare calibrationDue: string | null;
  /** Sent to a calibration lab on this date and not back yet (null: in the lab). */
  declare awaySince: string | null;
  declare retiredAt: Date | null;
  declare retiredReason: string | null;
  /** The lab's reference: the bench's default (at most one). */
  declare labDefault: CreationOptional<boolean>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize): void {
    Reference.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        name: { type: DataTypes.STRING(120), allowNull: false },
        nominalHz: { type: DataTypes.DOUBLE, allowNull: false },
        fractionalOffset: { type: DataTypes.DOUBLE, allowNull: false, defaultValue: 0 },
        standardUncertainty: { type: DataTypes.DOUBLE, allowNull: false },
        verifiedBy: DataTypes.TEXT,
        verifiedAt: DataTypes.DATEONLY,
        instrumentId: DataTypes.INTEGER,
        kind: DataTypes.STRING(24),
        ageingPerDay: DataTypes.DOUBLE,
        ageingUPerDay: { type: DataTypes.DOUBLE, field: 'ageing_u_per_day' },
        calibrationDue: DataTypes.DATEONLY,
        awaySince: DataTypes.DATEONLY,
        retiredAt: DataTypes.DATE,
        retiredReason: DataTypes.TEXT,
        labDefault: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'frequency_references', underscored: true },
    );
  }
}
