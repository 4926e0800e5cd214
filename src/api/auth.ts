import { http } from './http';

import type { Role } from '../../shared/protocol/roles';
import type { SessionUser } from '../../shared/protocol/models';
import type { LoginResponse, MeResponse } from '../../shared/protocol/responses';

export type { Role };
export { ROLES } from '../../shared/protocol/roles';

export type { SessionUser };
/** The answer of signing in and of changing the password: a token and who it belongs to. */
export type LoginAnswer = LoginResponse;

export function login(email: string, password: string): Promise<LoginAnswer> {
  return http.post<LoginAnswer>('/api/auth/login', { email, password });
}

/** The signed-in user; the session store handles a 401 here itself. */
export function fetchMe(): Promise<MeResponse> {
  return http.get<MeResponse>('/api/auth/me', { ignoreSessionLoss: true });
}

/** Changes the signed-in user's password; answers a fresh token (older ones stop working). */
export function changePassword(currentPassword: string, newPassword: string): Promise<LoginAnswer> {
  return http.post<LoginAnswer>('/api/auth/password', { currentPassword, newPassword });
}

/** Ends the session on the server: every token of this account stops working. */
export function logout(): Promise<void> {
  return http.post<void>('/api/auth/logout', {}, { ignoreSessionLoss: true });
}
