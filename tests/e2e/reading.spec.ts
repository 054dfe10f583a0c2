import { readFileSync } from 'node:fs';
import path from 'node:path';
import { test, expect, type Browser, type Page } from '@playwright/test';
import { demoUser, newPatientWithCase, signIn, signInAs } from './support';

// Issue 13, reading queue: a clinician gives a follow-up film its first reading by keyboard (PAI 4
// against a healthy baseline: a new lesion, disease, so a blinded second reading follows); a second
// clinician reads it seeing the film alone (nothing of the patient, the case or the first reading);
// the two are two steps apart, so the lead settles it by consensus; the lead sees kappa per pair.
const fixture = readFileSync(path.resolve(import.meta.dirname, '../support/films/radiograph.png'));

async function as(browser: Browser, sign: (p: Page) => Promise<void>) {
  const ctx = await browser.newContext();
  const page = await ctx.newPage();
  await sign(page);
  return { ctx, page };
}

test('first reading, blinded second reading, consensus, and the lead’s kappa', async ({ browser }, testInfo) => {
  test.setTimeout(90_000);
  const stamp = Date.now().toString(36);
  const first = await as(browser, (p) => signInAs(p, 'clinician'));
  const fp = first.page;
  const { caseId } = await newPatientWithCase(
    fp.request,
    { registryNumber: `E2E-R-${stamp}`, givenName: 'Orla', familyName: 'Pendlebright', dateOfBirth: '1968-09-02', sex: 'female', email: `orla.${stamp}@patients.test.invalid` },
    { tooth: 46, startDate: '2025-01-10', completionDate: '2025-01-24', paiScore: 2, lesionDiameterMm: 0, operatorEmail: demoUser('clinician').email },
  );
  const upload = await fp.request.post(`/api/cases/${caseId}/films`, { multipart: { role: 'follow_up', file: { name: 'recall.png', mimeType: 'image/png', buffer: fixture } } });
  expect(upload.status(), await upload.text()).toBe(201);
  const filmId = (await upload.json()).film.id as string;

  // First reading, keyboard only: 4, w (swelling), s
  await fp.goto(`/reading?film=${filmId}`);
  await expect(fp.getByRole('heading', { name: /First reading/ })).toBeVisible();
  await expect(fp.getByText('s save the reading')).toBeVisible();
  await expect(fp.locator(`figure[data-film="${filmId}"] img`)).toBeVisible();
  await fp.keyboard.press('4');
  await fp.keyboard.press('w');
  await expect(fp.getByRole('checkbox', { name: /Swelling/ })).toBeChecked();
  await fp.keyboard.press('s');
  await expect(fp.getByText('Reading saved: PAI 4. A second clinician will read this film blinded.')).toBeVisible();
  await first.ctx.close();

  // Blinded second reading by another clinician: the film alone
  const second = await as(browser, (p) => signIn(p, 'clinician2@lamina-demo.invalid'));
  const sp = second.page;
  await sp.setViewportSize({ width: 1280, height: 900 });
  await sp.goto(`/reading?film=${filmId}`);
  await expect(sp.getByRole('heading', { name: /Blinded second reading/ })).toBeVisible();
  const img = sp.locator(`figure[data-film="${filmId}"] img`);
  await expect(img).toHaveAttribute('src', `/api/reading/blinded/${filmId}/image`);
  await expect.poll(() => img.evaluate((el) => ((el as HTMLImageElement).complete ? (el as HTMLImageElement).naturalWidth : 0))).toBeGreaterThan(0);
  const main = sp.locator('main');
  for (const secret of ['Orla', 'Pendlebright', `E2E-R-${stamp}`, 'Tooth 46', 'PAI 4', 'Imre', 'Swelling', caseId]) await expect(main).not.toContainText(secret);
  expect(await sp.title()).not.toMatch(/Orla|Pendlebright|46/);
  await sp.screenshot({ path: testInfo.outputPath('blinded-reader.png'), fullPage: true });
  await sp.setViewportSize({ width: 375, height: 800 });
  await sp.screenshot({ path: testInfo.outputPath('blinded-reader-375.png'), fullPage: true });
  await sp.keyboard.press('2');
  await sp.keyboard.press('s');
  await expect(sp.getByText('Reading saved: PAI 2.')).toBeVisible();
  await second.ctx.close();

  // Two steps apart: adjudication; the lead enters the consensus, then reads kappa
  const lead = await as(browser, (p) => signInAs(p, 'auditor'));
  const lp = lead.page;
  await lp.goto(`/reading?scope=practice&film=${filmId}`);
  await expect(lp.getByRole('heading', { name: /Adjudication/ })).toBeVisible();
  await expect(lp.getByText('Consensus entry. The two readings: PAI 4 and PAI 2')).toBeVisible();
  await lp.keyboard.press('3');
  await lp.keyboard.press('s');
  await expect(lp.getByText('Reading saved: PAI 3.')).toBeVisible();
  await lp.goto('/outcomes/agreement');
  await expect(lp.getByRole('link', { name: 'Reader agreement' })).toHaveAttribute('aria-current', 'page');
  const pairs = lp.getByRole('table', { name: 'Weighted kappa per pair of readers' });
  await expect(pairs).toContainText(/Imre Solberg and Teodora Wrenfield|Teodora Wrenfield and Imre Solberg/);
  await expect(pairs.getByTestId('kappa-linear').first()).not.toBeEmpty();
  await expect(lp.getByText(/Fleiss, Cohen & Everitt \(1969\)/)).toBeVisible();
  await lp.screenshot({ path: testInfo.outputPath('agreement.png'), fullPage: true });
  await lead.ctx.close();
});
