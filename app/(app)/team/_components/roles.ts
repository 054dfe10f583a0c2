import { ROLES, ROLE_LABELS } from '@/lib/auth/roles';

export const ROLE_OPTIONS = ROLES.map((value) => ({ value, label: ROLE_LABELS[value] }));
