import { readFileSync } from 'node:fs';
import path from 'node:path';
import { test, expect } from '@playwright/test';
import { firstLink, newPatientWithCase, signInAs, waitForMail } from './support';

const fixture = (name: string) => readFileSync(path.resolve(import.meta.dirname, '../support/films', name));

// Issue 13, films from referring dentists: the coordinator sends the case's referrer an upload link
// for one visit; the referrer (no account) opens it on a phone, sees only the patient's initials and
// the tooth, uploads a film once; the link is then used up; the film is on the case, marked as sent by
// the referring dentist.
test('the coordinator sends a referrer an upload link; the referrer uploads a film through it, once', async ({ page, browser }, testInfo) => {
  test.setTimeout(180_000); // the link goes out by e-mail through the worker
  const stamp = Date.now().toString(36);
  await signInAs(page, 'clinician');
  const referrerEmail = `dr.hollin.${stamp}@referrers.test.invalid`;
  // Made without an address (as an import or a quick entry would): the coordinator adds it on the case page.
  const referrerName = `Dr Ivo Hollin ${stamp}`;
  const referrer = await page.request.post('/api/referrers', { data: { name: referrerName } });
  expect(referrer.status(), await referrer.text()).toBe(201);
  const referrerId = (await referrer.json()).referrer.id as string;
  // completed five months ago: the six-month recall visit is still ahead
  const done = new Date(Date.now() - 150 * 86_400_000).toISOString().slice(0, 10);
  const { caseId } = await newPatientWithCase(
    page.request,
    { registryNumber: `E2E-R-${stamp}`, givenName: 'Marlow', familyName: 'Quenby', dateOfBirth: '1968-09-03', sex: 'male', email: `marlow.${stamp}@patients.test.invalid` },
    { tooth: 46, completionDate: done, lesionDiameterMm: 3, referrerId },
  );

  // The coordinator asks the referrer for the film of the first open visit.
  await page.context().clearCookies();
  await signInAs(page, 'coordinator');
  await page.goto(`/cases/${caseId}`);
  const since = Date.now() - 1000;
  await page.getByRole('button', { name: 'Ask the referrer for the film' }).first().click();
  await expect(page.getByRole('alert').filter({ hasText: `${referrerName} has no e-mail address yet` })).toBeVisible();
  const addAddress = page.getByRole('form', { name: `Add ${referrerName}’s e-mail` });
  await addAddress.getByLabel(`${referrerName}’s e-mail`).fill('not an address');
  await addAddress.getByRole('button', { name: 'Save the address and send' }).click();
  await expect(addAddress.getByRole('alert')).toBeVisible(); // refused: nothing saved, nothing sent
  await addAddress.getByLabel(`${referrerName}’s e-mail`).fill(referrerEmail);
  await addAddress.getByRole('button', { name: 'Save the address and send' }).click();
  await expect(page.getByRole('status').filter({ hasText: `Upload link sent to ${referrerEmail}` })).toBeVisible();
  const mail = await waitForMail(page.request, referrerEmail, /Follow-up film for tooth 46/, since);
  expect(mail.subject).not.toContain('Quenby');
  expect(mail.text).not.toContain('Marlow');
  const link = firstLink(mail, /https?:\/\/\S+\/upload\/[A-Za-z0-9._~-]+/);

  // The referrer: no session, a 375 px phone.
  const phone = await browser.newContext({ viewport: { width: 375, height: 800 } });
  try {
    const referrerPage = await phone.newPage();
    await referrerPage.goto(new URL(link).pathname);
    await expect(referrerPage.getByRole('heading', { name: 'Send a follow-up film' })).toBeVisible();
    await expect(referrerPage.getByTestId('tooth')).toHaveText('46');
    const initials = (await referrerPage.getByTestId('initials').innerText()).replace(/[^A-Z]/g, '');
    expect(initials).toBe('MQ');
    const body = await referrerPage.locator('body').innerText();
    for (const secret of ['Marlow', 'Quenby', `E2E-R-${stamp}`, '1968']) expect(body).not.toContain(secret);
    await referrerPage.screenshot({ path: testInfo.outputPath('referrer-upload-375.png'), fullPage: true });
    await referrerPage.getByLabel(/Films \(PNG, JPEG or DICOM/).setInputFiles({ name: 'follow-up.png', mimeType: 'image/png', buffer: fixture('radiograph.png') });
    await referrerPage.getByRole('button', { name: 'Send to the practice' }).click();
    await expect(referrerPage.getByText(/received|thank/i).first()).toBeVisible({ timeout: 60_000 });
    await referrerPage.screenshot({ path: testInfo.outputPath('referrer-upload-done-375.png'), fullPage: true });
    // single use: the link now takes nothing more
    await referrerPage.reload();
    await expect(referrerPage.getByRole('button', { name: 'Send to the practice' })).toHaveCount(0);
    await expect(referrerPage.getByRole('alert').first()).toBeVisible();
  } finally {
    await phone.close();
  }

  // The film is on the case, from the referring dentist.
  await page.goto(`/cases/${caseId}`);
  const films = page.getByRole('region', { name: 'Films' });
  await expect(films.getByText('From the referring dentist')).toBeVisible();
  await films.screenshot({ path: testInfo.outputPath('referrer-film-on-case.png') });
});
