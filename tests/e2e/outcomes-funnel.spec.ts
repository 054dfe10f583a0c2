import { test, expect, type Page } from '@playwright/test';
import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { firstLoadJsKb, signInAs } from './support';

/**
 * Issue 12, items 5 and 8, in Chromium: the clinician audit's funnel plot as the practice lead
 * and as a clinician (whose browser never receives another clinician's name), and the printable
 * report downloaded from the page, its text read with pdftotext (poppler-utils; the test fails
 * without it) and its first page kept as a PNG (pdftoppm) beside the screenshots.
 */
interface FunnelJson {
  own: boolean;
  points: { key: string; label: string; own: boolean; highlighted: boolean; n: number }[];
  practice: { x: number; n: number };
}

async function openFunnel(page: Page, who: string, testInfo: { outputPath: (name: string) => string }) {
  await page.goto('/outcomes');
  await page.getByRole('navigation', { name: 'Outcome views' }).getByRole('link', { name: 'Clinician audit' }).click();
  await expect(page.getByRole('heading', { name: /^Clinician audit: strict success at 12 months/ })).toBeVisible();
  await expect(page.getByTestId('funnel-chart').locator('svg.recharts-surface').first()).toBeVisible();
  await expect(page.getByText('not a verdict').first()).toBeVisible();
  await expect(page.getByTestId('funnel-practice')).toBeVisible();
  for (const width of [1366, 375]) {
    await page.setViewportSize({ width, height: 900 });
    await page.screenshot({ path: testInfo.outputPath(`outcomes-funnel-${who}-${width}.png`), fullPage: true });
  }
  await page.setViewportSize({ width: 1366, height: 900 });
  // the crude toggle keeps the filters in the URL
  await page.getByRole('group', { name: 'Adjustment' }).getByRole('link', { name: 'Crude' }).click();
  await expect(page).toHaveURL(/adjust=crude/);
  await expect(page.getByRole('group', { name: 'Adjustment' }).getByRole('link', { name: 'Crude' })).toHaveAttribute('aria-current', 'true');
  await expect(page.getByTestId('funnel-chart').locator('svg.recharts-surface').first()).toBeVisible();
  await page.screenshot({ path: testInfo.outputPath(`outcomes-funnel-${who}-crude-1366.png`), fullPage: true });
}

async function downloadReport(page: Page, who: string, testInfo: { outputPath: (name: string) => string }) {
  const [download] = await Promise.all([page.waitForEvent('download'), page.getByTestId('report-pdf').click()]);
  expect(download.suggestedFilename()).toMatch(/^lamina-outcomes-report-\d{4}-\d{2}-\d{2}\.pdf$/);
  const file = testInfo.outputPath(`outcomes-report-${who}.pdf`);
  await download.saveAs(file);
  expect(readFileSync(file).subarray(0, 5).toString('latin1')).toBe('%PDF-');
  const text = execFileSync('pdftotext', ['-enc', 'UTF-8', file, '-']).toString('utf8').replace(/\s+/g, ' ');
  execFileSync('pdftoppm', ['-png', '-r', '80', '-f', '1', '-l', '1', '-singlefile', file, testInfo.outputPath(`outcomes-report-${who}-page1`)]);
  return text;
}

test('the practice lead reads the funnel plot and downloads the audit report', async ({ page }, testInfo) => {
  test.setTimeout(120_000);
  await signInAs(page, 'auditor');
  await openFunnel(page, 'lead', testInfo);
  const api = (await (await page.request.get('/api/outcomes/funnel?adjust=crude')).json()) as FunnelJson;
  expect(api.own).toBe(false);
  expect(api.points.length).toBeGreaterThan(1);
  // the lead's table names every clinician, with their figures
  await expect(page.getByTestId('funnel-row')).toHaveCount(api.points.length);
  for (const p of api.points) await expect(page.getByTestId('funnel-table')).toContainText(p.label);
  await expect(page.getByTestId('funnel-practice')).toContainText(`${api.practice.x} of ${api.practice.n}`);

  // the report for a kind and a factor, downloaded from the page
  await page.goto('/outcomes/factor?kind=primary_treatment&factor=lesion');
  const overview = (await (await page.request.get('/api/outcomes/overview?kind=primary_treatment')).json()) as { overview: { cases: number; success: { at: number | string; strict: { x: number; n: number } }[] } };
  const text = await downloadReport(page, 'lead', testInfo);
  expect(text).toContain('Outcomes audit report');
  expect(text).toContain('Kind of treatment: Primary root canal treatment');
  expect(text).toContain('Factor: Lesion size before treatment');
  expect(text).toContain('Clinician: every clinician');
  const today = new Date().toLocaleDateString('en-GB', { day: 'numeric', month: 'short', year: 'numeric', timeZone: 'Europe/London' });
  expect(text).toContain(`Prepared ${today}`);
  expect(text).toContain(`Cases followed ${overview.overview.cases}`);
  const at12 = overview.overview.success.find((s) => s.at === 12)!;
  expect(text).toContain(`${at12.strict.x} of ${at12.strict.n}`);
  expect(text).toContain('Success by lesion size before treatment');
  expect(text).toContain('3. Clinician audit');
  expect(text).toContain('4. Methods');
  expect(text).toMatch(/Page 1 of \d/);
});

test('a clinician sees their own point highlighted and no other clinician’s name', async ({ page, browser }, testInfo) => {
  test.setTimeout(120_000);
  // the names the lead sees
  const lead = await browser.newPage();
  await signInAs(lead, 'auditor');
  const names = ((await (await lead.request.get('/api/outcomes/funnel')).json()) as FunnelJson).points.map((p) => p.label);
  await lead.close();

  await signInAs(page, 'clinician');
  await openFunnel(page, 'clinician', testInfo);
  const raw = await (await page.request.get('/api/outcomes/funnel')).text();
  const api = JSON.parse(raw) as FunnelJson;
  expect(api.own).toBe(true);
  const mine = api.points.find((p) => p.own)!;
  expect(mine.highlighted).toBe(true);
  expect(mine.key).toBe('you');
  const others = names.filter((n) => !mine.label.includes(n));
  expect(others.length).toBeGreaterThan(0);
  for (const n of others) expect(raw).not.toContain(n);
  // nor in the page the browser received
  const html = await page.content();
  for (const n of others) expect(html).not.toContain(n);
  await expect(page.getByTestId('funnel-row')).toHaveCount(1);
  await expect(page.getByTestId('funnel-row')).toContainText('You');

  const text = await downloadReport(page, 'clinician', testInfo);
  expect(text).toContain('Clinician: your own cases');
  expect(text).toContain('The practice overall');
  for (const n of others) expect(text).not.toContain(n);
});

test('the clinician audit page loads under 200 kB of JavaScript (gzip) on a first visit; the chart comes later', async ({ page }, testInfo) => {
  await signInAs(page, 'auditor');
  const kb = await firstLoadJsKb(page, '/outcomes/clinicians');
  await testInfo.attach('first-load-js.json', { body: JSON.stringify({ '/outcomes/clinicians': kb }), contentType: 'application/json' });
  console.log('First Load JS (kB gzip): /outcomes/clinicians', kb);
  expect(kb).toBeLessThan(200);
});
