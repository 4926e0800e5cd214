import type { NextFunction, Request, Response } from 'express';
import type { Logger } from 'pino';
import { AppError } from '../errors.js';
import { AnalysisError } from '../../shared/analysis/index.js';
import { isDatabaseUnavailable, OUTAGE_RETRY_AFTER_S, type OutageMonitor } from '../db/outage.js';

/** The last middleware: maps AppErrors to the error envelope; anything else is logged and a generic 500. */
export function errorHandler(log: Logger, outage?: OutageMonitor) {
  // Express recognises error middleware by its four parameters.
  return (err: unknown, req: Request, res: Response, _next: NextFunction) => {
    if (err instanceof AppError) {
      res
        .status(err.status)
        .json({ error: { code: err.code, message: err.message, details: err.details } });
      return;
    }
    // The analysis refuses data it cannot reduce (mismatched units, too few points): a 422 with
    // its reason, not a server error.
    if (err instanceof AnalysisError) {
      res.status(422).json({ error: { code: `analysis-${err.code}`, message: err.message } });
      return;
    }
    const e = err as { type?: string; status?: number; message?: string };
    // body-parser errors: malformed JSON or an oversized body.
    if (e?.type === 'entity.parse.failed') {
      res
        .status(400)
        .json({ error: { code: 'bad-json', message: 'The request body is not valid JSON.' } });
      return;
    }
    if (e?.type === 'entity.too.large') {
      res
        .status(413)
        .json({ error: { code: 'too-large', message: 'The request body is too large.' } });
      return;
    }
    // The database is away (stopped, restarting, unreachable): 503 with Retry-After, logged once
    // per outage rather than once per request.
    if (isDatabaseUnavailable(err)) {
      outage?.report(err, { method: req.method, url: req.originalUrl });
      if (res.headersSent) return;
      res.setHeader('Retry-After', String(OUTAGE_RETRY_AFTER_S));
      res.status(503).json({
        error: {
          code: 'database-unavailable',
          message: 'The database is not reachable just now. Try again in a few seconds.',
        },
      });
      return;
    }
    log.error({ err, method: req.method, url: req.originalUrl }, 'unhandled error');
    if (res.headersSent) return;
    res.status(500).json({
      error: {
        code: 'internal',
        message: 'Something went wrong on the server. It has been logged.',
      },
    });
  };
}
