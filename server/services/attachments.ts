import { createHash, randomUUID } from 'node:crypto';
import path from 'node:path';
import { Transform, type TransformCallback } from 'node:stream';
import type { Request } from 'express';
import multer from 'multer';
import { QueryTypes } from 'sequelize';
import { Attachment, Study } from '../models/index.js';
import { AppError, ForbiddenError, NotFoundError } from '../errors.js';
import type { AuthUser } from './auth.js';
import { audit } from './audit.js';
import { assertStudyWritable, type StudyPart } from './studyLock.js';
import type { BlobStore } from './storage.js';
import type { AttachmentInfo, AttachmentOwner } from '../../shared/protocol/review.js';
import { roleCan } from '../../shared/protocol/roles.js';

/** What an upload may be, by default: photos, printouts as PDF, CSV and plain-text exports. */
export const DEFAULT_UPLOAD_TYPES = [
  'image/png',
  'image/jpeg',
  'image/webp',
  'application/pdf',
  'text/csv',
  'text/plain',
];
export const DEFAULT_UPLOAD_MAX_BYTES = 25 * 1024 * 1024;

/** File-name endings each type may carry; a name that disagrees with its declared type is refused. */
const EXTENSIONS: Record<string, string[]> = {
  'image/png': ['.png'],
  'image/jpeg': ['.jpg', '.jpeg'],
  'image/webp': ['.webp'],
  'image/gif': ['.gif'],
  'application/pdf': ['.pdf'],
  'text/csv': ['.csv'],
  'text/plain': ['.txt', '.log', '.csv'],
};

/** The first bytes a type must start with, where the format has a signature. */
const SIGNATURES: Record<string, (head: Buffer) => boolean> = {
  'image/png': (h) =>
    h.subarray(0, 8).equals(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a])),
  'image/jpeg': (h) => h[0] === 0xff && h[1] === 0xd8 && h[2] === 0xff,
  'image/webp': (h) =>
    h.subarray(0, 4).toString('latin1') === 'RIFF' &&
    h.subarray(8, 12).toString('latin1') === 'WEBP',
  'image/gif': (h) => h.subarray(0, 4).toString('latin1') === 'GIF8',
  'application/pdf': (h) => h.subarray(0, 5).toString('latin1') === '%PDF-',
  'text/csv': (h) => !h.includes(0),
  'text/plain': (h) => !h.includes(0),
};

export interface UploadPolicy {
  maxBytes: number;
  types: string[];
}

