import type { EntityManager } from '@mikro-orm/postgresql';
import { MembershipSchema, PracticeSchema, UserSchema } from '../../entities';
import { hashPassword } from '../auth/password';
import { DEMO_PASSWORD, DEMO_PRACTICE, DEMO_USERS } from './people';

export { DEMO_PASSWORD, DEMO_PRACTICE, DEMO_USERS };

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
