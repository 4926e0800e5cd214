import { z } from 'zod';
import { ROLES, type Permission } from './permissions.js';

export { ROLES, PERMISSIONS, roleCan, type Permission } from './permissions.js';

export const Role = z.enum(ROLES);
export type Role = z.infer<typeof Role>;

/** Who may call a route: a permission, any signed-in user, or anyone (sign-in, health). */
export type RouteAccess = Permission | 'signed-in' | 'public';

/**
 * Every API route and who may call it — the one table the server enforces (`guardRoutes` in
 * `server/middleware/auth.ts`) and the route × role test is generated from. A route registered
 * on the server without a line here fails that test. `:name` matches one path segment.
 */
export const ROUTES = {
  'GET /api/health': 'public',
  'POST /api/auth/login': 'public',
  'GET /api/auth/me': 'signed-in',
  'POST /api/auth/password': 'signed-in',
  'POST /api/auth/logout': 'signed-in',
  'GET /api/users': 'users:manage',
  'POST /api/users': 'users:manage',
  'PATCH /api/users/:id': 'users:manage',
  'POST /api/users/:id/password-reset': 'users:manage',
  'GET /api/studies': 'read',
  'POST /api/studies': 'studies:plan',
  'GET /api/studies/:id': 'read',
  'GET /api/studies/:id/matrix': 'read',
  'POST /api/studies/:id/checkpoints': 'studies:plan',
  'POST /api/studies/:id/duts': 'studies:plan',
  'GET /api/instruments': 'read',
  'POST /api/instruments': 'instruments:manage',
  'GET /api/instruments/:id': 'read',
  'PATCH /api/instruments/:id': 'instruments:manage',
  'GET /api/instruments/:id/calibrations': 'read',
  'POST /api/instruments/:id/calibrations': 'instruments:manage',
  'POST /api/instruments/:id/away': 'instruments:manage',
  'POST /api/instruments/:id/retire': 'instruments:manage',
  'POST /api/instruments/:id/reinstate': 'instruments:manage',
  'PUT /api/instruments/:id/link-profile': 'lab:manage',
  'DELETE /api/instruments/:id/link-profile': 'lab:manage',
  'GET /api/references': 'read',
  'POST /api/references': 'lab:manage',
  'PATCH /api/references/:id': 'lab:manage',
  'GET /api/references/:id': 'read',
  'GET /api/references/:id/calibrations': 'read',
  'POST /api/references/:id/calibrations': 'lab:manage',
  'POST /api/references/:id/away': 'lab:manage',
  'POST /api/references/:id/retire': 'lab:manage',
  'POST /api/references/:id/reinstate': 'lab:manage',
  'POST /api/references/:id/lab-default': 'lab:manage',
  'PATCH /api/duts/:id': 'studies:plan',
  // Accelerometers (issue 13): the tilt check's result is recorded by whoever runs the bench.
  'POST /api/duts/:id/tilt-checks': 'captures:run',
  'GET /api/duts/:id/tilt-checks': 'read',
  'GET /api/captures/:id/baseline': 'read',
  'GET /api/captures/:id/stability-limit': 'read',
  'PATCH /api/studies/:id/settings': 'studies:plan',
  // Editing with history (issue 13): planners edit, reorder, archive and delete; a lead rules on evidence.
  'PATCH /api/studies/:id': 'studies:plan',
  'DELETE /api/studies/:id': 'studies:plan',
  'POST /api/studies/:id/checkpoints/order': 'studies:plan',
  'PATCH /api/checkpoints/:id': 'studies:plan',
  'DELETE /api/checkpoints/:id': 'studies:plan',
  'DELETE /api/duts/:id': 'studies:plan',
  'GET /api/studies/:id/cells': 'read',
  'PUT /api/studies/:id/cells': 'studies:review',
  'POST /api/captures/:id/exclude': 'studies:review',
  'POST /api/captures/:id/include': 'studies:review',
  'GET /api/dashboard': 'read',
  'GET /api/captures': 'read',
  'POST /api/captures': 'captures:run',
  'POST /api/captures/import': 'captures:run',
  'GET /api/captures/import/progress/:key': 'captures:run',
  'GET /api/captures/stability': 'read',
  'GET /api/captures/:id/export.csv': 'read',
  'GET /api/studies/:id/captures.csv': 'read',
  'GET /api/captures/:id': 'read',
  // Notes and tags: the service lets the capture's operator or a tagger change them.
  'PATCH /api/captures/:id': 'read',
  'POST /api/captures/:id/readings': 'captures:run',
  'POST /api/captures/:id/finish': 'captures:run',
  'POST /api/captures/:id/abort': 'captures:run',
  'GET /api/captures/:id/readings': 'read',
  'GET /api/captures/:id/readings.csv': 'read',
  'GET /api/captures/:id/analysis': 'read',
  'GET /api/comparisons': 'read',
  // Review and the record (issue 11).
  'POST /api/studies/:id/start': 'studies:plan',
  'POST /api/studies/:id/submit': 'studies:submit',
  'POST /api/studies/:id/approve': 'studies:review',
  'POST /api/studies/:id/return': 'studies:review',
  'POST /api/studies/:id/reopen': 'studies:review',
  'GET /api/studies/:id/reviews': 'read',
  'GET /api/studies/:id/audit': 'read',
  'GET /api/studies/:id/report': 'read',
  'GET /api/studies/:id/attachments': 'read',
  'POST /api/studies/:id/attachments': 'attachments:upload',
  'GET /api/checkpoints/:id/attachments': 'read',
  'POST /api/checkpoints/:id/attachments': 'attachments:upload',
  'GET /api/captures/:id/attachments': 'read',
  'POST /api/captures/:id/attachments': 'attachments:upload',
  'GET /api/captures/:id/seal': 'read',
  'GET /api/attachments/:id': 'read',
  // Deletion: the service lets the uploader or a lead delete.
  'DELETE /api/attachments/:id': 'read',
  'GET /api/audit': 'audit:read',
  'GET /api/audit/verify': 'audit:read',
  'GET /api/outbox': 'outbox:read',
  'GET /api/outbox/received': 'outbox:read',
  'POST /api/outbox/:id/retry': 'outbox:read',
} as const satisfies Record<string, RouteAccess>;
export type RouteKey = keyof typeof ROUTES;

export interface RouteRule {
  key: string;
  method: string;
  path: string;
  permission: RouteAccess;
  pattern: RegExp;
}

function compile(key: string, permission: RouteAccess): RouteRule {
  const [method, path] = key.split(' ');
  const source = path
    .split('/')
    .map((seg) => (seg.startsWith(':') ? '[^/]+' : seg.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')))
    .join('/');
  return { key, method, path, permission, pattern: new RegExp(`^${source}/?$`) };
}

/** The table compiled once, literal paths before patterns so `/x/new` would win over `/x/:id`. */
export const ROUTE_RULES: readonly RouteRule[] = Object.entries(
  ROUTES as Record<string, RouteAccess>,
)
  .map(([k, p]) => compile(k, p))
  .sort((a, b) => Number(a.path.includes(':')) - Number(b.path.includes(':')));

/** The rule for a request (`path` including `/api`), or undefined when the table has none. */
export function ruleFor(method: string, path: string): RouteRule | undefined {
  const m = method === 'HEAD' ? 'GET' : method;
  return ROUTE_RULES.find((r) => r.method === m && r.pattern.test(path));
}
