import express, { type Express } from 'express';
import helmet from 'helmet';
import { existsSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type pg from 'pg';
import type { Database } from './db/connection.js';
import { authenticate, guardRoutes } from './middleware/auth.js';
import { jsonBodies } from './middleware/bodies.js';
import { errorHandler } from './middleware/errorHandler.js';
import { validateResponses } from './middleware/responses.js';
import { outageMonitor } from './db/outage.js';
import { AnalysisPool } from './analysis/pool.js';
import { NotFoundError } from './errors.js';
import { authRouter } from './routes/auth.js';
import { usersRouter } from './routes/users.js';
import { studiesRouter } from './routes/studies.js';
import { labRouter } from './routes/lab.js';
import { instrumentsRouter } from './routes/instruments.js';
import { dutsRouter, referencesRouter } from './routes/references.js';
import { healthRouter } from './routes/health.js';
import { capturesRouter, comparisonsRouter } from './routes/captures.js';
import { captureImportRouter } from './routes/captureImport.js';
import { workbenchCapturesRouter, workbenchStudiesRouter } from './routes/workbench.js';
import { silentHub, type LiveHub } from './ws/live.js';
import { auditRouter, reviewRouter, sealRouter } from './routes/review.js';
import { attachmentsRouter, ownerAttachmentsRouter } from './routes/attachments.js';
import { outboxRouter } from './routes/outbox.js';
import { captureBaselineRouter, tiltChecksRouter } from './routes/accelerometer.js';
import {
  captureEvidenceRouter,
  checkpointsRouter,
  dutDeleteRouter,
  studyEditRouter,
} from './routes/studyEdit.js';
import { FolderStore, type BlobStore } from './services/storage.js';
import {
  DEFAULT_UPLOAD_MAX_BYTES,
  DEFAULT_UPLOAD_TYPES,
  type UploadPolicy,
} from './services/attachments.js';
import os from 'node:os';

export interface AppContext {
  db: Database;
  jwtSecret: string;
  log: Logger;
  /** Folder of the built client; not served when absent. */
  clientDir?: string;
  /** Failed sign-ins one address may make per 15 minutes. */
  loginRateLimit?: number;
  /** Failed sign-ins one account may receive per 15 minutes. */
  loginAccountLimit?: number;
  /** Express's trust-proxy setting (TRUST_PROXY); off by default. */
  trustProxy?: boolean | number | string[];
  /** Worker threads for capture analyses; one is made when absent. */
  analysis?: AnalysisPool;
  /**
   * A read replica (DATABASE_REPLICA_URL) for replay reads: raw pages of captures that no longer
   * record. Reads of a recording capture stay on the primary (a replica lags).
   */
  replica?: pg.Pool;
  /** Live fan-out to watchers; silent when nobody can watch (Supertest). */
  hub?: LiveHub;
  /** Where attachment bytes go (default: a folder under the system's temporary folder). */
  attachmentStore?: BlobStore;
  /** Largest upload and the accepted types (default 25 MB; photos, PDF, CSV, text). */
  uploadPolicy?: UploadPolicy;
}

/** Builds the Express app: middleware order, routers, 404, error handler. No listen(), for Supertest. */
export function createApp(ctx: AppContext): Express {
  const app = express();
  app.disable('x-powered-by');
  app.set('trust proxy', ctx.trustProxy ?? false);
  app.use(
    helmet({
      contentSecurityPolicy: {
        useDefaults: true,
        directives: {
          'default-src': ["'self'"],
          'script-src': ["'self'"],
          // Element Plus sets inline style attributes for positioning popovers and tables.
          'style-src': ["'self'", "'unsafe-inline'"],
          'img-src': ["'self'", 'data:', 'blob:'],
          'font-src': ["'self'", 'data:'],
          // 'self' covers same-origin ws: and wss: in current browsers.
          'connect-src': ["'self'"],
          'upgrade-insecure-requests': null,
        },
      },
      // The app is served over plain http on loopback by default.
      strictTransportSecurity: false,
    }),
  );

  const api = express.Router();
  api.use(validateResponses());
  api.use(healthRouter(ctx.db));
  // Sign-in first, then the body: an anonymous client cannot make the server read a body, and
  // only the ingest route takes a large one.
  api.use(authenticate(ctx.jwtSecret, ctx.db.pool));
  api.use(jsonBodies());
  api.use(guardRoutes());
  api.use(
    '/auth',
    authRouter(ctx.jwtSecret, {
      perAddress: ctx.loginRateLimit ?? 20,
      perAccount: ctx.loginAccountLimit ?? 10,
    }),
  );
  api.use('/users', usersRouter());
  api.use('/studies', studiesRouter(ctx.db.pool));
  api.use('/instruments', instrumentsRouter());
  api.use(labRouter());
  api.use('/references', referencesRouter());
  api.use('/duts', dutsRouter());
  api.use('/duts', tiltChecksRouter(ctx.db.pool));
  api.use('/captures', captureBaselineRouter(ctx.db.pool));
  // Editing with history (issue 13): edit, reorder, archive, delete; exclusions and cell choices.
  api.use('/studies', studyEditRouter());
  api.use('/checkpoints', checkpointsRouter());
  api.use('/duts', dutDeleteRouter());
  api.use('/captures', captureEvidenceRouter());
  // Readings logged elsewhere (issue 12): multipart, parsed as it streams; before `/:id`.
  // One analysis pool for the capture routes and the import's finish (its workers start on use).
  const analysis = ctx.analysis ?? new AnalysisPool(ctx.db.url);
  api.use('/captures', captureImportRouter(ctx.db.pool, ctx.hub ?? silentHub, analysis));
  // The comparison workbench's overlay and exports (issue 12); `/stability` before `/:id`.
  api.use('/captures', workbenchCapturesRouter(ctx.db.pool));
  api.use('/studies', workbenchStudiesRouter());
  api.use('/captures', capturesRouter(ctx.db.pool, ctx.hub ?? silentHub, analysis, ctx.replica));
  api.use('/comparisons', comparisonsRouter(ctx.db.pool));
  // Review and the record (issue 11): workflow, audit, seals, attachments, outbox.
  const store =
    ctx.attachmentStore ??
    new FolderStore(path.join(os.tmpdir(), `driftbench-attachments-${process.pid}`));
  const policy = ctx.uploadPolicy ?? {
    maxBytes: DEFAULT_UPLOAD_MAX_BYTES,
    types: DEFAULT_UPLOAD_TYPES,
  };
  api.use('/studies', reviewRouter(ctx.db.pool), ownerAttachmentsRouter('study', store, policy));
  api.use('/checkpoints', ownerAttachmentsRouter('checkpoint', store, policy));
  api.use('/captures', sealRouter(ctx.db.pool), ownerAttachmentsRouter('capture', store, policy));
  api.use('/attachments', attachmentsRouter(store));
  api.use('/audit', auditRouter());
  api.use('/outbox', outboxRouter());
  api.use((req) => {
    throw new NotFoundError(`Route ${req.method} ${req.baseUrl}${req.path}`);
  });
  app.use('/api', api);

  const clientDir = ctx.clientDir;
  if (clientDir && existsSync(path.join(clientDir, 'index.html'))) {
    app.use(express.static(clientDir, { index: false, maxAge: '1h' }));
    app.get('/{*splat}', (_req, res) => {
      res.setHeader('Cache-Control', 'no-cache');
      res.sendFile(path.join(clientDir, 'index.html'));
    });
  }
  app.use(errorHandler(ctx.log, outageMonitor(ctx.db.pool, ctx.log)));
  return app;
}
