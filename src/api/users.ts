import { callRoute } from './http';
import { allPages } from './paging';
import type { UserCreate, UserPatch } from '../../shared/protocol/api';
import type { UserRecord } from '../../shared/protocol/models';

export type { UserCreate, UserPatch, UserRecord };

export async function listUsers(): Promise<UserRecord[]> {
  return allPages<UserRecord>('/api/users', 'users');
}

/** Sets a temporary password the user must change at the next sign-in (admins only). */
export async function resetPassword(
  id: UserRecord['id'],
  temporaryPassword: string,
): Promise<UserRecord> {
  const body = { temporaryPassword };
  return (await callRoute('POST /api/users/:id/password-reset', { id }, { body })).user;
}

export async function createUser(body: UserCreate): Promise<UserRecord> {
  return (await callRoute('POST /api/users', {}, { body })).user;
}

export async function updateUser(id: UserRecord['id'], patch: UserPatch): Promise<UserRecord> {
  return (await callRoute('PATCH /api/users/:id', { id }, { body: patch })).user;
}
