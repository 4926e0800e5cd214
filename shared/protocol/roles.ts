import { z } from 'zod';

/** The five roles of Driftbench, from most to least privileged in the lab's hierarchy. */
export const ROLES = ['admin', 'lead', 'engineer', 'technician', 'viewer'] as const;
export const Role = z.enum(ROLES);
export type Role = z.infer<typeof Role>;

/**
 * What each role may do. The server enforces these on every route; the client uses the same
 * table only to hide what a role cannot do.
 */
export const PERMISSIONS = {
  'users:manage': ['admin'],
  'lab:manage': ['admin', 'lead'],
  'studies:plan': ['admin', 'lead', 'engineer'],
  'studies:submit': ['lead', 'engineer'],
  'studies:review': ['lead'],
  'audit:read': ['admin'],
  'outbox:read': ['admin'],
  'attachments:upload': ['admin', 'lead', 'engineer', 'technician'],
  'captures:run': ['admin', 'lead', 'engineer', 'technician'],
  'captures:tag': ['admin', 'lead', 'engineer'],
  read: ['admin', 'lead', 'engineer', 'technician', 'viewer'],
} as const satisfies Record<string, readonly Role[]>;
export type Permission = keyof typeof PERMISSIONS;

/** True when `role` holds `permission`. */
export function roleCan(role: Role, permission: Permission): boolean {
  return (PERMISSIONS[permission] as readonly Role[]).includes(role);
}
