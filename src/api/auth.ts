import { http } from './http';

import type { Role } from '../../shared/protocol/roles';

export type { Role };
export { ROLES } from '../../shared/protocol/roles';

export interface SessionUser {
  id: string | number;
  email: string;
  name: string;
  role: Role;
}

export interface LoginAnswer {
  token: string;
  user: SessionUser;
  /** Set after an admin reset: a new password must be chosen before anything else. */
  mustChangePassword?: boolean;
}

export function login(email: string, password: string): Promise<LoginAnswer> {
  return http.post<LoginAnswer>('/api/auth/login', { email, password });
}

/** The signed-in user; the session store handles a 401 here itself. */
export function fetchMe(): Promise<{ user: SessionUser; mustChangePassword?: boolean }> {
  return http.get<{ user: SessionUser; mustChangePassword?: boolean }>('/api/auth/me', { ignoreSessionLoss: true });
}

/** Changes the signed-in user's password; answers a fresh token (older ones stop working). */
export function changePassword(currentPassword: string, newPassword: string): Promise<LoginAnswer> {
  return http.post<LoginAnswer>('/api/auth/password', { currentPassword, newPassword });
}

/** Ends the session on the server: every token of this account stops working. */
export function logout(): Promise<void> {
  return http.post<void>('/api/auth/logout', {}, { ignoreSessionLoss: true });
}
