import type { EntityManager } from '@mikro-orm/postgresql';
import { MembershipSchema, PracticeSchema, UserSchema } from '../../entities';
import type { Role } from '../auth/roles';
import { hashPassword } from '../auth/password';

/** Invented people of the invented demo practice, one per role (plus more clinicians later). */
export const DEMO_PRACTICE = { slug: 'larkspur-endo', name: 'Larkspur Endodontics, Ellery Bay' };
export const DEMO_PASSWORD = 'lamina-demo-2026';
export const DEMO_USERS: { email: string; name: string; roles: Role[] }[] = [
  { email: 'admin@lamina-demo.invalid', name: 'Ada Brightwater', roles: ['admin'] },
  { email: 'coordinator@lamina-demo.invalid', name: 'Corin Hale', roles: ['coordinator'] },
  { email: 'clinician@lamina-demo.invalid', name: 'Imre Solberg', roles: ['clinician'] },
  { email: 'lead@lamina-demo.invalid', name: 'Pia Marchetti', roles: ['auditor', 'clinician'] },
  { email: 'researcher@lamina-demo.invalid', name: 'Ravi Okonjo-Lund', roles: ['researcher'] },
];

/** Creates what is missing of the demo practice and its users; never duplicates. */
export async function seedDemo(em: EntityManager) {
  let created = false;
  let practice = await em.findOne(PracticeSchema, { slug: DEMO_PRACTICE.slug });
  if (!practice) {
    practice = em.create(PracticeSchema, { ...DEMO_PRACTICE } as never);
    created = true;
  }
  const hash = await hashPassword(DEMO_PASSWORD);
  const users: { email: string; role: string }[] = [];
  for (const u of DEMO_USERS) {
    let user = await em.findOne(UserSchema, { email: u.email });
    user ??= em.create(UserSchema, { email: u.email, name: u.name, passwordHash: hash, emailVerified: new Date() } as never);
    for (const role of u.roles) {
      const exists = await em.findOne(MembershipSchema, { user: user.id, practice: practice.id, role });
      if (!exists) em.create(MembershipSchema, { user, practice, role } as never);
    }
    users.push({ email: u.email, role: u.roles.join('+') });
  }
  await em.flush();
  return { practiceName: practice.name, created, practiceId: practice.id, users };
}
