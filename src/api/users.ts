import { http } from './http';
import { allPages } from './paging';
import type { z } from 'zod';
import type { UserCreate, UserPatch } from '../../shared/protocol/api';
import type { UserRecord } from '../../shared/protocol/models';
import type { UserResponse } from '../../shared/protocol/responses';

export type { UserCreate, UserPatch, UserRecord };
type UserAnswer = z.infer<typeof UserResponse>;

export async function listUsers(): Promise<UserRecord[]> {
  return allPages<UserRecord>('/api/users', 'users');
}

/** Sets a temporary password the user must change at the next sign-in (admins only). */
export async function resetPassword(
  id: UserRecord['id'],
  temporaryPassword: string,
): Promise<UserRecord> {
  return (await http.post<UserAnswer>(`/api/users/${id}/password-reset`, { temporaryPassword }))
    .user;
}

export async function createUser(body: UserCreate): Promise<UserRecord> {
  return (await http.post<UserAnswer>('/api/users', body)).user;
}

export async function updateUser(id: UserRecord['id'], patch: UserPatch): Promise<UserRecord> {
  return (await http.patch<UserAnswer>(`/api/users/${id}`, patch)).user;
}
