import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
} from 'sequelize';
import type { Exposure } from '../../shared/protocol/api.js';

/** A point in a study at which every DUT is captured (baseline, after exposure 1, …). */
export class Checkpoint extends Model<
  InferAttributes<Checkpoint>,
  InferCreationAttributes<Checkpoint>
> {
  declare id: CreationOptional<number>;
  declare studyId: number;
  declare name: string;
  declare position: number;
  declare exposure: Exposure | null;
  /** Archived: kept with its captures, out of the matrix and the bench (null while in use). */
  declare archivedAt: Date | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  toPublic() {
    return {
      id: this.id,
      studyId: this.studyId,
      name: this.name,
      order: this.position,
      exposure: this.exposure,
      archived: this.archivedAt != null,
    };
  }

  static initModel(sequelize: Sequelize): void {
    Checkpoint.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        studyId: { type: DataTypes.INTEGER, allowNull: false },
        name: { type: DataTypes.STRING(200), allowNull: false },
        position: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
        exposure: DataTypes.JSONB,
        archivedAt: DataTypes.DATE,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'checkpoints', underscored: true },
    );
  }
}
