import { z } from 'zod';
import { ROLES } from '@/lib/auth/roles';
import { text } from '@/lib/registry/fields';

export const Email = z
  .string({ error: 'Enter an e-mail address.' })
  .trim()
  .toLowerCase()
  .pipe(z.email({ error: 'Enter a valid e-mail address.' }).max(254));

export const SignInInput = z.object({
  email: Email,
  password: z.string({ error: 'Enter your password.' }).min(1, 'Enter your password.').max(200),
});

export const LinkSignInInput = z.object({ email: Email });

/** Password rule for new passwords: long rather than complicated (NIST SP 800-63B: at least 8; Lamina asks 12). */
export const NewPassword = z
  .string()
  .min(12, 'Use at least 12 characters.')
  .max(200, 'Use at most 200 characters.');

export const RoleList = z.array(z.enum(ROLES)).max(ROLES.length);

export const InviteInput = z.object({
  email: Email,
  name: text({ max: 160, required: 'Enter the person’s name.' }),
  roles: RoleList.min(1, 'Choose at least one role.'),
});

export const SetRolesInput = z.object({
  roles: RoleList.min(1, 'Choose at least one role. To remove someone from the practice, deactivate them.'),
});

export const AcceptInvitationInput = z
  .object({
    token: z.string().min(20).max(200),
    name: text({ max: 160, required: 'Enter your name.' }),
    password: NewPassword,
    confirm: z.string(),
  })
  .refine((v) => v.password === v.confirm, { path: ['confirm'], message: 'The two passwords differ.' });

export const ChangePasswordInput = z
  .object({
    current: z.string().min(1, 'Enter your current password.').max(200),
    password: NewPassword,
    confirm: z.string(),
  })
  .refine((v) => v.password === v.confirm, { path: ['confirm'], message: 'The two passwords differ.' })
  .refine((v) => v.password !== v.current, { path: ['password'], message: 'Choose a password different from the current one.' });
