import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { changePassword, login, logout, sessionUser } from '../services/auth.js';
import { LoginLimiter } from '../services/loginLimits.js';
import { AppError, UnauthorizedError } from '../errors.js';
import { LoginRequest } from '../../shared/protocol/api.js';
import { PasswordChange } from '../../shared/protocol/password.js';

export interface LoginLimits {
  /** Failed sign-ins one address may make per 15 minutes. */
  perAddress: number;
  /** Failed sign-ins one account may receive per 15 minutes, from all addresses together. */
  perAccount: number;
}

export function authRouter(secret: string, limits: LoginLimits): Router {
  const r = Router();
  const limiter = new LoginLimiter({
    windowMs: 15 * 60_000,
    perAddress: limits.perAddress,
    perAccount: limits.perAccount,
  });
  r.post('/login', async (req, res) => {
    const input = parse(LoginRequest, req.body);
    // req.ip honours the trust-proxy setting (TRUST_PROXY): behind a proxy, the client's address.
    const address = req.ip ?? req.socket.remoteAddress ?? 'unknown';
    const wait = limiter.blockedFor(address, input.email);
    if (wait > 0) {
      res.setHeader('Retry-After', String(wait));
      throw new AppError(
        429,
        'rate-limited',
        'Too many failed sign-in attempts. Wait a few minutes and try again.',
      );
    }
    try {
      const answer = await login(input, secret);
      limiter.recordSuccess(input.email);
      reply(res, 'POST /api/auth/login', answer);
    } catch (err) {
      if (err instanceof UnauthorizedError) limiter.recordFailure(address, input.email);
      throw err;
    }
  });
  r.get('/me', (req, res) => {
    const u = currentUser(req);
    reply(res, 'GET /api/auth/me', {
      user: sessionUser(u),
      mustChangePassword: u.mustChangePassword,
    });
  });
  r.post('/password', async (req, res) => {
    reply(
      res,
      'POST /api/auth/password',
      await changePassword(currentUser(req).id, parse(PasswordChange, req.body), secret),
    );
  });
  r.post('/logout', async (req, res) => {
    await logout(currentUser(req).id);
    res.status(204).end();
  });
  return r;
}
