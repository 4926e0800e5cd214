import type { Component } from 'vue';
import type { RouteLocationNamedRaw, Router } from 'vue-router';
import {
  Collection,
  Connection,
  Cpu,
  DataLine,
  Message,
  Notebook,
  QuestionFilled,
  TrendCharts,
  User,
  VideoPlay,
} from '@element-plus/icons-vue';
import type { Role } from '../api/auth';
import { roleCan } from '../../shared/protocol/permissions';

export interface NavItem {
  label: string;
  to: RouteLocationNamedRaw;
  icon: Component;
}

/**
 * The rail's entries in order. Who sees an entry follows the target route's `meta.permission`,
 * checked against the permission table the server enforces (shared/protocol/roles.ts).
 */
export const NAV_ITEMS: NavItem[] = [
  { label: 'Dashboard', to: { name: 'dashboard' }, icon: Collection },
  { label: 'Studies', to: { name: 'studies' }, icon: Notebook },
  { label: 'Bench', to: { name: 'bench' }, icon: VideoPlay },
  { label: 'Captures', to: { name: 'captures' }, icon: DataLine },
  { label: 'Compare', to: { name: 'compare' }, icon: TrendCharts },
  { label: 'Links', to: { name: 'links' }, icon: Connection },
  { label: 'Lab', to: { name: 'lab' }, icon: Cpu },
  { label: 'Users', to: { name: 'users' }, icon: User },
  { label: 'Outbox', to: { name: 'outbox' }, icon: Message },
  { label: 'Help', to: { name: 'help' }, icon: QuestionFilled },
];

export function navItemsFor(router: Router, role: Role | null): NavItem[] {
  if (!role) return [];
  return NAV_ITEMS.filter((item) => {
    const permission = router.resolve(item.to).meta.permission;
    return !permission || roleCan(role, permission);
  });
}
