import { test, expect } from '@playwright/test';
import { signInAs } from './support';

// Issue 11: tenderness to percussion is scored as a sign of disease (Friedman & Mor 2004); an
// extraction records its reason and, when it happened elsewhere, its own date.
test('a clinician records a review with tenderness to percussion and sees disease, with the reason', async ({ page }) => {
  // it may open up to ten case pages to find one with a review to record: on a loaded machine that outlasts 30 s
  test.setTimeout(90_000);
  await signInAs(page, 'clinician');
  await page.goto('/cases');
  // A completed case (other tests may add a case not completed yet at the top of the list).
  await page.locator('table a[href^="/cases/"]').first().waitFor();
  const hrefs = await page.locator('table a[href^="/cases/"]').evaluateAll((as) => as.map((a) => a.getAttribute('href')!));
  const record = page.getByRole('button', { name: 'Record a review' });
  for (const href of hrefs.slice(0, 10)) {
    await page.goto(href);
    if (await record.waitFor({ timeout: 8_000 }).then(() => true, () => false)) break;
  }
  await record.click();
  const form = page.getByRole('form', { name: 'Record a review' });
  await form.getByLabel('At visit').selectOption({ label: 'Unplanned review' });

  await form.getByLabel('Tooth status').selectOption({ label: 'Extracted' });
  await expect(form.getByLabel('Reason for the extraction')).toBeVisible();
  await expect(form.getByLabel('Date of the event, if not today’s review')).toBeVisible();
  await page.screenshot({ path: 'test-results/playwright/review-form-extracted.png', fullPage: true });

  await form.getByLabel('Tooth status').selectOption({ label: 'Present' });
  await expect(form.getByLabel('Reason for the extraction')).toHaveCount(0);
  await form.getByLabel('Periapical index (PAI) now').selectOption('2');
  await form.getByLabel('Largest lesion diameter now (mm)').fill('0');
  await form.getByLabel('Tender to percussion').check();
  await expect(form.getByText(/except increased mobility, which is recorded only/)).toBeVisible();
  await page.setViewportSize({ width: 375, height: 900 });
  await page.screenshot({ path: 'test-results/playwright/review-form-375.png', fullPage: true });
  await page.setViewportSize({ width: 1280, height: 900 });
  await form.getByRole('button', { name: 'Save review' }).click();

  const last = page.getByRole('table', { name: 'Reviews' }).getByRole('row').last();
  await expect(last).toContainText('Disease');
  await expect(last).toContainText('tender to percussion');
  await page.screenshot({ path: 'test-results/playwright/review-percussion-disease.png', fullPage: true });
});
