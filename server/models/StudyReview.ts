import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
} from 'sequelize';

export type ReviewAction = 'start' | 'submit' | 'approve' | 'return' | 'reopen';

/** One step of a study's review history: who moved it from which status to which, with their note. */
export class StudyReview extends Model<
  InferAttributes<StudyReview>,
  InferCreationAttributes<StudyReview>
> {
  declare id: CreationOptional<number>;
  declare studyId: number;
  declare revision: number;
  declare action: ReviewAction;
  declare fromStatus: string;
  declare toStatus: string;
  declare actorId: number | null;
  declare note: string | null;
  declare createdAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize): void {
    StudyReview.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        studyId: { type: DataTypes.INTEGER, allowNull: false },
        revision: { type: DataTypes.INTEGER, allowNull: false },
        action: { type: DataTypes.STRING(20), allowNull: false },
        fromStatus: { type: DataTypes.STRING(20), allowNull: false },
        toStatus: { type: DataTypes.STRING(20), allowNull: false },
        actorId: DataTypes.INTEGER,
        note: DataTypes.TEXT,
        createdAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'study_reviews', underscored: true, updatedAt: false },
    );
  }
}
