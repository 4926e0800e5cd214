import { UniqueConstraintError } from 'sequelize';
import { User } from '../models/index.js';
import { ConflictError, NotFoundError } from '../errors.js';
import { hashPassword } from './auth.js';
import { audit } from './audit.js';
import { pageOf } from './paging.js';
import type { Page } from '../../shared/protocol/paging.js';
import type { UserCreate, UserPatch } from '../../shared/protocol/api.js';

/** One page of users, oldest account first (see shared/protocol/paging.ts). */
export async function listUsers(page: Page) {
  const { rows, nextCursor } = await pageOf(User, page, 'id-asc');
  return { users: rows.map((u) => u.toPublic()), nextCursor };
}

export async function createUser(input: UserCreate, actorId: number) {
  const passwordHash = await hashPassword(input.password);
  try {
    // The account and its audit event are one transaction.
    const user = await User.sequelize!.transaction(async (transaction) => {
      const created = await User.create(
        { email: input.email, name: input.name, role: input.role, passwordHash },
        { transaction },
      );
      await audit(
        actorId,
        'user.create',
        'user',
        created.id,
        { email: created.email, role: created.role },
        transaction,
      );
      return created;
    });
    return user.toPublic();
  } catch (err) {
    if (err instanceof UniqueConstraintError)
      throw new ConflictError('A user with this e-mail already exists.');
    throw err;
  }
}

/**
 * Renames, changes the role of, or (de)activates a user; every change is audited in the same
 * transaction. A role change or a deactivation revokes every token the user holds.
 */
export async function updateUser(id: number, patch: UserPatch, actorId: number) {
  const user = await User.findByPk(id);
  if (!user) throw new NotFoundError('User');
  if (id === actorId && (patch.active === false || (patch.role && patch.role !== user.role))) {
    throw new ConflictError('You cannot deactivate yourself or change your own role.');
  }
  const before = { role: user.role, active: user.active, name: user.name };
  if (patch.name !== undefined) user.name = patch.name;
  if (patch.role !== undefined) user.role = patch.role;
  if (patch.active !== undefined) user.active = patch.active;
  const roleChanged = patch.role !== undefined && patch.role !== before.role;
  const deactivated = patch.active === false && before.active;
  if (roleChanged || deactivated) user.tokenVersion = user.tokenVersion + 1;
  await User.sequelize!.transaction(async (transaction) => {
    await user.save({ transaction });
    if (roleChanged)
      await audit(
        actorId,
        'user.role',
        'user',
        id,
        { from: before.role, to: patch.role },
        transaction,
      );
    if (patch.active !== undefined && patch.active !== before.active) {
      await audit(
        actorId,
        patch.active ? 'user.activate' : 'user.deactivate',
        'user',
        id,
        undefined,
        transaction,
      );
    }
    if (patch.name !== undefined && patch.name !== before.name) {
      await audit(
        actorId,
        'user.rename',
        'user',
        id,
        { from: before.name, to: patch.name },
        transaction,
      );
    }
  });
  return user.toPublic();
}

/**
 * An admin sets a temporary password: the user's tokens are revoked and the next sign-in must
 * choose a new password before anything else. Audited (never with the password).
 */
export async function resetPassword(id: number, temporaryPassword: string, actorId: number) {
  const user = await User.findByPk(id);
  if (!user) throw new NotFoundError('User');
  if (id === actorId)
    throw new ConflictError('Change your own password with "Change password", not a reset.');
  const hash = await hashPassword(temporaryPassword);
  await User.sequelize!.transaction(async (transaction) => {
    user.passwordHash = hash;
    user.mustChangePassword = true;
    user.passwordChangedAt = new Date();
    user.tokenVersion = user.tokenVersion + 1;
    await user.save({ transaction });
    await audit(actorId, 'user.password.reset', 'user', id, undefined, transaction);
  });
  return user.toPublic();
}
