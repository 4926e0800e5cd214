import bcrypt from 'bcryptjs';
import jwt from 'jsonwebtoken';
import { createSecretKey, randomBytes, type KeyObject } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type pg from 'pg';
import { User } from '../models/index.js';
import type { Role } from '../../shared/protocol/roles.js';
import { AppError, UnauthorizedError, ValidationError } from '../errors.js';
import type { LoginRequest } from '../../shared/protocol/api.js';
import {
  PASSWORD_MAX_BYTES,
  utf8Bytes,
  type PasswordChange,
} from '../../shared/protocol/password.js';
import { audit } from './audit.js';

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

/** bcrypt of a password; refuses more than 72 bytes, which bcrypt would silently cut. */
export function hashPassword(password: string): Promise<string> {
  if (utf8Bytes(password) > PASSWORD_MAX_BYTES) {
    throw new ValidationError(`password: must be at most ${PASSWORD_MAX_BYTES} bytes`, [
      { path: 'password', message: `must be at most ${PASSWORD_MAX_BYTES} bytes` },
    ]);
  }
  return bcrypt.hash(password, BCRYPT_COST);
}

/** True when `password` matches `hash` (false for more than 72 bytes: bcrypt would compare a prefix). */
export function passwordMatches(password: string, hash: string): Promise<boolean> {
  if (utf8Bytes(password) > PASSWORD_MAX_BYTES)
    return bcrypt.compare('', DUMMY_HASH).then(() => false);
  return bcrypt.compare(password, hash);
}

export interface TokenClaims {
  sub: string;
  role: string;
  /** The user's token version when the token was issued; a later version revokes it. */
  tv: number;
}

/** The user as the sign-in answer and /me show it. */
export function sessionUser(u: { id: number; email: string; name: string; role: Role }) {
  return { id: u.id, email: u.email, name: u.name, role: u.role };
}

/** A sign-in token for `user` at its current token version. */
export function issueToken(
  user: { id: number; role: Role; tokenVersion: number },
  secret: string,
): string {
  return jwt.sign(
    { role: user.role, tv: user.tokenVersion } satisfies Omit<TokenClaims, 'sub'>,
    secret,
    {
      algorithm: 'HS256',
      subject: String(user.id),
      expiresIn: TOKEN_TTL,
    },
  );
}

/**
 * Checks e-mail and password; the same error for an unknown user, a wrong password or a disabled
 * account. `mustChangePassword` tells the client to ask for a new password before anything else
 * (the server refuses every other route until then).
 */
export async function login(input: LoginRequest, secret: string) {
  const user = await User.findOne({ where: { email: input.email } });
  const ok = await passwordMatches(input.password, user?.passwordHash ?? DUMMY_HASH);
  if (!user || !ok || !user.active) {
    throw new UnauthorizedError('invalid-credentials', 'E-mail or password is not right.');
  }
  user.lastLoginAt = new Date();
  await user.save();
  return {
    token: issueToken(user, secret),
    user: sessionUser(user),
    mustChangePassword: user.mustChangePassword,
  };
}

/** The signed-in user as every request sees it. */
export interface AuthUser {
  id: number;
  email: string;
  name: string;
  role: Role;
  mustChangePassword: boolean;
}

interface UserRow {
  id: number;
  email: string;
  name: string;
  role: Role;
  active: boolean;
  token_version: number;
  must_change_password: boolean;
}

/**
 * The secret as a key object, made once: given a string, jsonwebtoken builds a new key object on
 * every verify (about 1.5 ms of the event loop per request under load, measured by
 * tests/bench/analysisLoad.ts's CPU profile).
 */
const secretKeys = new Map<string, KeyObject>();
function secretKey(secret: string): KeyObject {
  let key = secretKeys.get(secret);
  if (!key) {
    key = createSecretKey(Buffer.from(secret, 'utf8'));
    secretKeys.set(secret, key);
  }
  return key;
}

/** Verifies a token's signature and expiry; its claims, or a 401. */
export function verifyToken(token: string, secret: string): jwt.JwtPayload {
  try {
    const decoded = jwt.verify(token, secretKey(secret), { algorithms: ['HS256'] });
    if (typeof decoded === 'string') throw new Error('unexpected payload');
    return decoded;
  } catch (err) {
    if (err instanceof jwt.TokenExpiredError) {
      throw new UnauthorizedError(
        'token-expired',
        'Your session has expired. Please sign in again.',
      );
    }
    throw new UnauthorizedError('unauthorized', 'The sign-in token is not valid.');
  }
}

const USER_ROW_SQL =
  'SELECT id, email, name, role, active, token_version, must_change_password FROM users WHERE id = $1';

/** The session checks on a user row read for `claims`: the user, or the 401 that ends it. */
function sessionOf(claims: jwt.JwtPayload, user: UserRow | undefined): AuthUser {
  if (!user) throw new UnauthorizedError('unauthorized', 'The sign-in token is not valid.');
  if (!user.active)
    throw new UnauthorizedError('account-disabled', 'This account has been deactivated.');
  if ((claims.tv ?? 0) !== user.token_version) {
    throw new UnauthorizedError(
      'session-ended',
      'This session has ended (signed out, or the account changed). Please sign in again.',
    );
  }
  return {
    id: user.id,
    email: user.email,
    name: user.name,
    role: user.role,
    mustChangePassword: user.must_change_password,
  };
}

