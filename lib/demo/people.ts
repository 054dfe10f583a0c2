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
