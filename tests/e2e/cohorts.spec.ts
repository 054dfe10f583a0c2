import { execFileSync } from 'node:child_process';
import { expect, test } from '@playwright/test';
import { demoUser, signInAs, waitForMail } from './support';

/**
 * Research cohorts (issue 14), one path through: the researcher names a cohort, narrows it with a
 * factor while the live counts follow (consenting patients only, the rest counted apart), saves it as
 * version 1, exports that version, watches the progress until the archive is ready (an e-mailed notice
 * carries a signed link), downloads it and opens the zip. Screenshots at 1366 and 375 px.
 */
test('the researcher builds a cohort, exports a saved version and opens the archive', async ({ page }, testInfo) => {
  test.setTimeout(120_000);
  await signInAs(page, 'researcher');
  await expect(page.getByRole('link', { name: /Cohorts/ }).first()).toBeVisible();
  await page.goto('/cohorts');
  await page.getByLabel('New cohort’s name').fill(`Molars ${Date.now()}`);
  await page.getByRole('button', { name: 'Create cohort' }).click();
  await expect(page.getByRole('heading', { name: 'Which cases' })).toBeVisible();

  const cases = page.getByTestId('count-cases');
  await expect(cases).toHaveText(/^\d[\d,]*$/);
  const all = Number((await cases.textContent())!.replace(/,/g, ''));
  expect(all).toBeGreaterThan(0);
  await expect(page.getByTestId('count-left-out')).toContainText('Left out for want of research consent');
  await page.locator('summary', { hasText: 'Tooth group' }).click();
  await page.getByLabel('Molar', { exact: true }).check();
  await expect.poll(async () => Number((await cases.textContent())!.replace(/,/g, ''))).toBeLessThan(all);
  await page.screenshot({ path: testInfo.outputPath('cohort-builder.png'), fullPage: true });

  await page.getByRole('button', { name: 'Save as version 1' }).click();
  await expect(page.getByText('Saved as version 1.')).toBeVisible();
  await expect(page.getByRole('button', { name: 'Export version 1' })).toBeVisible();
  const since = Date.now() - 1000;
  await page.getByRole('button', { name: 'Export version 1' }).click();

  // the progress bar, then the archive (a small practice may finish before the bar is seen twice)
  const row = page.getByTestId('export-row').first();
  await expect(row).toBeVisible();
  const statuses = new Set<string>();
  await expect
    .poll(
      async () => {
        const s = (await row.getAttribute('data-status')) ?? '';
        statuses.add(s);
        if (s === 'running' && (await row.getByRole('progressbar').count())) {
          await page.screenshot({ path: testInfo.outputPath('cohort-export-running.png'), fullPage: true });
        }
        return s;
      },
      { timeout: 90_000, intervals: [250] },
    )
    .toBe('done');
  expect([...statuses].some((s) => s === 'queued' || s === 'running')).toBe(true);
  await expect(row).toContainText(/\d+ cases of \d+ patients/);
  await page.screenshot({ path: testInfo.outputPath('cohort-export-done.png'), fullPage: true });

  const mail = await waitForMail(page.request, demoUser('researcher').email, /anonymised export/, since);
  expect(mail.text).toMatch(/\/api\/cohort-exports\/[0-9a-f-]{36}\/download\?token=/);

  const [download] = await Promise.all([page.waitForEvent('download'), row.getByRole('link', { name: 'Download archive' }).click()]);
  const file = testInfo.outputPath('cohort.zip');
  await download.saveAs(file);
  const listing = execFileSync('/usr/bin/python3', ['-m', 'zipfile', '-l', file], { encoding: 'utf8' });
  testInfo.attach('zip listing', { body: listing, contentType: 'text/plain' });
  for (const name of ['cases.csv', 'reviews.csv', 'dictionary.csv', 'dictionary.json', 'README.md']) expect(listing).toContain(name);

  await page.setViewportSize({ width: 375, height: 800 });
  await page.reload();
  await expect(page.getByTestId('count-cases')).toBeVisible();
  await page.screenshot({ path: testInfo.outputPath('cohort-375.png'), fullPage: true });
});