/**
 * Verifies a bearer token and loads its user (one indexed query, on every request), so a
 * deactivated user's token stops working at once, and so does a token issued before the user's
 * token version moved on (sign-out, password or role change, deactivation).
 */
export async function userFromToken(
  token: string,
  secret: string,
  pool: pg.Pool,
): Promise<AuthUser> {
  const claims = verifyToken(token, secret);
  const id = Number(claims.sub);
  const found = Number.isInteger(id) ? await pool.query<UserRow>(USER_ROW_SQL, [id]) : null;
  return sessionOf(claims, found?.rows[0]);
}

/** A look-up of one user row not sent yet, and everyone waiting for it. */
interface Waiting {
  promise: Promise<UserRow | undefined>;
  resolve(row: UserRow | undefined): void;
  reject(err: unknown): void;
}
/** Per (user id, token version): whether a look-up is in flight, and the one gathering callers. */
interface Flight {
  running: boolean;
  next: Waiting | null;
}
const flights = new WeakMap<pg.Pool, Map<string, Flight>>();

/** Users-row queries sent by userFromTokenShared (tests count them against the checks asked). */
export const sharedSessionStats = { checks: 0, queries: 0 };

function startLookup(
  pool: pg.Pool,
  byKey: Map<string, Flight>,
  key: string,
  flight: Flight,
  id: number,
): void {
  const batch = flight.next!;
  flight.next = null;
  flight.running = true;
  sharedSessionStats.queries++;
  pool.query<UserRow>(USER_ROW_SQL, [id]).then(
    (res) => batch.resolve(res.rows[0]),
    (err) => batch.reject(err),
  );
  batch.promise
    .catch(() => {})
    .finally(() => {
      flight.running = false;
      // Callers that arrived while this look-up was in flight share the next one, sent now.
      if (flight.next) startLookup(pool, byKey, key, flight, id);
      else byKey.delete(key);
    });
}

/**
 * userFromToken for a stream of checks of one session, as the readings frames of a socket are
 * (server/ws/uploads.ts): the same checks and errors, but the checks of one user and token
 * version that arrive in the same event-loop turn share ONE users query, sent once the turn's
 * I/O has been read (setImmediate); checks arriving while that query is in flight wait for and
 * share the next one, sent when it returns. A query is never sent before a check that uses it
 * arrived, so every check sees the row as committed after it arrived: a role change, a
 * deactivation or a sign-out takes effect for the first check that arrives after it, never a
 * row remembered from an earlier turn. HTTP requests keep userFromToken (one query each).
 */
export async function userFromTokenShared(
  token: string,
  secret: string,
  pool: pg.Pool,
): Promise<AuthUser> {
  const claims = verifyToken(token, secret);
  const id = Number(claims.sub);
  if (!Number.isInteger(id)) return sessionOf(claims, undefined);
  sharedSessionStats.checks++;
  let byKey = flights.get(pool);
  if (!byKey) flights.set(pool, (byKey = new Map()));
  const key = `${id}:${claims.tv ?? 0}`;
  let flight = byKey.get(key);
  if (!flight) byKey.set(key, (flight = { running: false, next: null }));
  if (!flight.next) {
    let resolve!: Waiting['resolve'];
    let reject!: Waiting['reject'];
    const promise = new Promise<UserRow | undefined>((res, rej) => {
      resolve = res;
      reject = rej;
    });
    flight.next = { promise, resolve, reject };
    // Not in flight: send it after this turn's other checks joined. In flight: startLookup
    // sends it when the running one returns.
    if (!flight.running) {
      const started = flight;
      setImmediate(() => {
        if (!started.running && started.next) startLookup(pool, byKey, key, started, id);
      });
    }
  }
  return sessionOf(claims, await flight.next!.promise);
}

/** Signs out: every token of the user stops working (the token version moves on). */
export async function logout(userId: number): Promise<void> {
  await User.increment('tokenVersion', { by: 1, where: { id: userId } });
}

/**
 * Changes the signed-in user's own password: the current one must be right, the new one must meet
 * the policy and differ. Every older token is revoked; the answer carries a fresh token for this
 * session. Clears a forced change after an admin reset.
 */
export async function changePassword(userId: number, input: PasswordChange, secret: string) {
  const user = await User.findByPk(userId);
  if (!user) throw new UnauthorizedError();
  if (!(await passwordMatches(input.currentPassword, user.passwordHash))) {
    throw new AppError(403, 'wrong-password', 'The current password is not right.', [
      { path: 'currentPassword', message: 'is not right' },
    ]);
  }
  if (input.newPassword === input.currentPassword) {
    throw new ValidationError('newPassword: must differ from the current password', [
      { path: 'newPassword', message: 'must differ from the current password' },
    ]);
  }
  const hash = await hashPassword(input.newPassword);
  await User.sequelize!.transaction(async (transaction) => {
    user.passwordHash = hash;
    user.mustChangePassword = false;
    user.passwordChangedAt = new Date();
    user.tokenVersion = user.tokenVersion + 1;
    await user.save({ transaction });
    await audit(userId, 'user.password.change', 'user', userId, undefined, transaction);
  });
  return { token: issueToken(user, secret), user: sessionUser(user), mustChangePassword: false };
}
