import { can, type Permission } from '@/lib/auth/permissions';
import type { Role } from '@/lib/auth/roles';

/**
 * The areas of Lamina, in the order the navigation shows them. An area appears here only once
 * it is built; each names the permission that opens it.
 */
export interface NavItem {
  href: string;
  label: string;
  permission: Permission;
  description: string;
}

export const NAV_ITEMS: NavItem[] = [
  { href: '/team', label: 'Team', permission: 'team.read', description: 'People, roles and the audit trail.' },
];

export function navFor(roles: readonly Role[]): NavItem[] {
  return NAV_ITEMS.filter((item) => can(roles, item.permission));
}
