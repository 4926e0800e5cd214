import type { NextFunction, Request, Response } from 'express';
import { ForbiddenError, UnauthorizedError } from '../errors.js';
import type pg from 'pg';
import { userFromToken, type AuthUser } from '../services/auth.js';
import { roleCan, type Permission } from '../../shared/protocol/roles.js';

declare module 'express-serve-static-core' {
  interface Request {
    user?: AuthUser;
  }
}

/** Paths under /api that need no sign-in. */
const PUBLIC = new Set(['POST /auth/login', 'GET /health']);

/** Verifies the bearer token on every /api route except the public ones and loads the user. */
export function authenticate(secret: string, pool: pg.Pool) {
  return async (req: Request, _res: Response, next: NextFunction) => {
    if (PUBLIC.has(`${req.method} ${req.path}`)) return next();
    const header = req.get('authorization') ?? '';
    const match = /^Bearer\s+(\S+)$/i.exec(header);
    if (!match) throw new UnauthorizedError('unauthorized', 'Sign in to continue.');
    req.user = await userFromToken(match[1], secret, pool);
    next();
  };
}

/** Refuses the request with 403 unless the signed-in user's role holds `permission`. */
export function authorize(permission: Permission) {
  return (req: Request, _res: Response, next: NextFunction) => {
    if (!req.user) throw new UnauthorizedError();
    if (!roleCan(req.user.role, permission)) throw new ForbiddenError();
    next();
  };
}

/** The signed-in user of a request that passed `authenticate`. */
export function currentUser(req: Request): AuthUser {
  if (!req.user) throw new UnauthorizedError();
  return req.user;
}
