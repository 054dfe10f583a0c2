import type { Role } from '../auth/roles';

/**
 * The invented people of the invented demo practice, one per role. No real person or
 * practice; the addresses are on the reserved `.invalid` domain so nothing can be delivered.
 */
export const DEMO_PRACTICE = {
  slug: 'larkspur-endo',
  name: 'Larkspur Endodontics, Ellery Bay',
  // Invented: a made-up street and town, a number from Ofcom's range for drama (020 7946 0xxx), a reserved domain.
  address: '14 Tidewater Row, Ellery Bay',
  phone: '020 7946 0318',
  contactEmail: 'desk@larkspur-endo.invalid',
};
export const DEMO_PASSWORD = 'lamina-demo-2026';
export const DEMO_USERS: { email: string; name: string; roles: Role[] }[] = [
  { email: 'admin@lamina-demo.invalid', name: 'Ada Brightwater', roles: ['admin'] },
  { email: 'coordinator@lamina-demo.invalid', name: 'Corin Hale', roles: ['coordinator'] },
  { email: 'clinician@lamina-demo.invalid', name: 'Imre Solberg', roles: ['clinician'] },
  { email: 'lead@lamina-demo.invalid', name: 'Pia Marchetti', roles: ['auditor'] },
  { email: 'researcher@lamina-demo.invalid', name: 'Ravi Okonjo-Lund', roles: ['researcher'] },
];

export const demoUser = (role: Role) => DEMO_USERS.find((u) => u.roles.includes(role))!;

/**
 * A second invented practice, with its own administrator and one person per role, so that
 * isolation between practices can be tried (and is tested: tests/e2e/authz-matrix.spec.ts).
 */
export const DEMO_PRACTICE_B = { slug: 'fernhollow-endo', name: 'Fernhollow Root Canal Clinic, Marrow Point' };
export const DEMO_USERS_B: { email: string; name: string; roles: Role[] }[] = [
  { email: 'admin@fernhollow-demo.invalid', name: 'Bertil Amsward', roles: ['admin'] },
  { email: 'coordinator@fernhollow-demo.invalid', name: 'Noor Vasselby', roles: ['coordinator'] },
  { email: 'clinician@fernhollow-demo.invalid', name: 'Odile Kerrowan', roles: ['clinician'] },
  { email: 'lead@fernhollow-demo.invalid', name: 'Tobin Quarles', roles: ['auditor'] },
  { email: 'researcher@fernhollow-demo.invalid', name: 'Ilse Marchbank', roles: ['researcher'] },
];
export const demoUserB = (role: Role) => DEMO_USERS_B.find((u) => u.roles.includes(role))!;

/** A clinician who works in both demo practices and chooses one per session (the practice switcher). */
export const DEMO_LOCUM = { email: 'locum@lamina-demo.invalid', name: 'Esko Harrowgate', roles: ['clinician'] as Role[] };
