/**
 * The roles and what each may do, without zod: the client's shell (session store, nav rail,
 * router guard) needs only these, and importing them from here keeps zod and the route table out
 * of the initial JavaScript (issue 15, client). roles.ts re-exports everything, adds the `Role`
 * schema and the route table.
 */

/** The five roles of Driftbench, from most to least privileged in the lab's hierarchy. */
export const ROLES = ['admin', 'lead', 'engineer', 'technician', 'viewer'] as const;
/** One of ROLES (the zod schema `Role` lives in roles.ts). */
type Role = (typeof ROLES)[number];

/**
 * What each role may do. The server enforces these on every route; the client uses the same
 * table only to hide what a role cannot do.
 */
export const PERMISSIONS = {
  'users:manage': ['admin'],
  'lab:manage': ['admin', 'lead'],
  /** Instruments: register, edit, calibrations, away, retire (admins; references stay lab:manage). */
  'instruments:manage': ['admin'],
  'studies:plan': ['admin', 'lead', 'engineer'],
  'studies:submit': ['lead', 'engineer'],
  'studies:review': ['lead'],
  'audit:read': ['admin'],
  'outbox:read': ['admin'],
  'attachments:upload': ['admin', 'lead', 'engineer', 'technician'],
  'captures:run': ['admin', 'lead', 'engineer', 'technician'],
  'captures:tag': ['admin', 'lead', 'engineer'],
  /** Add readings to and finish captures someone else started (the operator may always). */
  'captures:write-any': ['admin', 'lead'],
  /** Delete any attachment (the uploader may always delete their own). */
  'attachments:delete-any': ['lead'],
  read: ['admin', 'lead', 'engineer', 'technician', 'viewer'],
} as const satisfies Record<string, readonly Role[]>;
export type Permission = keyof typeof PERMISSIONS;

/** True when `role` holds `permission`. */
export function roleCan(role: Role, permission: Permission): boolean {
  return (PERMISSIONS[permission] as readonly Role[]).includes(role);
}
