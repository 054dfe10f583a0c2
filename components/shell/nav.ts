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
  /** Other path prefixes that belong to the area (highlighted as current). */
  match?: string[];
}

const NAV_ITEMS: NavItem[] = [
  { href: '/cases', label: 'Cases', permission: 'patient.read', description: 'Patients and their treated teeth, each with its recall plan and reviews.', match: ['/patients'] },
  { href: '/desk', label: 'Recall desk', permission: 'recall.manage', description: 'Who is due, who was invited, who replied, who is slipping away.' },
  { href: '/reading', label: 'Reading', permission: 'reading.queue', description: 'Follow-up films to score: first readings, blinded second readings, adjudication.' },
  { href: '/outcomes', label: 'Outcomes', permission: 'outcomes.read', description: 'Healing and tooth survival of the practice’s treatments, by factor and over time.' },
  { href: '/cohorts', label: 'Cohorts', permission: 'cohort.export', description: 'Anonymised, analysis-ready exports of consenting patients’ cases.' },
  { href: '/team', label: 'Team', permission: 'team.read', description: 'People, roles and the audit trail.' },
];

export function navFor(roles: readonly Role[]): NavItem[] {
  return NAV_ITEMS.filter((item) => can(roles, item.permission));
}
