import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { AppError } from '../errors.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import type { JsonRouteKey } from '../../shared/protocol/responses.js';
import { IdParam } from '../../shared/protocol/api.js';
import type { AttachmentOwner } from '../../shared/protocol/review.js';
import {
  deleteAttachment,
  listAttachments,
  preflightUpload,
  recordUpload,
  requireAttachment,
  uploadMiddleware,
  type UploadPolicy,
} from '../services/attachments.js';
import type { BlobStore } from '../services/storage.js';
import { requireStudy } from '../services/studies.js';
import { assertStudyWritable } from '../services/studyLock.js';

/** The contract's name for each owner's attachment routes. */
const OWNER_KEYS = {
  study: {
    list: 'GET /api/studies/:id/attachments',
    upload: 'POST /api/studies/:id/attachments',
  },
  checkpoint: {
    list: 'GET /api/checkpoints/:id/attachments',
    upload: 'POST /api/checkpoints/:id/attachments',
  },
  capture: {
    list: 'GET /api/captures/:id/attachments',
    upload: 'POST /api/captures/:id/attachments',
  },
} as const satisfies Record<AttachmentOwner, Record<string, JsonRouteKey>>;

/**
 * `POST /api/{studies|checkpoints|captures}/:id/attachments` (multipart, field `file`) and the
 * matching lists, mounted under each owner's path; `GET` / `DELETE /api/attachments/:id`.
 */
export function ownerAttachmentsRouter(
  ownerType: AttachmentOwner,
  store: BlobStore,
  policy: UploadPolicy,
): Router {
  const r = Router();
  const upload = uploadMiddleware(store, policy);
  const keys = OWNER_KEYS[ownerType];
  r.post('/:id/attachments', authorize('attachments:upload'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    await preflightUpload(ownerType, id);
    await upload(req);
    const stored = await recordUpload(store, ownerType, id, req.file as never, currentUser(req));
    reply(res, keys.upload, stored, 201);
  });
  r.get('/:id/attachments', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    if (ownerType === 'study') {
      await requireStudy(id);
      reply(res, keys.list, { attachments: await listAttachments({ studyId: id }) });
    } else {
      // 404 for a missing checkpoint or capture (the lock state does not matter for reading).
      await assertStudyWritable(ownerType, id, 'reading').catch((err: { status?: number }) => {
        if (err.status === 404) throw err;
      });
      reply(res, keys.list, { attachments: await listAttachments({ ownerType, ownerId: id }) });
    }
  });
  return r;
}

/** RFC 6266 / 8187: an ASCII fallback name plus the exact UTF-8 name, neither able to break the header. */
export function contentDisposition(kind: 'attachment' | 'inline', filename: string): string {
  const ascii = filename.replace(/[^\x20-\x7e]/g, '_').replace(/["\\%]/g, '_');
  const encoded = encodeURIComponent(filename).replace(
    /['()*]/g,
    (c) => `%${c.charCodeAt(0).toString(16).toUpperCase()}`,
  );
  return `${kind}; filename="${ascii}"; filename*=UTF-8''${encoded}`;
}

export function attachmentsRouter(store: BlobStore): Router {
  const r = Router();
  r.get('/:id', authorize('read'), async (req, res) => {
    const a = await requireAttachment(parse(IdParam, req.params, 'id').id);
    const inline = req.query.inline === '1' && a.contentType.startsWith('image/');
    const body = await store.get(a.storageKey).catch(() => null);
    if (!body)
      throw new AppError(410, 'gone', 'The stored file is missing from the attachment store.');
    res.setHeader('Content-Type', a.contentType);
    res.setHeader('Content-Length', String(a.sizeBytes));
    res.setHeader(
      'Content-Disposition',
      contentDisposition(inline ? 'inline' : 'attachment', a.filename),
    );
    res.setHeader('X-Content-SHA256', a.sha256);
    res.setHeader('Cache-Control', 'private, max-age=3600');
    res.setHeader(
      'Content-Security-Policy',
      "default-src 'none'; img-src 'self'; style-src 'unsafe-inline'; sandbox",
    );
    body.on('error', () => res.destroy());
    body.pipe(res);
  });
  r.delete('/:id', authorize('read'), async (req, res) => {
    await deleteAttachment(store, parse(IdParam, req.params, 'id').id, currentUser(req));
    res.status(204).end();
  });
  return r;
}
