import type pg from 'pg';
import type { Logger } from 'pino';

/** Seconds a client is asked to wait before retrying during a database outage. */
export const OUTAGE_RETRY_AFTER_S = 5;

const CONNECTION_CODES = new Set([
  'ECONNREFUSED',
  'ECONNRESET',
  'ETIMEDOUT',
  'EPIPE',
  'ENOTFOUND',
  'EHOSTUNREACH',
  // PostgreSQL: connection exceptions (class 08) and operator intervention (57P01–57P03).
  '08000',
  '08001',
  '08003',
  '08004',
  '08006',
  '57P01',
  '57P02',
  '57P03',
]);
const CONNECTION_NAMES = new Set([
  'SequelizeConnectionError',
  'SequelizeConnectionRefusedError',
  'SequelizeConnectionTimedOutError',
  'SequelizeHostNotReachableError',
  'SequelizeConnectionAcquireTimeoutError',
]);
const CONNECTION_MESSAGES = [
  /Connection terminated/i,
  /timeout exceeded when trying to connect/i,
  /Client has encountered a connection error/i,
  /terminating connection/i,
  /is not currently accepting connections/i,
  /the database system is (starting up|shutting down|in recovery mode)/i,
];

/** True when `err` (or its cause) says the database cannot be reached, rather than that a query was wrong. */
export function isDatabaseUnavailable(err: unknown, depth = 0): boolean {
  if (!err || typeof err !== 'object' || depth > 4) return false;
  const e = err as {
    code?: unknown;
    name?: unknown;
    message?: unknown;
    original?: unknown;
    parent?: unknown;
    cause?: unknown;
  };
  if (typeof e.code === 'string' && CONNECTION_CODES.has(e.code)) return true;
  if (typeof e.name === 'string' && CONNECTION_NAMES.has(e.name)) return true;
  if (
    typeof e.message === 'string' &&
    CONNECTION_MESSAGES.some((re) => re.test(e.message as string))
  )
    return true;
  return [e.original, e.parent, e.cause].some(
    (c) => c !== err && isDatabaseUnavailable(c, depth + 1),
  );
}

/**
 * Notes a database outage once: the first failing request logs it, later ones stay quiet, and a
 * probe every few seconds logs when the database answers again (then the next outage is logged).
 */
export function outageMonitor(pool: pg.Pool, log: Logger, probeMs = 2000) {
  let since: number | null = null;
  let timer: ReturnType<typeof setInterval> | null = null;
  const probe = () => {
    pool.query('SELECT 1').then(
      () => {
        if (since === null) return;
        log.warn({ downForMs: Date.now() - since }, 'database reachable again');
        since = null;
        if (timer) clearInterval(timer);
        timer = null;
      },
      () => {},
    );
  };
  return {
    get down() {
      return since !== null;
    },
    /** Records a failed request; logs only the first of an outage. */
    report(err: unknown, where: { method: string; url: string }) {
      if (since !== null) return;
      since = Date.now();
      log.error({ err, ...where }, 'database unreachable: answering 503 until it is back');
      timer = setInterval(probe, probeMs);
      timer.unref?.();
    },
    stop() {
      if (timer) clearInterval(timer);
      timer = null;
    },
  };
}
export type OutageMonitor = ReturnType<typeof outageMonitor>;
