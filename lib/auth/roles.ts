/** The five roles. A user may hold several in a practice. */
export const ROLES = ['admin', 'coordinator', 'clinician', 'auditor', 'researcher'] as const;
export type Role = (typeof ROLES)[number];

export const ROLE_LABELS: Record<Role, string> = {
  admin: 'Administrator',
  coordinator: 'Recall coordinator',
  clinician: 'Clinician',
  auditor: 'Practice lead (audit)',
  researcher: 'Researcher',
};

export function isRole(value: unknown): value is Role {
  return typeof value === 'string' && (ROLES as readonly string[]).includes(value);
}
