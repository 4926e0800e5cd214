import { Router } from 'express';
import type pg from 'pg';
import { z } from 'zod';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { IdParam } from '../../shared/protocol/api.js';
import { ApproveBody, AuditQuery, ReopenBody, ReturnBody, SubmitBody } from '../../shared/protocol/review.js';
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

const RevisionQuery = z.object({ revision: z.coerce.number().int().min(1).max(100_000).optional() });

/** The study workflow (submit, approve, return, reopen), its history, the report and the study's audit trail. */
export function reviewRouter(pool: pg.Pool): Router {
  const r = Router();
  r.post('/:id/start', authorize('studies:plan'), async (req, res) => {
    res.json(await startStudy(parse(IdParam, req.params, 'id').id, currentUser(req)));
  });
  r.post('/:id/submit', authorize('studies:submit'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const body = parse(SubmitBody, req.body ?? {});
    res.json(await submitStudy(id, currentUser(req), body.note || null));
  });
  r.post('/:id/approve', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const body = parse(ApproveBody, req.body ?? {});
    res.json(await approveStudy(pool, id, currentUser(req), body.password, body.note || null));
  });
  r.post('/:id/return', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(await returnStudy(id, currentUser(req), parse(ReturnBody, req.body ?? {}).comment));
  });
  r.post('/:id/reopen', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(await reopenStudy(id, currentUser(req), parse(ReopenBody, req.body ?? {}).reason));
  });
  r.get('/:id/reviews', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    await requireStudy(id);
    res.json({ reviews: await reviewHistory(id), revisions: await listRevisions(id) });
  });
  r.get('/:id/audit', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    await requireStudy(id);
    const q = parse(AuditQuery.pick({ limit: true, cursor: true }), req.query, 'query');
    res.json(await studyAudit(id, q));
  });
  /** The report: the study as it is now, or `?revision=N` for an approved revision exactly as approved. */
  r.get('/:id/report', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const { revision } = parse(RevisionQuery, req.query, 'query');
    res.json(revision ? await revisionReport(id, revision) : await buildStudyReport(pool, id));
  });
  return r;
}

/** `GET /api/audit` (filtered, paged) and `GET /api/audit/verify`: admins only. */
export function auditRouter(): Router {
  const r = Router();
  r.get('/', authorize('audit:read'), async (req, res) => {
    res.json(await listAudit(parse(AuditQuery, req.query, 'query')));
  });
  r.get('/verify', authorize('audit:read'), async (_req, res) => {
    res.json(await verifyAuditChain());
  });
  return r;
}

/** `GET /api/captures/:id/seal`: the stored digest of the raw readings, recomputed now. */
export function sealRouter(pool: pg.Pool): Router {
  const r = Router();
  r.get('/:id/seal', authorize('read'), async (req, res) => {
    res.json(await checkSeal(pool, parse(IdParam, req.params, 'id').id));
  });
  return r;
}
