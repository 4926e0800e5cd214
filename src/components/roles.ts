import type { Role } from '../api/auth';

export function roleName(role: Role): string {
  return role[0].toUpperCase() + role.slice(1);
}

/** One line on what each role does, in Driftbench's words. */
export const ROLE_HINTS: Record<Role, string> = {
  admin: 'people and instruments',
  lead: 'reviews and approves studies',
  engineer: 'plans studies, DUTs and limits',
  technician: 'runs captures on the bench',
  viewer: 'reads and replays only',
};
