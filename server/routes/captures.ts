import { Router } from 'express';
import type pg from 'pg';
import { pipeline } from 'node:stream/promises';
import { to as copyTo } from 'pg-copy-streams';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply, replyText } from '../middleware/responses.js';
import {
  CaptureCreate,
  CapturePatch,
  ReadingsQuery,
  AnalysisQuery,
  CaptureListFilter,
  ComparisonQuery,
} from '../../shared/protocol/captures.js';
import { IdParam } from '../../shared/protocol/api.js';
import { LIST_LIMITS, pageQuery } from '../../shared/protocol/paging.js';
import {
  createCapture,
  getCapture,
  listCaptures,
  patchCapture,
  requireCapture,
} from '../services/captures.js';
import { ingestReadings } from '../services/ingest.js';
import { finishCapture } from '../services/finish.js';
import { abortCapture } from '../services/captureLifecycle.js';
import { CaptureAbort, isRecording } from '../../shared/protocol/captureLifecycle.js';
import { readSeries } from '../services/readings.js';
import { assertReadingsOnline } from '../services/partitions.js';
import { compareCaptures } from '../services/comparisons.js';
import { conditionsBetween } from '../services/conditions.js';
import type { LiveHub } from '../ws/live.js';
import type { AnalysisPool } from '../analysis/pool.js';

/** Most raw readings one `GET …/readings` answers without maxPoints (about 4 MB of JSON). */
export const MAX_RAW_READINGS = 100_000;

const ListQuery = CaptureListFilter.extend(pageQuery(LIST_LIMITS.captures.max).shape);

/** `replica`: a read replica for raw pages of captures that no longer record (replay, export pages). */
export function capturesRouter(
  pool: pg.Pool,
  hub: LiveHub,
  analysis: AnalysisPool,
  replica?: pg.Pool,
): Router {
  const r = Router();
  r.get('/', authorize('read'), async (req, res) => {
    const q = parse(ListQuery, req.query, 'query');
    reply(
      res,
      'GET /api/captures',
      await listCaptures({ ...q, limit: q.limit ?? LIST_LIMITS.captures.default }),
    );
  });
  r.post('/', authorize('captures:run'), async (req, res) => {
    const capture = await createCapture(parse(CaptureCreate, req.body), currentUser(req));
    hub.publishState(capture.id, 'open');
    reply(res, 'POST /api/captures', capture, 201);
  });
  r.get('/:id', authorize('read'), async (req, res) => {
    reply(res, 'GET /api/captures/:id', await getCapture(parse(IdParam, req.params, 'id').id));
  });
  r.patch('/:id', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'PATCH /api/captures/:id',
      await patchCapture(id, parse(CapturePatch, req.body), currentUser(req)),
    );
  });
  r.post('/:id/readings', authorize('captures:run'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'POST /api/captures/:id/readings',
      await ingestReadings(pool, hub, currentUser(req), id, req.body),
    );
  });
  r.post('/:id/finish', authorize('captures:run'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'POST /api/captures/:id/finish',
      await finishCapture(pool, hub, currentUser(req), id, analysis),
    );
  });
  r.post('/:id/abort', authorize('captures:run'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const { reason } = parse(CaptureAbort, req.body);
    reply(
      res,
      'POST /api/captures/:id/abort',
      await abortCapture(pool, hub, currentUser(req), id, reason, analysis),
    );
  });
  r.get('/:id/readings', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const q = parse(ReadingsQuery, req.query, 'query');
    const c = await requireCapture(id);
    // Raw reads (no maxPoints) come in pages of at most MAX_RAW_READINGS; `nextFrom` is where the
    // next page starts, null on the last (the CSV download streams a whole capture instead).
    if (!q.maxPoints) {
      const from = q.from ?? 0;
      const to = Math.min(q.to ?? c.highestSeq, c.highestSeq, from + MAX_RAW_READINGS - 1);
      // A finished capture never changes, so a replica's copy is the same; a recording one is read
      // from the primary, where its newest readings are.
      const source = replica && !isRecording(c.state) ? replica : pool;
      const out = await readSeries(source, id, {
        from,
        to,
        finished: !isRecording(c.state),
        highestSeq: c.highestSeq,
      });
      // Nothing where the capture has readings: its partition may have been archived (410).
      if (out.readings.length === 0 && c.readingCount > 0) await assertReadingsOnline(pool, id);
      reply(res, 'GET /api/captures/:id/readings', {
        ...out,
        nextFrom: to < Math.min(q.to ?? c.highestSeq, c.highestSeq) ? to + 1 : null,
      });
      return;
    }
    const out = await readSeries(pool, id, {
      ...q,
      finished: !isRecording(c.state),
      highestSeq: c.highestSeq,
    });
    if (out.readings.length === 0 && c.readingCount > 0) await assertReadingsOnline(pool, id);
    reply(res, 'GET /api/captures/:id/readings', out);
  });
  r.get('/:id/readings.csv', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const c = await requireCapture(id);
    await assertReadingsOnline(pool, id);
    const client = await pool.connect();
    try {
      res.setHeader('content-type', 'text/csv; charset=utf-8');
      res.setHeader('content-disposition', `attachment; filename="driftbench-capture-${id}.csv"`);
      // `id` is a validated integer: COPY takes no bind parameters.
      const stream = client.query(
        copyTo(
          `COPY (SELECT seq, t AS t_s, value AS "value_${c.unit.replace(/[^A-Za-z%]/g, '')}", flags FROM readings WHERE capture_id = ${id} ORDER BY seq) TO STDOUT WITH (FORMAT csv, HEADER true)`,
        ),
      );
      await pipeline(stream, res);
      client.release();
    } catch (err) {
      // A client that went away mid-COPY leaves the connection in an unknown state: discard it.
      client.release(err as Error);
      if (!res.headersSent) throw err;
    }
  });
  r.get('/:id/analysis', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const q = parse(AnalysisQuery, req.query, 'query');
    const c = await requireCapture(id);
    await assertReadingsOnline(pool, id);
    // Computed in a worker thread (server/analysis/worker.ts: the same figures — summary,
    // stability on the series with the chosen drift removed), cached per reading count, with
    // concurrent requests for the same capture sharing one computation.
    const text = await analysis.analysis(
      { captureId: id, ...q },
      { readingCount: c.readingCount, state: c.state },
    );
    replyText(res, 'GET /api/captures/:id/analysis', text);
  });
  return r;
}

export function comparisonsRouter(pool: pg.Pool): Router {
  const r = Router();
  r.get('/', authorize('read'), async (req, res) => {
    const q = parse(ComparisonQuery, req.query, 'query');
    const result = await compareCaptures(pool, q.before, q.after);
    // Beside the verdict: every condition the two captures were recorded under differently.
    reply(res, 'GET /api/comparisons', {
      ...result,
      conditions: await conditionsBetween(q.before, q.after),
    });
  });
  return r;
}
