import { test, expect } from '@playwright/test';
import { firstLink, signInAs, waitForMail } from './support';

interface Row {
  visitId: string;
  patient: { id: string; name: string; canEmail: boolean };
  tooth: string;
  milestone: number;
  reminders: unknown[];
  nextStep: string | null;
}

test('the coordinator sends an invitation, the patient confirms through its link, and the desk shows it confirmed', async ({ page, browser }) => {
  test.setTimeout(90_000); // three browser contexts and a real send through the worker; 30 s was too short on a loaded machine
  await signInAs(page, 'coordinator');
  await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Recall desk' }).click();
  await expect(page.getByRole('heading', { name: 'Recall desk' })).toBeVisible();

  // A visit due in the next 30 days that has had no message yet, of a patient who agreed to e-mail.
  const list = (await (await page.request.get('/api/recall/visits?queue=due_soon&pageSize=200')).json()) as { rows: Row[] };
  const index = list.rows.findIndex((r) => r.patient.canEmail && r.reminders.length === 0 && r.nextStep);
  expect(index, 'the demo data has a visit due soon with no message yet').toBeGreaterThanOrEqual(0);
  const row = list.rows[index]!;
  const patient = (await (await page.request.get(`/api/patients/${row.patient.id}`)).json()) as { patient: { email: string } };
  const since = Date.now() - 1000;

  await page.goto(`/desk?queue=due_soon${index >= 25 ? `&page=${Math.floor(index / 25) + 1}` : ''}`);
  await page.getByRole('checkbox', { name: `Select ${row.patient.name}, tooth ${row.tooth}, ${row.milestone} months` }).check();
  await expect(page.getByText('1 selected')).toBeVisible();
  await page.getByRole('button', { name: 'Send invitations now' }).click();
  await expect(page.getByRole('status').filter({ hasText: /queued|sent|invitation/i }).first()).toBeVisible();

  // The worker sends it to the local mail fake: the administrator sees it in the dev mailbox.
  const mail = await waitForMail(page.request, patient.patient.email, /follow-up review/i, since);
  expect(mail.text).toContain('/r/');
  const admin = await browser.newContext();
  const adminPage = await admin.newPage();
  await signInAs(adminPage, 'admin');
  await adminPage.goto('/dev-mailbox');
  await expect(adminPage.getByRole('link', { name: mail.subject }).first()).toBeVisible();
  await admin.close();

  // The patient, without an account, opens the link and confirms. Opening alone changes nothing.
  const link = firstLink(mail, /http:\/\/\S+\/r\/[A-Za-z0-9._-]+/);
  const patientCtx = await browser.newContext();
  const patientPage = await patientCtx.newPage();
  await patientPage.goto(link);
  await expect(patientPage.getByRole('heading', { name: /Your follow-up review/ })).toBeVisible();
  const before = (await (await page.request.get(`/api/recall/visits/${row.visitId}/contact-log`)).json()) as { visit: { status: string } };
  expect(before.visit.status).toBe('invited');
  await patientPage.getByRole('radio', { name: /Yes, I would like to come|Yes, this time suits me/ }).check();
  await patientPage.getByRole('button', { name: 'Send my answer' }).click();
  await expect(patientPage.getByText('your follow-up review is confirmed')).toBeVisible();
  // A second use of the same link changes nothing and says why.
  await patientPage.goto(link);
  await expect(patientPage.getByText(/already been used|already answered/i)).toBeVisible();
  await patientCtx.close();

  // The desk shows the reply: the visit is confirmed.
  await page.goto('/desk?queue=replied');
  const repliedRows = (await (await page.request.get('/api/recall/visits?queue=replied&pageSize=200')).json()) as { rows: (Row & { status: string })[] };
  const replied = repliedRows.rows.findIndex((r) => r.visitId === row.visitId);
  expect(replied).toBeGreaterThanOrEqual(0);
  expect(repliedRows.rows[replied]!.status).toBe('confirmed');
  if (replied < 25) {
    await expect(page.getByRole('row').filter({ hasText: row.patient.name }).filter({ hasText: `${row.milestone} months` }).first()).toContainText('Confirmed');
  }
});

test('the desk is the coordinator’s: a clinician is refused', async ({ page }) => {
  await signInAs(page, 'clinician');
  const res = await page.goto('/desk');
  expect(res?.status()).toBe(403);
  expect((await page.request.get('/api/recall/queues')).status()).toBe(403);
});

test('the coordinator notes a call in a visit’s contact log', async ({ page }) => {
  await signInAs(page, 'coordinator');
  await page.goto('/desk?queue=missed');
  const first = page.getByRole('button', { name: 'Contact log' }).first();
  // the queue's rows load after the page: slowly on a busy machine (a CI run beside a bench timed out at 10 s)
  await expect(first).toBeVisible({ timeout: 30_000 });
  await first.click();
  const log = page.getByRole('complementary', { name: 'Contact log' });
  await expect(log).toBeVisible();
  await log.getByLabel('What was said').fill('Rang twice, no answer; left a voicemail.');
  await log.getByRole('button', { name: 'Add to the log' }).click();
  await expect(log.getByText('Rang twice, no answer; left a voicemail.')).toBeVisible();
  await log.getByRole('button', { name: 'Close' }).click();
  await expect(log).toBeHidden();
});
