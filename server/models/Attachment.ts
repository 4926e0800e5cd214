import {
  DataTypes,
  Model,
  type Sequelize,
  type CreationOptional,
  type InferAttributes,
  type InferCreationAttributes,
} from 'sequelize';

export type AttachmentOwner = 'study' | 'checkpoint' | 'capture';

/** A file on a study, a checkpoint or a capture. The bytes live in the attachment store under `storageKey`. */
export class Attachment extends Model<
  InferAttributes<Attachment>,
  InferCreationAttributes<Attachment>
> {
  declare id: CreationOptional<number>;
  declare studyId: number;
  declare ownerType: AttachmentOwner;
  declare ownerId: number;
  declare filename: string;
  declare contentType: string;
  declare sizeBytes: number;
  declare sha256: string;
  declare storageKey: string;
  declare uploadedBy: number | null;
  declare createdAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize): void {
    Attachment.init(
      {
        id: { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true },
        studyId: { type: DataTypes.INTEGER, allowNull: false },
        ownerType: { type: DataTypes.STRING(12), allowNull: false },
        ownerId: { type: DataTypes.INTEGER, allowNull: false },
        filename: { type: DataTypes.STRING(255), allowNull: false },
        contentType: { type: DataTypes.STRING(100), allowNull: false },
        sizeBytes: { type: DataTypes.BIGINT, allowNull: false },
        sha256: { type: DataTypes.CHAR(64), allowNull: false },
        storageKey: { type: DataTypes.STRING(200), allowNull: false },
        uploadedBy: DataTypes.INTEGER,
        createdAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'attachments', underscored: true, updatedAt: false },
    );
  }

  toPublic() {
    return {
      id: this.id,
      studyId: this.studyId,
      ownerType: this.ownerType,
      ownerId: this.ownerId,
      filename: this.filename,
      contentType: this.contentType,
      size: Number(this.sizeBytes),
      sha256: this.sha256,
      uploadedBy: this.uploadedBy,
      createdAt: this.createdAt,
    };
  }
}
