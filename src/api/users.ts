import { http } from './http';
import { allPages } from './paging';
import type { Role } from './auth';

export interface UserRecord {
  id: string | number;
  email: string;
  name: string;
  role: Role;
  active: boolean;
  createdAt: string;
  lastLoginAt: string | null;
}

export interface UserCreate {
  email: string;
  name: string;
  role: Role;
  password: string;
}

export type UserPatch = Partial<Pick<UserRecord, 'name' | 'role' | 'active'>>;

export async function listUsers(): Promise<UserRecord[]> {
  return allPages<UserRecord>('/api/users', 'users');
}

/** Sets a temporary password the user must change at the next sign-in (admins only). */
export async function resetPassword(id: UserRecord['id'], temporaryPassword: string): Promise<UserRecord> {
  return (await http.post<{ user: UserRecord }>(`/api/users/${id}/password-reset`, { temporaryPassword })).user;
}

export async function createUser(body: UserCreate): Promise<UserRecord> {
  return (await http.post<{ user: UserRecord }>('/api/users', body)).user;
}

export async function updateUser(id: UserRecord['id'], patch: UserPatch): Promise<UserRecord> {
  return (await http.patch<{ user: UserRecord }>(`/api/users/${encodeURIComponent(String(id))}`, patch)).user;
}
