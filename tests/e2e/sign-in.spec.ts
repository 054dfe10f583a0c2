import { test, expect } from '@playwright/test';
import { DEMO_PASSWORD, demoUser, firstLink, signIn, signInAs, signInWithForm, waitForMail } from './support';
import type { Role } from '../../lib/auth/roles';
import { mailboxHeaders } from '../../lib/mail/mailbox-secret';

/** What each role's navigation shows (Home is always first). */
const NAVIGATION: Record<Role, string[]> = {
  admin: ['Home', 'Team', 'Dev mailbox'],
  coordinator: ['Home', 'Cases', 'Recall desk'],
  clinician: ['Home', 'Cases', 'Reading', 'Outcomes'],
  auditor: ['Home', 'Cases', 'Reading', 'Outcomes'],
  researcher: ['Home', 'Cohorts'],
};

test.describe('signing in', () => {
  for (const role of Object.keys(NAVIGATION) as Role[]) {
    test(`the ${role} signs in and sees their own navigation`, async ({ page }) => {
      await signInWithForm(page, role);
      const nav = page.getByRole('navigation', { name: 'Main' });
      await expect(nav.getByRole('link')).toHaveText(NAVIGATION[role]);
      await expect(page.getByTestId('whoami')).toContainText(demoUser(role).name);
      await expect(page.getByRole('heading', { level: 1 })).toContainText('Good to see you');
    });
  }

  test('a wrong password shows an error and stays on sign-in', async ({ page }) => {
    await page.goto('/sign-in');
    await page.getByLabel('E-mail', { exact: true }).fill(demoUser('clinician').email);
    await page.getByLabel('Password', { exact: true }).fill('not-the-password');
    await page.getByRole('button', { name: 'Sign in', exact: true }).click();
    await expect(page.getByText('Wrong e-mail or password.')).toBeVisible();
    await expect(page).toHaveURL(/\/sign-in/);
  });

  test('an empty form says what is missing next to each field', async ({ page }) => {
    await page.goto('/sign-in');
    await page.getByRole('button', { name: 'Sign in', exact: true }).click();
    await expect(page.getByText('Enter a valid e-mail address.')).toBeVisible();
    await expect(page.getByText('Enter your password.')).toBeVisible();
  });

  test('an anonymous visitor is sent to sign-in, and back after signing in', async ({ page }) => {
    await page.goto('/team');
    await expect(page).toHaveURL(/\/sign-in\?callbackUrl=%2Fteam/);
    await page.getByLabel('E-mail', { exact: true }).fill(demoUser('admin').email);
    await page.getByLabel('Password', { exact: true }).fill(DEMO_PASSWORD);
    await page.getByRole('button', { name: 'Sign in', exact: true }).click();
    await expect(page.getByRole('heading', { name: 'Team', level: 1 })).toBeVisible();
  });

  test('a role without access to an area gets the not-your-role page', async ({ page }) => {
    await signInAs(page, 'coordinator');
    const res = await page.goto('/team');
    expect(res?.status()).toBe(403);
    await expect(page.getByRole('heading', { name: 'Not part of your role' })).toBeVisible();
  });

  test('an e-mailed sign-in link signs the user in once', async ({ page, request }) => {
    test.setTimeout(90_000); // waits for a mail through SMTP (waitForMail's deadline is a minute)
    const since = Date.now() - 1000;
    const email = demoUser('researcher').email;
    await page.goto('/sign-in');
    await page.getByRole('tab', { name: 'E-mailed link' }).click();
    await page.getByLabel('E-mail', { exact: true }).fill(email);
    await page.getByRole('button', { name: 'E-mail me a sign-in link' }).click();
    await expect(page.getByText('a sign-in link is on its way')).toBeVisible();
    const mail = await waitForMail(request, email, /sign-in link/i, since);
    const link = firstLink(mail, /http:\/\/\S+\/api\/auth\/callback\/email\S+/);
    await page.goto(link);
    await expect(page.getByTestId('whoami')).toContainText(demoUser('researcher').name);
    // A second use of the same link does not sign anyone in.
    await page.context().clearCookies();
    await page.goto(link);
    await expect(page).toHaveURL(/\/sign-in/);
    await expect(page.getByText('expired or was already used')).toBeVisible();
  });

  test('unknown addresses get the same neutral answer and no mail', async ({ page, request }) => {
    const since = Date.now() - 1000;
    await page.goto('/sign-in');
    await page.getByRole('tab', { name: 'E-mailed link' }).click();
    await page.getByLabel('E-mail', { exact: true }).fill('nobody@lamina-demo.invalid');
    await page.getByRole('button', { name: 'E-mail me a sign-in link' }).click();
    await expect(page.getByText('a sign-in link is on its way')).toBeVisible();
    const res = await request.get(`${process.env.MAILBOX_URL ?? 'http://127.0.0.1:2526'}/messages?to=nobody%40lamina-demo.invalid`, { headers: mailboxHeaders(process.env.MAILBOX_SECRET) });
    const body = await res.json();
    const list = (Array.isArray(body) ? body : body.messages) as { receivedAt: string }[];
    expect(list.filter((m) => Date.parse(m.receivedAt) >= since)).toHaveLength(0);
  });
});

