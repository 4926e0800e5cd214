import express, { type Express } from 'express';
import helmet from 'helmet';
import { existsSync } from 'node:fs';
import path from 'node:path';
import type { Logger } from 'pino';
import type { Database } from './db/connection.js';
import { authenticate } from './middleware/auth.js';
import { errorHandler } from './middleware/errorHandler.js';
import { NotFoundError } from './errors.js';
import { authRouter } from './routes/auth.js';
import { usersRouter } from './routes/users.js';
import { studiesRouter } from './routes/studies.js';
import { labRouter } from './routes/lab.js';
import { instrumentsRouter } from './routes/instruments.js';
import { dutsRouter, referencesRouter } from './routes/references.js';
import { healthRouter } from './routes/health.js';
import { capturesRouter, comparisonsRouter } from './routes/captures.js';
import { silentHub, type LiveHub } from './ws/live.js';

export interface AppContext {
  db: Database;
  jwtSecret: string;
  log: Logger;
  /** Folder of the built client; not served when absent. */
  clientDir?: string;
  loginRateLimit?: number;
  /** Live fan-out to watchers; silent when nobody can watch (Supertest). */
  hub?: LiveHub;
}

/** Builds the Express app: middleware order, routers, 404, error handler. No listen(), for Supertest. */
export function createApp(ctx: AppContext): Express {
  const app = express();
  app.disable('x-powered-by');
  app.set('trust proxy', false);
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
  api.use(express.json({ limit: '8mb' }));
  api.use(healthRouter(ctx.db));
  api.use(authenticate(ctx.jwtSecret, ctx.db.pool));
  api.use('/auth', authRouter(ctx.jwtSecret, ctx.loginRateLimit ?? 20));
  api.use('/users', usersRouter());
  api.use('/studies', studiesRouter(ctx.db.pool));
  api.use('/instruments', instrumentsRouter());
  api.use(labRouter());
  api.use('/references', referencesRouter());
  api.use('/duts', dutsRouter());
  api.use('/captures', capturesRouter(ctx.db.pool, ctx.hub ?? silentHub));
  api.use('/comparisons', comparisonsRouter(ctx.db.pool));
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
  app.use(errorHandler(ctx.log));
  return app;
}
