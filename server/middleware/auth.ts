import type { NextFunction, Request, Response } from 'express';
import { AppError, ForbiddenError, UnauthorizedError } from '../errors.js';
import type pg from 'pg';
import { userFromToken, type AuthUser } from '../services/auth.js';
import { roleCan, ruleFor, type Permission } from '../../shared/protocol/roles.js';

declare module 'express-serve-static-core' {
  interface Request {
    user?: AuthUser;
  }
}

/** What a user whose password an admin reset may still do before choosing a new one. */
const WHILE_MUST_CHANGE = new Set(['GET /auth/me', 'POST /auth/password', 'POST /auth/logout']);

/**
 * Verifies the bearer token on every /api route the permission table does not mark public, and
 * loads the user. Runs before any body is parsed, so an anonymous client cannot make the server
 * read a large body.
 */
export function authenticate(secret: string, pool: pg.Pool) {
  return async (req: Request, _res: Response, next: NextFunction) => {
    if (ruleFor(req.method, `/api${req.path}`)?.permission === 'public') return next();
    const header = req.get('authorization') ?? '';
    const match = /^Bearer\s+(\S+)$/i.exec(header);
    if (!match) throw new UnauthorizedError('unauthorized', 'Sign in to continue.');
    req.user = await userFromToken(match[1], secret, pool);
    if (req.user.mustChangePassword && !WHILE_MUST_CHANGE.has(`${req.method} ${req.path}`)) {
      throw new AppError(
        403,
        'password-change-required',
        'Choose a new password before continuing.',
      );
    }
    next();
  };
}

/**
 * Enforces the permission table (`shared/protocol/roles.ts` ROUTES) on every /api request: the
 * same table the route × role test is generated from. Routes also call `authorize` themselves.
 */
export function guardRoutes() {
  return (req: Request, _res: Response, next: NextFunction) => {
    const rule = ruleFor(req.method, `/api${req.path}`);
    if (!rule || rule.permission === 'public' || rule.permission === 'signed-in') return next();
    if (!req.user) throw new UnauthorizedError();
    if (!roleCan(req.user.role, rule.permission)) throw new ForbiddenError();
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
