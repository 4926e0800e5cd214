import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
} from 'sequelize';
import type { StudyStatus } from '../../shared/protocol/api.js';

export class Study extends Model<InferAttributes<Study>, InferCreationAttributes<Study>> {
  declare id: CreationOptional<number>;
  declare title: string;
  declare process: string | null;
  declare description: string | null;
  declare status: CreationOptional<StudyStatus>;
  declare createdBy: number | null;
  declare revision: CreationOptional<number>;
  /** Whether simulated captures may be recorded in this study (demo and training studies). */
  declare allowSimulated: CreationOptional<boolean>;
  declare submittedBy: number | null;
  declare submittedAt: Date | null;
  declare approvedBy: number | null;
  declare approvedAt: Date | null;
  /** Archived: kept with its record, out of the studies list (null while in use). */
  declare archivedAt: Date | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize): void {
    Study.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        title: { type: DataTypes.STRING(200), allowNull: false },
        process: DataTypes.STRING(200),
        description: DataTypes.TEXT,
        status: { type: DataTypes.STRING(20), allowNull: false, defaultValue: 'draft' },
        createdBy: DataTypes.INTEGER,
        revision: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 1 },
        allowSimulated: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
        submittedBy: DataTypes.INTEGER,
        submittedAt: DataTypes.DATE,
        approvedBy: DataTypes.INTEGER,
        approvedAt: DataTypes.DATE,
        archivedAt: DataTypes.DATE,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'studies', underscored: true },
    );
  }
}
