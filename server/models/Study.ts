import { DataTypes, Model, type Sequelize, type CreationOptional } from 'sequelize';
import type { StudyStatus } from '../../shared/protocol/api.js';

export class Study extends Model {
  declare id: CreationOptional<number>;
  declare title: string;
  declare process: string | null;
  declare description: string | null;
  declare status: CreationOptional<StudyStatus>;
  declare createdBy: number | null;
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
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'studies', underscored: true },
    );
  }
}
