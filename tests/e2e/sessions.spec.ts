import { test, expect, type Browser, type Page } from '@playwright/test';
import { DEMO_LOCUM, DEMO_PASSWORD, demoUserB, firstLink, signIn, signInAs, signInWithForm, waitForMail } from './support';
import { DEMO_PRACTICE, DEMO_PRACTICE_B } from '../../lib/demo/people';

/**
 * Issue 9, items 1 and 7, and the team part of issue 10, in Chromium against the built app:
 * nobody joins a practice without saying yes, the practice of a session is chosen (never picked by
 * name), signing out ends the session, deactivated members lose their session.
 */

// Each test signs several people in and waits for e-mails: more than the default 30 s on a busy machine.
test.describe.configure({ timeout: 90_000 });

async function signInTo(page: Page, email: string, password = DEMO_PASSWORD) {
  await page.goto('/sign-in');
  await page.getByLabel('E-mail', { exact: true }).fill(email);
  await page.getByLabel('Password', { exact: true }).fill(password);
  await page.getByRole('button', { name: 'Sign in', exact: true }).click();
}

/** A brand-new person invited to practice A by its administrator, who accepts and signs in. */
async function newMemberOfA(browser: Browser, label: string, name: string) {
  const adminCtx = await browser.newContext();
  const admin = await adminCtx.newPage();
  await signInAs(admin, 'admin');
  const email = `${label}.${Date.now()}@lamina-demo.invalid`;
  const since = Date.now() - 1000;
  expect((await admin.request.post('/api/team/invitations', { data: { email, name, roles: ['coordinator'] } })).status()).toBe(201);
  const link = firstLink(await waitForMail(admin.request, email, /Invitation to/, since), /http\S+\/invite\/[A-Za-z0-9_-]+/);
  const ctx = await browser.newContext();
  const page = await ctx.newPage();
  await page.goto(new URL(link).pathname);
  await page.getByLabel('Your name').fill(name);
  await page.getByLabel('Password', { exact: true }).fill('a-long-passphrase-2026');
  await page.getByLabel('Password again').fill('a-long-passphrase-2026');
  await page.getByRole('button', { name: 'Accept invitation' }).click();
  await expect(page).toHaveURL(/\/sign-in\?accepted=1/);
  await signIn(page, email, 'a-long-passphrase-2026');
  return { email, page, ctx, admin, adminCtx };
}

test('an invitation from another practice grants nothing until accepted signed in; the person then chooses the practice (item 1)', async ({ browser }) => {
  const { email, page, ctx, adminCtx } = await newMemberOfA(browser, 'invitee', 'Liv Tamarack');
  await adminCtx.close();
  await expect(page.getByTestId('whoami')).toContainText(DEMO_PRACTICE.name);

  // Practice B's administrator invites her.
  const bCtx = await browser.newContext();
  const adminB = await bCtx.newPage();
  await signInAs(adminB, 'admin', 'B');
  const since = Date.now() - 1000;
  expect((await adminB.request.post('/api/team/invitations', { data: { email, name: 'Anyone', roles: ['admin'] } })).status()).toBe(201);

  // Before: B's team list showed her name and last sign-in, and her session moved to B.
  const members = await (await adminB.request.get('/api/team/members')).json();
  expect(JSON.stringify(members)).not.toContain(email);
  const pending = await (await adminB.request.get('/api/team/invitations')).json();
  const row = pending.invitations.find((i: { email: string }) => i.email === email);
  expect(row).toBeTruthy();
  expect(JSON.stringify(row)).not.toMatch(/Tamarack|lastSignIn/);
  await page.reload();
  await expect(page.getByTestId('whoami')).toContainText(DEMO_PRACTICE.name);
  expect((await page.request.get('/api/recall/queues')).status()).toBe(200); // still A's coordinator, not B's admin
  expect((await page.request.get('/api/team/members')).status()).toBe(403);

  // She accepts while signed in, then chooses B explicitly.
  const link = firstLink(await waitForMail(adminB.request, email, new RegExp(`Invitation to ${DEMO_PRACTICE_B.name}`), since), /http\S+\/invite\/[A-Za-z0-9_-]+/);
  await page.goto(new URL(link).pathname);
  await page.getByRole('button', { name: `Join ${DEMO_PRACTICE_B.name}` }).click();
  await expect(page).toHaveURL(/\/choose-practice/);
  await page.getByRole('button', { name: `Work in ${DEMO_PRACTICE_B.name}` }).click();
  await expect(page.getByTestId('whoami')).toContainText(DEMO_PRACTICE_B.name);
  expect((await page.request.get('/api/team/members')).status()).toBe(200);
  // B's team list shows her now; the choice is in B's audit trail.
  expect(JSON.stringify(await (await adminB.request.get('/api/team/members')).json())).toContain(email);
  const trail = await (await adminB.request.get('/api/audit?page=1&action=auth.practice_chosen')).json();
  expect(JSON.stringify(trail)).toContain(email);
  await ctx.close();
  await bCtx.close();
});

