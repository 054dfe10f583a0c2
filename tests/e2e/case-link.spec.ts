import { test, expect } from '@playwright/test';
import { signInAs } from './support';

// Issue 11: a retreatment is linked to the tooth's earlier case, so the tooth stays followed for
// tooth loss across both; the link is shown on both case pages.
test('a clinician records a retreatment of a treated tooth: the earlier case is pre-selected and linked both ways', async ({ page }) => {
  await signInAs(page, 'clinician');
  await page.goto('/cases?stage=completed&sort=completionDate&dir=desc');
  // The practice's most recently completed case (its tooth link; the row's first link is the patient).
  await page.locator('table a[href^="/cases/"]').first().click();
  await expect(page).toHaveURL(/\/cases\/[0-9a-f-]{36}$/);
  const earlierUrl = page.url();
  await page.getByRole('link', { name: 'Record a later treatment of this tooth' }).click();

  const form = page.getByRole('form', { name: 'New case' });
  const link = form.getByLabel('This treats the tooth of an earlier case (retreatment / surgery after …)');
  await expect(link).toHaveValue(''); // a primary treatment is not linked by itself
  await form.getByLabel('Kind of treatment').selectOption({ label: 'Non-surgical retreatment' });
  await expect(link).not.toHaveValue(''); // a retreatment of the tooth links to its latest case
  await form.getByLabel('Start date').fill(new Date().toISOString().slice(0, 10));
  await form.getByLabel('Pulpal diagnosis').selectOption({ label: 'Previously treated' });
  await form.getByLabel('Apical diagnosis').selectOption({ label: 'Asymptomatic apical periodontitis' });
  await form.getByLabel('Periapical index (PAI) before treatment').selectOption('3');
  await form.getByLabel('Largest lesion diameter (mm)').fill('2');
  await form.getByLabel('Name').fill('D');
  await page.setViewportSize({ width: 375, height: 900 });
  await page.screenshot({ path: 'test-results/playwright/case-form-earlier-case-375.png', fullPage: true });
  await page.setViewportSize({ width: 1280, height: 900 });
  await form.getByRole('button', { name: 'Save case' }).click();

  const links = page.getByRole('list', { name: 'Other treatments of this tooth' });
  await expect(links).toContainText('Earlier treatment of this tooth:');
  await page.screenshot({ path: 'test-results/playwright/case-earlier-treatment.png', fullPage: true });
  const laterUrl = page.url();
  await links.getByRole('link').first().click();
  await expect(page).toHaveURL(earlierUrl);
  await expect(page.getByRole('list', { name: 'Other treatments of this tooth' })).toContainText('Later treatment: Non-surgical retreatment');
  // (the earlier case may itself follow an older one: take the "Later treatment" line)
  await page.getByRole('list', { name: 'Other treatments of this tooth' }).getByRole('listitem').filter({ hasText: 'Later treatment:' }).getByRole('link').click();
  await expect(page).toHaveURL(laterUrl);
});
