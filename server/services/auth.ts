import bcrypt from 'bcryptjs';
import jwt from 'jsonwebtoken';
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type pg from 'pg';
import { User } from '../models/index.js';
import type { Role } from '../../shared/protocol/roles.js';
import { UnauthorizedError } from '../errors.js';
import type { LoginRequest } from '../../shared/protocol/api.js';

export const BCRYPT_COST = 11;
export const TOKEN_TTL = '12h';

// Compared against when the e-mail is unknown, so both failures take the same time.
const DUMMY_HASH = bcrypt.hashSync('driftbench-timing-equaliser', BCRYPT_COST);

/** The JWT secret: JWT_SECRET if set, else one generated once and kept in the data folder. */
export function resolveJwtSecret(configured: string | undefined, dataDir: string): string {
  if (configured) return configured;
  const file = path.join(dataDir, 'jwt-secret');
  if (existsSync(file)) return readFileSync(file, 'utf8').trim();
  mkdirSync(dataDir, { recursive: true });
  const secret = randomBytes(48).toString('base64url');
  writeFileSync(file, `${secret}\n`, { mode: 0o600 });
  return secret;
}

export function hashPassword(password: string): Promise<string> {
  return bcrypt.hash(password, BCRYPT_COST);
}

export interface TokenClaims {
  sub: string;
  role: string;
}

/** Checks e-mail and password; the same error for an unknown user, a wrong password or a disabled account. */
export async function login(input: LoginRequest, secret: string) {
  const user = await User.findOne({ where: { email: input.email } });
  const ok = await bcrypt.compare(input.password, user?.passwordHash ?? DUMMY_HASH);
  if (!user || !ok || !user.active) {
    throw new UnauthorizedError('invalid-credentials', 'E-mail or password is not right.');
  }
  user.lastLoginAt = new Date();
  await user.save();
  const token = jwt.sign({ role: user.role } satisfies Omit<TokenClaims, 'sub'>, secret, {
    algorithm: 'HS256',
    subject: String(user.id),
    expiresIn: TOKEN_TTL,
  });
  return { token, user: { id: user.id, email: user.email, name: user.name, role: user.role } };
}

/** The signed-in user as every request sees it. */
export interface AuthUser {
  id: number;
  email: string;
  name: string;
  role: Role;
}

/**
 * Verifies a bearer token and loads its user (one indexed query, on every request), so a
 * deactivated user's token stops working at once.
 */
export async function userFromToken(token: string, secret: string, pool: pg.Pool): Promise<AuthUser> {
  let claims: jwt.JwtPayload;
  try {
    const decoded = jwt.verify(token, secret, { algorithms: ['HS256'] });
    if (typeof decoded === 'string') throw new Error('unexpected payload');
    claims = decoded;
  } catch (err) {
    if (err instanceof jwt.TokenExpiredError) {
      throw new UnauthorizedError('token-expired', 'Your session has expired. Please sign in again.');
    }
    throw new UnauthorizedError('unauthorized', 'The sign-in token is not valid.');
  }
  const id = Number(claims.sub);
  const found = Number.isInteger(id)
    ? await pool.query<AuthUser & { active: boolean }>('SELECT id, email, name, role, active FROM users WHERE id = $1', [id])
    : null;
  const user = found?.rows[0];
  if (!user) throw new UnauthorizedError('unauthorized', 'The sign-in token is not valid.');
  if (!user.active) throw new UnauthorizedError('account-disabled', 'This account has been deactivated.');
  return { id: user.id, email: user.email, name: user.name, role: user.role };
}
