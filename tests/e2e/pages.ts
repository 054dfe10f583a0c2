import { randomUUID } from 'node:crypto';
import type { Role } from '../../lib/auth/roles';

/**
 * The signed-in area's pages and who may see them: the page matrix of authz-matrix.spec.ts (which
 * checks every page file has a row) and the pages accessibility.spec.ts checks with axe.
 */
export type Who = 'anonymous' | Role;

export const only = (allowed: Partial<Record<Role, number>>, denied = 403): Record<Who, number> => ({
  anonymous: 401,
  admin: allowed.admin ?? denied,
  coordinator: allowed.coordinator ?? denied,
  clinician: allowed.clinician ?? denied,
  auditor: allowed.auditor ?? denied,
  researcher: allowed.researcher ?? denied,
});
export const everyone = (status: number): Record<Who, number> => ({
  anonymous: status, admin: status, coordinator: status, clinician: status, auditor: status, researcher: status,
});

/**
 * Every page of the signed-in area, with the HTTP status each role gets from the first byte
 * (issue 9 item 11: a forbidden page is a real 403, not a 200 whose body says no). Anonymous
 * visitors are sent to sign-in (307). A page file without a row fails the first test.
 */
export interface PageRow {
  page: string; // the page file's folder under app/(app), route groups removed, e.g. 'cases/new'
  url: () => string;
  expect: Record<Who, number>;
}
const signInFirst = (e: Record<Who, number>): Record<Who, number> => ({ ...e, anonymous: 307 });
export const PAGES: PageRow[] = [
  { page: '', url: () => '/', expect: signInFirst(everyone(200)) },
  { page: 'cases', url: () => '/cases', expect: signInFirst(only({ coordinator: 200, clinician: 200, auditor: 200 })) },
  { page: 'cases/new', url: () => '/cases/new', expect: signInFirst(only({ clinician: 200 })) }, // without a patient: sent to choose one, after the page's loading state
  { page: 'cases/import', url: () => '/cases/import', expect: signInFirst(only({ coordinator: 200, clinician: 200 })) },
  // An unknown id under the detail page's skeleton: the not-found page streams after the skeleton (200, as
  // before); a role without the area still gets 403 from the area's layout, before anything streams.
  { page: 'cases/[id]', url: () => `/cases/${randomUUID()}`, expect: signInFirst(only({ coordinator: 200, clinician: 200, auditor: 200 })) },
  { page: 'cases/[id]/edit', url: () => `/cases/${randomUUID()}/edit`, expect: signInFirst(only({ clinician: 200 })) }, // not found, shown after the loading state (as for cases/[id])
  { page: 'cases/[id]/films/view', url: () => `/cases/${randomUUID()}/films/view`, expect: signInFirst(only({ coordinator: 200, clinician: 200, auditor: 200 })) }, // not found, shown after the loading state (as for cases/[id])
  { page: 'patients', url: () => '/patients', expect: signInFirst(only({ coordinator: 200, clinician: 200, auditor: 200 })) },
  { page: 'patients/new', url: () => '/patients/new', expect: signInFirst(only({ coordinator: 200, clinician: 200 })) },
  { page: 'patients/[id]', url: () => `/patients/${randomUUID()}`, expect: signInFirst(only({ coordinator: 200, clinician: 200, auditor: 200 })) },
  { page: 'desk', url: () => '/desk', expect: signInFirst(only({ coordinator: 200 })) },
  { page: 'desk/calls', url: () => '/desk/calls', expect: signInFirst(only({ coordinator: 200 })) },
  { page: 'desk/policy', url: () => '/desk/policy', expect: signInFirst(only({ coordinator: 200 })) },
  { page: 'account', url: () => '/account', expect: signInFirst(everyone(200)) },
  { page: 'outcomes', url: () => '/outcomes', expect: signInFirst(only({ clinician: 200, auditor: 200 })) },
  { page: 'outcomes/curves', url: () => '/outcomes/curves', expect: signInFirst(only({ clinician: 200, auditor: 200 })) },
  { page: 'outcomes/factor', url: () => '/outcomes/factor', expect: signInFirst(only({ clinician: 200, auditor: 200 })) },
  { page: 'outcomes/model', url: () => '/outcomes/model', expect: signInFirst(only({ clinician: 200, auditor: 200 })) },
  { page: 'outcomes/clinicians', url: () => '/outcomes/clinicians', expect: signInFirst(only({ clinician: 200, auditor: 200 })) },
  { page: 'outcomes/worklist', url: () => '/outcomes/worklist', expect: signInFirst(only({ clinician: 200, auditor: 200 })) },
  { page: 'outcomes/agreement', url: () => '/outcomes/agreement', expect: signInFirst(only({ auditor: 200 })) },
  { page: 'reading', url: () => '/reading', expect: signInFirst(only({ clinician: 200, auditor: 200 })) },
  { page: 'cohorts', url: () => '/cohorts', expect: signInFirst(only({ researcher: 200 })) },
  { page: 'cohorts/[id]', url: () => `/cohorts/${randomUUID()}`, expect: signInFirst(only({ researcher: 404 })) },
  { page: 'team', url: () => '/team', expect: signInFirst(only({ admin: 200 })) },
  { page: 'team/audit', url: () => '/team/audit', expect: signInFirst(only({ admin: 200 })) },
  { page: 'team/settings', url: () => '/team/settings', expect: signInFirst(only({ admin: 200 })) },
  { page: 'dev-mailbox', url: () => '/dev-mailbox', expect: signInFirst(only({ admin: 200 })) },
  { page: 'dev-mailbox/[id]', url: () => '/dev-mailbox/0000000000000-000000-00000000', expect: signInFirst(only({ admin: 404 })) },
];