/** A file name safe to store and show: no folders, no control characters, at most 200 characters. */
export function safeFilename(name: string): string {
  const base = name.split(/[\\/]/).pop() ?? '';
  const clean = base
    // eslint-disable-next-line no-control-regex -- control characters are what this removes
    .replace(/[\u0000-\u001f\u007f"<>|:*?]/g, '_')
    .replace(/^\.+/, '')
    .trim();
  return (clean || 'file').slice(-200);
}

interface Stored {
  key: string;
  sha256: string;
  size: number;
  head: Buffer;
}

/** A multer storage engine that streams the upload into the blob store, hashing and counting as it goes. */
class StoreEngine implements multer.StorageEngine {
  constructor(private store: BlobStore) {}

  _handleFile(
    _req: Request,
    file: Express.Multer.File,
    cb: (error?: unknown, info?: Partial<Express.Multer.File> & Partial<Stored>) => void,
  ): void {
    const key = `${new Date().toISOString().slice(0, 7).replace('-', '/')}/${randomUUID()}`;
    const hash = createHash('sha256');
    let size = 0;
    let head = Buffer.alloc(0);
    const tap = new Transform({
      transform(chunk: Buffer, _enc: BufferEncoding, done: TransformCallback) {
        hash.update(chunk);
        size += chunk.length;
        if (head.length < 16) head = Buffer.concat([head, chunk.subarray(0, 16 - head.length)]);
        done(null, chunk);
      },
    });
    file.stream.pipe(tap);
    file.stream.on('error', (err) => tap.destroy(err));
    this.store.put(key, tap).then(
      () => cb(null, { key, sha256: hash.digest('hex'), size, head }),
      (err: unknown) => cb(err),
    );
  }

  _removeFile(
    _req: Request,
    file: Express.Multer.File & Partial<Stored>,
    cb: (error: Error | null) => void,
  ): void {
    if (!file.key) return cb(null);
    this.store.delete(file.key).then(
      () => cb(null),
      (err: Error) => cb(err),
    );
  }
}

/** The multer middleware for one `file` field under the policy; errors become 413 / 415 / 400. */
export function uploadMiddleware(store: BlobStore, policy: UploadPolicy) {
  const upload = multer({
    storage: new StoreEngine(store),
    limits: { fileSize: policy.maxBytes, files: 1, fields: 5, parts: 6 },
    fileFilter(_req, file, cb) {
      const type = file.mimetype.toLowerCase();
      const ext = path.extname(file.originalname).toLowerCase();
      if (!policy.types.includes(type)) {
        return cb(
          new AppError(
            415,
            'unsupported-type',
            `Files of type ${type} are not accepted. Allowed: ${policy.types.join(', ')}.`,
          ),
        );
      }
      const endings = EXTENSIONS[type];
      if (endings && !endings.includes(ext)) {
        return cb(
          new AppError(
            415,
            'unsupported-type',
            `The name “${safeFilename(file.originalname)}” does not end like a ${type} file (${endings.join(', ')}).`,
          ),
        );
      }
      cb(null, true);
    },
  }).single('file');
  return (req: Request) =>
    new Promise<void>((resolve, reject) => {
      upload(req, {} as never, (err: unknown) => {
        if (!err) return resolve();
        if (err instanceof multer.MulterError) {
          if (err.code === 'LIMIT_FILE_SIZE') {
            return reject(
              new AppError(
                413,
                'too-large',
                `The file is larger than the ${Math.round(policy.maxBytes / 1024 / 1024)} MB an attachment may be.`,
              ),
            );
          }
          return reject(
            new AppError(
              400,
              'validation',
              `Upload refused: ${err.message} (send one file in the field "file").`,
            ),
          );
        }
        reject(err);
      });
    });
}

const PART_OF: Record<AttachmentOwner, StudyPart> = {
  study: 'study',
  checkpoint: 'checkpoint',
  capture: 'capture',
};

/** Resolves the owner to its study and refuses a locked study before any byte is read. */
export async function preflightUpload(ownerType: AttachmentOwner, ownerId: number) {
  return assertStudyWritable(PART_OF[ownerType], ownerId, 'attaching a file');
}

/** Records a stored upload: checks its signature, writes the row and the audit event in one transaction. */
export async function recordUpload(
  store: BlobStore,
  ownerType: AttachmentOwner,
  ownerId: number,
  file: (Express.Multer.File & Partial<Stored>) | undefined,
  user: AuthUser,
) {
  if (!file || !file.key)
    throw new AppError(400, 'validation', 'file: send one file in the multipart field "file".', [
      { path: 'file', message: 'is required' },
    ]);
  const type = file.mimetype.toLowerCase();
  const sig = SIGNATURES[type];
  if (sig && file.size! > 0 && !sig(file.head ?? Buffer.alloc(0))) {
    await store.delete(file.key);
    throw new AppError(415, 'unsupported-type', `The file's content is not ${type}.`);
  }
  try {
    return await Study.sequelize!.transaction(async (transaction) => {
      const study = await assertStudyWritable(
        PART_OF[ownerType],
        ownerId,
        'attaching a file',
        transaction,
      );
      const row = await Attachment.create(
        {
          studyId: study.id,
          ownerType,
          ownerId,
          filename: safeFilename(Buffer.from(file.originalname, 'latin1').toString('utf8')),
          contentType: type,
          sizeBytes: file.size,
          // The storage engine set both before the upload reached here (checked above for the key).
          sha256: file.sha256!,
          storageKey: file.key!,
          uploadedBy: user.id,
        },
        { transaction },
      );
      await audit(
        user.id,
        'attachment.upload',
        'attachment',
        row.id,
        {
          studyId: study.id,
          owner: { type: ownerType, id: ownerId },
          after: { filename: row.filename, type, size: file.size, sha256: file.sha256 },
        },
        transaction,
      );
      return { ...row.toPublic(), uploaderName: user.name };
    });
  } catch (err) {
    await store.delete(file.key);
    throw err;
  }
}

/** An attachment as the list query reads it (the timestamp still a Date). */
type AttachmentRow = Omit<AttachmentInfo, 'createdAt'> & { createdAt: Date };

export async function listAttachments(where: {
  studyId?: number;
  ownerType?: AttachmentOwner;
  ownerId?: number;
}) {
  const bind: unknown[] = [];
  const cond: string[] = [];
  if (where.studyId) {
    bind.push(where.studyId);
    cond.push(`a.study_id = $${bind.length}`);
  }
  if (where.ownerType) {
    bind.push(where.ownerType, where.ownerId);
    cond.push(`a.owner_type = $${bind.length - 1} AND a.owner_id = $${bind.length}`);
  }
  return Study.sequelize!.query<AttachmentRow>(
    `SELECT a.id, a.study_id AS "studyId", a.owner_type AS "ownerType", a.owner_id AS "ownerId", a.filename,
            a.content_type AS "contentType", a.size_bytes AS size, a.sha256, a.uploaded_by AS "uploadedBy",
            u.name AS "uploaderName", a.created_at AS "createdAt"
     FROM attachments a LEFT JOIN users u ON u.id = a.uploaded_by
     WHERE ${cond.join(' AND ') || 'true'} ORDER BY a.id DESC LIMIT 500`,
    { bind, type: QueryTypes.SELECT },
  );
}

export async function requireAttachment(id: number): Promise<Attachment> {
  const a = await Attachment.findByPk(id);
  if (!a) throw new NotFoundError('Attachment');
  return a;
}

/** Deletes an attachment: its uploader or a lead, never while the study is locked; audited. */
export async function deleteAttachment(
  store: BlobStore,
  id: number,
  user: AuthUser,
): Promise<void> {
  const key = await Study.sequelize!.transaction(async (transaction) => {
    const a = await Attachment.findByPk(id, { transaction, lock: transaction.LOCK.UPDATE });
    if (!a) throw new NotFoundError('Attachment');
    if (a.uploadedBy !== user.id && !roleCan(user.role, 'attachments:delete-any')) {
      throw new ForbiddenError('Only the person who uploaded a file or a lead may delete it.');
    }
    await assertStudyWritable('study', a.studyId, 'deleting an attachment', transaction);
    const before = a.toPublic();
    await a.destroy({ transaction });
    await audit(
      user.id,
      'attachment.delete',
      'attachment',
      id,
      {
        studyId: a.studyId,
        before: { filename: before.filename, sha256: before.sha256, size: before.size },
      },
      transaction,
    );
    return a.storageKey;
  });
  await store.delete(key);
}
