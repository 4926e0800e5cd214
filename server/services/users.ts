import { UniqueConstraintError } from 'sequelize';
import { User } from '../models/index.js';
import { ConflictError, NotFoundError } from '../errors.js';
import { hashPassword } from './auth.js';
import { audit } from './audit.js';
import type { UserCreate, UserPatch } from '../../shared/protocol/api.js';

export async function listUsers() {
  const users = await User.findAll({ order: [['id', 'ASC']] });
  return users.map((u) => u.toPublic());
}

export async function createUser(input: UserCreate, actorId: number) {
  try {
    const user = await User.create({
      email: input.email,
      name: input.name,
      role: input.role,
      passwordHash: await hashPassword(input.password),
    });
    await audit(actorId, 'user.create', 'user', user.id, { email: user.email, role: user.role });
    return user.toPublic();
  } catch (err) {
    if (err instanceof UniqueConstraintError) throw new ConflictError('A user with this e-mail already exists.');
    throw err;
  }
}

/** Renames, changes the role of, or (de)activates a user; every change is audited. */
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
  await user.save();
  if (patch.role !== undefined && patch.role !== before.role) {
    await audit(actorId, 'user.role', 'user', id, { from: before.role, to: patch.role });
  }
  if (patch.active !== undefined && patch.active !== before.active) {
    await audit(actorId, patch.active ? 'user.activate' : 'user.deactivate', 'user', id);
  }
  if (patch.name !== undefined && patch.name !== before.name) {
    await audit(actorId, 'user.rename', 'user', id, { from: before.name, to: patch.name });
  }
  return user.toPublic();
}
