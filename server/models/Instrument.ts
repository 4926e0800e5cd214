import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
} from 'sequelize';

export class Instrument extends Model<
  InferAttributes<Instrument>,
  InferCreationAttributes<Instrument>
> {
  declare id: CreationOptional<number>;
  declare name: string;
  declare kind: 'counter' | 'spi-bridge' | 'reference' | 'thermometer' | 'other';
  declare maker: string | null;
  declare model: string | null;
  declare serial: string | null;
  declare calibrationDue: string | null;
  declare notes: string | null;
  declare linkProfile: unknown;
  /** How a counter measures; null for other instruments or when not recorded. */
  declare counterType: 'gated' | 'reciprocal' | 'time-interval' | null;
  /** ± counts of a gated counter, or the time-interval resolution in seconds otherwise. */
  declare counterResolution: number | null;
  /** Sent to a calibration lab on this date and not back yet (null: in the lab). */
  declare awaySince: string | null;
  /** Out of service since then; kept for the captures that name it, never offered again. */
  declare retiredAt: Date | null;
  declare retiredReason: string | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize): void {
    Instrument.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        name: { type: DataTypes.STRING(120), allowNull: false },
        kind: { type: DataTypes.STRING(20), allowNull: false },
        maker: DataTypes.STRING(120),
        model: DataTypes.STRING(120),
        serial: DataTypes.STRING(120),
        calibrationDue: DataTypes.DATEONLY,
        notes: DataTypes.TEXT,
        linkProfile: DataTypes.JSONB,
        counterType: DataTypes.STRING(16),
        counterResolution: DataTypes.DOUBLE,
        awaySince: DataTypes.DATEONLY,
        retiredAt: DataTypes.DATE,
        retiredReason: DataTypes.TEXT,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'instruments', underscored: true },
    );
  }
}
