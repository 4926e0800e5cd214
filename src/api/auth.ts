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
}

export function login(email: string, password: string): Promise<LoginAnswer> {
  return http.post<LoginAnswer>('/api/auth/login', { email, password });
}

/** The signed-in user; the session store handles a 401 here itself. */
export function fetchMe(): Promise<{ user: SessionUser }> {
  return http.get<{ user: SessionUser }>('/api/auth/me', { ignoreSessionLoss: true });
}