test('a person in two practices chooses one at sign-in and switches in the shell; nothing picks by name (item 1)', async ({ page }) => {
  await signInTo(page, DEMO_LOCUM.email);
  // Before: the session went straight into the practice whose name sorts first.
  await expect(page).toHaveURL(/\/choose-practice/);
  await expect(page.getByRole('heading', { name: 'Choose a practice' })).toBeVisible();
  expect((await page.request.get('/api/cases?pageSize=1')).status()).toBe(409);
  await page.getByRole('button', { name: `Work in ${DEMO_PRACTICE_B.name}` }).click();
  await expect(page.getByTestId('whoami')).toContainText(DEMO_PRACTICE_B.name);
  const inB = await (await page.request.get('/api/cases?pageSize=100')).json();
  await page.screenshot({ path: test.info().outputPath('practice-switcher.png') });
  await page.getByLabel('Practice', { exact: true }).selectOption({ label: DEMO_PRACTICE.name });
  await expect(page.getByTestId('whoami')).toContainText(DEMO_PRACTICE.name);
  const inA = await (await page.request.get('/api/cases?pageSize=100')).json();
  expect(inA.total).not.toBe(inB.total);
  // The choice stays for the session.
  await page.goto('/cases');
  await expect(page.getByTestId('whoami')).toContainText(DEMO_PRACTICE.name);
  await page.setViewportSize({ width: 375, height: 800 });
  await page.screenshot({ path: test.info().outputPath('practice-switcher-375.png') });
});

test('signing out ends the session: the old cookie gets 401 (item 7)', async ({ browser }) => {
  const ctx = await browser.newContext();
  const page = await ctx.newPage();
  await signInWithForm(page, 'coordinator', 'B');
  expect((await page.request.get('/api/patients?page=1&pageSize=1')).status()).toBe(200);
  const saved = await ctx.storageState();
  await page.getByRole('button', { name: 'Sign out', exact: true }).click();
  await expect(page).toHaveURL(/\/sign-in/);
  // Before: the copied cookie still read /api/patients for 12 hours.
  const replay = await browser.newContext({ storageState: saved });
  expect((await replay.request.get('/api/patients?page=1&pageSize=1')).status()).toBe(401);
  await replay.close();
  await ctx.close();
});

test('the session is read from its cookie only: the token in an Authorization header, or a garbled cookie, gets 401', async ({ browser, playwright }) => {
  const ctx = await browser.newContext();
  const page = await ctx.newPage();
  await signInWithForm(page, 'coordinator', 'B');
  expect((await page.request.get('/api/patients?page=1&pageSize=1')).status()).toBe(200);
  const session = (await ctx.cookies()).find((c) => /next-auth\.session-token/.test(c.name));
  expect(session?.value.length).toBeGreaterThan(20);
  const baseURL = test.info().project.use.baseURL;
  const bare = await playwright.request.newContext({ baseURL });
  expect((await bare.get('/api/patients?page=1&pageSize=1', { headers: { authorization: `Bearer ${session!.value}` } })).status()).toBe(401);
  const garbled = `${session!.value.slice(0, -4)}AAAA`;
  expect((await bare.get('/api/patients?page=1&pageSize=1', { headers: { cookie: `${session!.name}=${garbled}` } })).status()).toBe(401);
  expect((await bare.get('/api/patients?page=1&pageSize=1', { headers: { cookie: `${session!.name}=${session!.value}` } })).status()).toBe(200);
  await bare.dispose();
  await ctx.close();
});

