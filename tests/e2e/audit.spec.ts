import { test, expect } from '@playwright/test';
import { readFileSync } from 'node:fs';
import { demoUser, signInAs, signInWithForm } from './support';

test('the administrator filters the audit trail by person and downloads it as CSV', async ({ browser, page }, testInfo) => {
  test.setTimeout(60_000);
  // The coordinator signs in and opens the desk: both are in the trail under her name.
  const coordCtx = await browser.newContext();
  const coord = await coordCtx.newPage();
  await signInWithForm(coord, 'coordinator'); // a fresh sign-in: the trail must show it
  await coord.goto('/desk');
  // The desk's counts are read (and audited) by the page after it loads: wait for them to show.
  await expect(coord.getByRole('navigation', { name: 'Work queues' }).getByRole('button', { name: /Overdue/ })).toBeVisible({ timeout: 30_000 });
  await coordCtx.close();

  const coordinator = demoUser('coordinator');
  await signInAs(page, 'admin');
  await page.goto('/team/audit');
  const filters = page.getByRole('form', { name: 'Filter the audit trail' });
  await filters.getByLabel('Person').selectOption({ label: `${coordinator.name} (${coordinator.email})` });
  await filters.getByRole('button', { name: 'Show events' }).click();
  await expect(page).toHaveURL(/person=[0-9a-f-]{36}/);

  const table = page.getByRole('table', { name: 'Audit events' });
  await expect(table).toContainText('Signed in');
  await expect(table).toContainText('Opened the recall desk');
  // Every row is hers; no raw action codes.
  const who = await table.locator('tbody tr td:nth-child(2)').allInnerTexts();
  expect(who.length).toBeGreaterThan(1);
  expect(new Set(who)).toEqual(new Set([coordinator.name]));
  await expect(table).not.toContainText('recall.queues_read');
  await page.screenshot({ path: testInfo.outputPath('audit-by-person-1366.png'), fullPage: true });

  // The CSV keeps the filter.
  const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'Download CSV' }).click()]);
  const csv = readFileSync((await download.path())!, 'utf8');
  const lines = csv.trim().split('\r\n');
  expect(lines[0]).toContain('Who,E-mail,What');
  expect(lines.slice(1).every((l) => l.includes(`,${coordinator.email},`))).toBe(true);
  expect(csv).toContain(',Opened the recall desk,');

  // On a phone the filters stack and the page does not scroll sideways.
  await page.setViewportSize({ width: 375, height: 800 });
  expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(375);
  await page.screenshot({ path: testInfo.outputPath('audit-by-person-375.png'), fullPage: true });
});