test.describe('throttling, not lockout (issue 9 item 8)', () => {
  test('repeated wrong passwords slow further tries and say so plainly; the e-mailed link still works', async ({ page }) => {
    test.setTimeout(60_000);
    // An address with no account: the answers are the same as for a real one, and no colleague's sign-in is slowed.
    const email = 'throttled.e2e@lamina-demo.invalid';
    await page.goto('/sign-in');
    await page.getByLabel('E-mail', { exact: true }).fill(email);
    for (let i = 0; i < 5; i++) {
      await page.getByLabel('Password', { exact: true }).fill(`wrong-${i}`);
      await page.getByRole('button', { name: 'Sign in', exact: true }).click();
      await expect(page.getByText(/Wrong e-mail or password\.$/)).toBeVisible();
    }
    await page.getByLabel('Password', { exact: true }).fill('wrong-again');
    await page.getByRole('button', { name: 'Sign in', exact: true }).click();
    await expect(page.getByText(/Too many wrong passwords for this account from your network.*Wait 30 seconds.*e-mailed link, which still works\. The account is not locked\./)).toBeVisible();
    await page.screenshot({ path: test.info().outputPath('throttled.png') });
    // The e-mailed link is not held back.
    await page.getByRole('tab', { name: 'E-mailed link' }).click();
    await page.getByLabel('E-mail', { exact: true }).fill(email);
    await page.getByRole('button', { name: 'E-mail me a sign-in link' }).click();
    await expect(page.getByText('a sign-in link is on its way')).toBeVisible();
  });

  test('link requests are limited per account, with a plain message', async ({ page }) => {
    test.setTimeout(60_000);
    const email = 'many.links.e2e@lamina-demo.invalid';
    const ask = async () => {
      await page.goto('/sign-in');
      await page.getByRole('tab', { name: 'E-mailed link' }).click();
      await page.getByLabel('E-mail', { exact: true }).fill(email);
      await page.getByRole('button', { name: 'E-mail me a sign-in link' }).click();
    };
    for (let i = 0; i < 5; i++) {
      await ask();
      await expect(page.getByText('a sign-in link is on its way')).toBeVisible();
    }
    await ask();
    await expect(page.getByText(/Too many sign-in links were asked for.*Use the link already sent \(it works for 24 hours\), or ask again in \d+ minutes?\./)).toBeVisible();
  });
});

test('an invited colleague accepts the e-mailed link, sets a password and signs in', async ({ page, request }) => {
  test.setTimeout(90_000); // waits for a mail through SMTP (waitForMail's deadline is a minute)
  const email = `new.colleague.${Date.now()}@lamina-demo.invalid`;
  await signInAs(page, 'admin');
  await page.goto('/team');
  const form = page.getByRole('region', { name: 'Invite a colleague' });
  await form.getByLabel('Name').fill('Noor Vantongeren');
  await form.getByLabel('E-mail', { exact: true }).fill(email);
  await form.getByLabel('Clinician').check();
  await form.getByRole('button', { name: 'Send invitation' }).click();
  await expect(page.getByText(`Invitation sent to ${email}.`)).toBeVisible();
  // Pending until accepted: listed among the invitations, not among the members.
  await expect(page.getByTestId(`invitation-${email}`)).toBeVisible();
  await expect(page.getByTestId(`member-${email}`)).toHaveCount(0);

  const mail = await waitForMail(request, email, /Invitation/);
  const link = firstLink(mail, /http:\/\/\S+\/invite\/[A-Za-z0-9_-]+/);
  await page.context().clearCookies();
  await page.goto(link);
  await page.getByLabel('Your name').fill('Noor Vantongeren');
  await page.getByLabel('Password', { exact: true }).fill('short');
  await page.getByLabel('Password again').fill('short');
  await page.getByRole('button', { name: 'Accept invitation' }).click();
  await expect(page.getByText('Use at least 12 characters.')).toBeVisible();
  // What was typed is still there after the error.
  await expect(page.getByLabel('Your name')).toHaveValue('Noor Vantongeren');
  await page.getByLabel('Password', { exact: true }).fill('a-long-enough-passphrase');
  await page.getByLabel('Password again').fill('a-long-enough-passphrase');
  await page.getByRole('button', { name: 'Accept invitation' }).click();
  await expect(page.getByText('Your password is set.')).toBeVisible();
  await signIn(page, email, 'a-long-enough-passphrase');
  await expect(page.getByTestId('whoami')).toContainText('Clinician');
  // The link works once.
  await page.goto(link);
  await expect(page.getByText('already been accepted')).toBeVisible();
});
