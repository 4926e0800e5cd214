import { callRoute } from './http';

import type { Role } from '../../shared/protocol/roles';
import type { SessionUser } from '../../shared/protocol/models';
import type { LoginResponse, MeResponse } from '../../shared/protocol/responses';

export type { Role };
export { ROLES } from '../../shared/protocol/permissions';

export type { SessionUser };
/** The answer of signing in and of changing the password: a token and who it belongs to. */
export type LoginAnswer = LoginResponse;

export function login(email: string, password: string): Promise<LoginAnswer> {
  return callRoute('POST /api/auth/login', {}, { body: { email, password } });
}

/** The signed-in user; the session store handles a 401 here itself. */
export function fetchMe(): Promise<MeResponse> {
  return callRoute('GET /api/auth/me', {}, { ignoreSessionLoss: true });
}

/** Changes the signed-in user's password; answers a fresh token (older ones stop working). */
export function changePassword(currentPassword: string, newPassword: string): Promise<LoginAnswer> {
  const body = { currentPassword, newPassword };
  return callRoute('POST /api/auth/password', {}, { body });
}

/** Ends the session on the server: every token of this account stops working. */
export function logout(): Promise<void> {
  return callRoute('POST /api/auth/logout', {}, { ignoreSessionLoss: true });
}
