import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
} from 'sequelize';

/** One audited action, chained by hash to the one before it (server/services/audit.ts writes them). Never updated or deleted. */
export class AuditEvent extends Model<
  InferAttributes<AuditEvent>,
  InferCreationAttributes<AuditEvent>
> {
  declare id: CreationOptional<number>;
  declare actorId: number | null;
  declare action: string;
  declare subjectType: string;
  declare subjectId: number | null;
  declare details: unknown;
  declare createdAt: CreationOptional<Date>;
  declare prevHash: string;
  declare hash: string;

  static initModel(sequelize: Sequelize): void {
    AuditEvent.init(
      {
        id: { type: DataTypes.BIGINT, primaryKey: true, autoIncrement: true },
        actorId: DataTypes.INTEGER,
        action: { type: DataTypes.STRING(60), allowNull: false },
        subjectType: { type: DataTypes.STRING(40), allowNull: false },
        subjectId: DataTypes.INTEGER,
        details: DataTypes.JSONB,
        createdAt: DataTypes.DATE,
        prevHash: DataTypes.CHAR(64),
        hash: DataTypes.CHAR(64),
      },
      { sequelize, tableName: 'audit_events', underscored: true, updatedAt: false },
    );
  }
}