test('"sign out everywhere" ends the sessions on other devices too (item 7)', async ({ browser }) => {
  const one = await browser.newContext();
  const two = await browser.newContext();
  const p1 = await one.newPage();
  const p2 = await two.newPage();
  // Two devices: two sessions of their own, not one shared.
  await signInWithForm(p1, 'clinician', 'B');
  await signInWithForm(p2, 'clinician', 'B');
  expect((await p2.request.get('/api/patients?page=1&pageSize=1')).status()).toBe(200);
  await p1.getByTestId('whoami').getByRole('link', { name: demoUserB('clinician').name }).click();
  await p1.getByRole('button', { name: 'Sign out everywhere' }).click();
  await expect(p1).toHaveURL(/\/sign-in\?.*ended=everywhere/);
  expect((await p2.request.get('/api/patients?page=1&pageSize=1')).status()).toBe(401);
  await one.close();
  await two.close();
});

test('the administrator deactivates a member, resends and withdraws invitations (issue 10, team)', async ({ browser }) => {
  const { email, page: member, ctx, admin, adminCtx } = await newMemberOfA(browser, 'leaver', 'Kit Hollander');
  expect((await member.request.get('/api/recall/queues')).status()).toBe(200);

  await admin.goto('/team');
  admin.on('dialog', (d) => d.accept());
  await admin.getByRole('button', { name: 'Deactivate Kit Hollander' }).click();
  await expect(admin.getByText('Kit Hollander is deactivated.')).toBeVisible();
  await expect(admin.getByTestId(`member-${email}`)).toContainText('Deactivated');
  // Her open session ends at once, and she cannot sign in again.
  expect((await member.request.get('/api/recall/queues')).status()).toBe(401);
  await signInTo(member, email, 'a-long-passphrase-2026');
  await expect(member.getByText('Wrong e-mail or password.')).toBeVisible();

  // Pending invitations: resend (a new link), then withdraw (the link refuses).
  const invitee = `pending.${Date.now()}@lamina-demo.invalid`;
  const form = admin.getByRole('region', { name: 'Invite a colleague' });
  await form.getByLabel('Name').fill('Pim Ostrava');
  await form.getByLabel('E-mail', { exact: true }).fill(invitee);
  await form.getByLabel('Clinician').check();
  await form.getByRole('button', { name: 'Send invitation' }).click();
  await expect(admin.getByText(`Invitation sent to ${invitee}.`)).toBeVisible();
  const firstMail = await waitForMail(admin.request, invitee, /Invitation to/);
  const first = firstLink(firstMail, /http\S+\/invite\/[A-Za-z0-9_-]+/);
  const pendingRow = admin.getByTestId(`invitation-${invitee}`);
  await expect(pendingRow).toBeVisible();
  await expect(admin.getByTestId(`member-${invitee}`)).toHaveCount(0);
  const since = Date.now();
  await admin.getByRole('button', { name: `Resend the invitation to ${invitee}` }).click();
  await expect(admin.getByText(`Invitation to ${invitee} sent again with a new link.`)).toBeVisible();
  const second = firstLink(await waitForMail(admin.request, invitee, /Invitation to/, since), /http\S+\/invite\/[A-Za-z0-9_-]+/);
  expect(second).not.toBe(first);
  await admin.screenshot({ path: test.info().outputPath('team-pending-invitations.png'), fullPage: true });
  await admin.getByRole('button', { name: `Withdraw the invitation to ${invitee}` }).click();
  await expect(admin.getByText(`Invitation to ${invitee} withdrawn.`)).toBeVisible();
  await expect(admin.getByTestId(`invitation-${invitee}`)).toHaveCount(0);
  await member.goto(new URL(second).pathname);
  await expect(member.getByText(/withdrawn by the practice/)).toBeVisible();
  await member.goto(new URL(first).pathname);
  await expect(member.getByText(/not valid/)).toBeVisible();
  await ctx.close();
  await adminCtx.close();
});
