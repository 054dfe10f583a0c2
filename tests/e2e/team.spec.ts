import { test, expect } from '@playwright/test';
import { demoUser, signInAs, signInWithForm } from './support';

test('a revoked role stops working on the next request: the member’s session ends', async ({ browser, baseURL }) => {
  const adminCtx = await browser.newContext();
  const admin = await adminCtx.newPage();
  await signInAs(admin, 'admin');

  // Give the coordinator the admin role, let them use it, then take it away.
  const coordCtx = await browser.newContext();
  const coord = await coordCtx.newPage();
  await signInWithForm(coord, 'coordinator');
  const members = await (await admin.request.get('/api/team/members')).json();
  const target = members.members.find((m: { email: string }) => m.email === demoUser('coordinator').email);
  expect((await admin.request.patch(`/api/team/members/${target.userId}`, { data: { roles: ['coordinator', 'admin'] }, headers: { Origin: new URL(baseURL!).origin } })).status()).toBe(200);
  expect((await coord.request.get('/api/team/members')).status()).toBe(200);

  await admin.goto('/team');
  await admin.getByRole('button', { name: `Change roles of ${demoUser('coordinator').name}` }).click();
  await admin.getByRole('group', { name: `Roles of ${demoUser('coordinator').name}` }).getByLabel('Administrator').uncheck();
  await admin.getByRole('button', { name: 'Save roles' }).click();
  await expect(admin.getByText(`Roles of ${demoUser('coordinator').name} saved.`)).toBeVisible();

  // Same session cookie, next request: the revocation ended the session (issue 9, item 7).
  expect((await coord.request.get('/api/team/members')).status()).toBe(401);
  await coord.goto('/team');
  await expect(coord).toHaveURL(/\/sign-in\?callbackUrl=%2Fteam/);
  // Signed in again, the revoked role is gone.
  await signInWithForm(coord, 'coordinator');
  expect((await coord.request.get('/api/team/members')).status()).toBe(403);

  // The change is in the audit trail.
  await admin.goto('/team/audit?action=team.');
  await expect(admin.getByRole('table', { name: 'Audit events' })).toContainText('Revoked a role');
  await expect(admin.getByRole('table', { name: 'Audit events' })).toContainText('role: admin');
  await adminCtx.close();
  await coordCtx.close();
});

test('the administrator reads sign-ins in the audit trail', async ({ page }) => {
  await signInWithForm(page, 'admin');
  await page.goto('/team/audit');
  await expect(page.getByRole('heading', { name: 'Audit trail' })).toBeVisible();
  await page.getByLabel('Action').selectOption('auth.');
  await page.getByRole('button', { name: 'Show events' }).click();
  await expect(page).toHaveURL(/action=auth\./);
  await expect(page.getByRole('table', { name: 'Audit events' })).toContainText('Signed in');
});

test('the dev mailbox shows a sent message as the recipient sees it', async ({ page }) => {
  await signInAs(page, 'admin');
  await page.goto('/team');
  const email = `mailbox.check.${Date.now()}@lamina-demo.invalid`;
  const form = page.getByRole('region', { name: 'Invite a colleague' });
  await form.getByLabel('Name').fill('Oda Lindqvist');
  await form.getByLabel('E-mail', { exact: true }).fill(email);
  await form.getByLabel('Researcher').check();
  await form.getByRole('button', { name: 'Send invitation' }).click();
  await expect(page.getByText(`Invitation sent to ${email}.`)).toBeVisible();
  await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Dev mailbox' }).click();
  await page.getByRole('link', { name: /Invitation to/ }).first().click();
  await expect(page.getByText(email)).toBeVisible();
  await expect(page.frameLocator('iframe[title="Message as the recipient sees it"]').getByText('Accept the invitation')).toBeVisible();
});

test('the invite form explains each problem beside its field', async ({ page }) => {
  await signInAs(page, 'admin');
  await page.goto('/team');
  const form = page.getByRole('region', { name: 'Invite a colleague' });
  await form.getByLabel('E-mail', { exact: true }).fill('not an address');
  await form.getByRole('button', { name: 'Send invitation' }).click();
  await expect(form.getByText('Enter the person’s name.')).toBeVisible();
  await expect(form.getByText('Enter a valid e-mail address.')).toBeVisible();
  await expect(form.getByText('Choose at least one role.')).toBeVisible();
  await expect(form.getByLabel('E-mail', { exact: true })).toHaveValue('not an address');
});
