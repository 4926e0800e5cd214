import { Router } from 'express';
import type pg from 'pg';
import { z } from 'zod';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { IdParam } from '../../shared/protocol/api.js';
import {
  ApproveBody,
  AuditQuery,
  ReopenBody,
  ReturnBody,
  SubmitBody,
} from '../../shared/protocol/review.js';
import {
  approveStudy,
  listRevisions,
  reopenStudy,
  returnStudy,
  reviewHistory,
  revisionReport,
  startStudy,
  submitStudy,
} from '../services/workflow.js';
import { listAudit, studyAudit } from '../services/auditLog.js';
import { verifyAuditChain } from '../services/audit.js';
import { buildStudyReport } from '../services/report.js';
import { checkSeal } from '../services/seal.js';
import { requireStudy } from '../services/studies.js';

const RevisionQuery = z.object({
  revision: z.coerce.number().int().min(1).max(100_000).optional(),
});

/** The study workflow (submit, approve, return, reopen), its history, the report and the study's audit trail. */
export function reviewRouter(pool: pg.Pool): Router {
  const r = Router();
  r.post('/:id/start', authorize('studies:plan'), async (req, res) => {
    reply(
      res,
      'POST /api/studies/:id/start',
      await startStudy(parse(IdParam, req.params, 'id').id, currentUser(req)),
    );
  });
  r.post('/:id/submit', authorize('studies:submit'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const body = parse(SubmitBody, req.body ?? {});
    reply(
      res,
      'POST /api/studies/:id/submit',
      await submitStudy(id, currentUser(req), body.note || null),
    );
  });
  r.post('/:id/approve', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const body = parse(ApproveBody, req.body ?? {});
    reply(
      res,
      'POST /api/studies/:id/approve',
      await approveStudy(pool, id, currentUser(req), body.password, body.note || null),
    );
  });
  r.post('/:id/return', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'POST /api/studies/:id/return',
      await returnStudy(id, currentUser(req), parse(ReturnBody, req.body ?? {}).comment),
    );
  });
  r.post('/:id/reopen', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'POST /api/studies/:id/reopen',
      await reopenStudy(id, currentUser(req), parse(ReopenBody, req.body ?? {}).reason),
    );
  });
  r.get('/:id/reviews', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    await requireStudy(id);
    reply(res, 'GET /api/studies/:id/reviews', {
      reviews: await reviewHistory(id),
      revisions: await listRevisions(id),
    });
  });
  r.get('/:id/audit', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    await requireStudy(id);
    const q = parse(AuditQuery.pick({ limit: true, cursor: true }), req.query, 'query');
    reply(res, 'GET /api/studies/:id/audit', await studyAudit(id, q));
  });
  /** The report: the study as it is now, or `?revision=N` for an approved revision exactly as approved. */
  r.get('/:id/report', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const { revision } = parse(RevisionQuery, req.query, 'query');
    // An approved revision's report is stored JSON written by buildStudyReport (checked under test).
    const report = revision
      ? ((await revisionReport(id, revision)) as Awaited<ReturnType<typeof buildStudyReport>>)
      : await buildStudyReport(pool, id);
    reply(res, 'GET /api/studies/:id/report', report);
  });
  return r;
}

/** `GET /api/audit` (filtered, paged) and `GET /api/audit/verify`: admins only. */
export function auditRouter(): Router {
  const r = Router();
  r.get('/', authorize('audit:read'), async (req, res) => {
    reply(res, 'GET /api/audit', await listAudit(parse(AuditQuery, req.query, 'query')));
  });
  r.get('/verify', authorize('audit:read'), async (_req, res) => {
    reply(res, 'GET /api/audit/verify', await verifyAuditChain());
  });
  return r;
}

/** `GET /api/captures/:id/seal`: the stored digest of the raw readings, recomputed now. */
export function sealRouter(pool: pg.Pool): Router {
  const r = Router();
  r.get('/:id/seal', authorize('read'), async (req, res) => {
    reply(
      res,
      'GET /api/captures/:id/seal',
      await checkSeal(pool, parse(IdParam, req.params, 'id').id),
    );
  });
  return r;
}
