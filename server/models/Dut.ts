import { DataTypes, Model, type Sequelize, type CreationOptional } from 'sequelize';

/** A device under test on a study's board, with its acceptance limit. */
export class Dut extends Model {
  declare id: CreationOptional<number>;
  declare studyId: number;
  declare label: string;
  declare kind: string;
  declare nominal: number;
  declare unit: string;
  declare limitValue: number;
  declare limitUnit: 'ppm' | 'ppb' | 'Hz' | 'mg' | '%';
  declare position: string | null;
  declare serial: string | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  toPublic() {
    return {
      id: this.id,
      studyId: this.studyId,
      label: this.label,
      kind: this.kind,
      nominal: this.nominal,
      unit: this.unit,
      limit: this.limitValue,
      limitUnit: this.limitUnit,
      position: this.position,
      serial: this.serial,
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
        limitValue: { type: DataTypes.DOUBLE, allowNull: false },
        limitUnit: { type: DataTypes.STRING(8), allowNull: false },
        position: DataTypes.STRING(60),
        serial: DataTypes.STRING(120),
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'duts', underscored: true },
    );
  }
}
