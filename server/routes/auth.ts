import { Router } from 'express';
import { rateLimit } from 'express-rate-limit';
import { parse } from '../middleware/validate.js';
import { currentUser } from '../middleware/auth.js';
import { login } from '../services/auth.js';
import { LoginRequest } from '../../shared/protocol/api.js';

export function authRouter(secret: string, loginLimit: number): Router {
  const r = Router();
  const limiter = rateLimit({
    windowMs: 15 * 60_000,
    limit: loginLimit,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    handler: (_req, res) => {
      res.status(429).json({
        error: { code: 'rate-limited', message: 'Too many sign-in attempts. Wait a few minutes and try again.' },
      });
    },
  });
  r.post('/login', limiter, async (req, res) => {
    res.json(await login(parse(LoginRequest, req.body), secret));
  });
  r.get('/me', (req, res) => {
    const u = currentUser(req);
    res.json({ user: { id: u.id, email: u.email, name: u.name, role: u.role } });
  });
  return r;
}
