import type { Component } from 'vue';
import type { RouteLocationNamedRaw, Router } from 'vue-router';
import { Collection, Cpu, Notebook, User } from '@element-plus/icons-vue';
import type { Role } from '../api/auth';

export interface NavItem {
  label: string;
  to: RouteLocationNamedRaw;
  icon: Component;
}

/**
 * The rail's entries in order. Who sees an entry follows the target route's `meta.roles`, so
 * access rules live in one place (the route table). Bench, Captures and Links join this list.
 */
export const NAV_ITEMS: NavItem[] = [
  { label: 'Dashboard', to: { name: 'dashboard' }, icon: Collection },
  { label: 'Studies', to: { name: 'studies' }, icon: Notebook },
  { label: 'Lab', to: { name: 'lab' }, icon: Cpu },
  { label: 'Users', to: { name: 'users' }, icon: User },
];

export function navItemsFor(router: Router, role: Role | null): NavItem[] {
  if (!role) return [];
  return NAV_ITEMS.filter((item) => {
    const roles = router.resolve(item.to).meta.roles;
    return !roles || roles.includes(role);
  });
}
