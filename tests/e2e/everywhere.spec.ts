import { test, expect, type Page, type Locator } from '@playwright/test';
import { signInAs, signInWithForm } from './support';

/**
 * The desk and a case page on a phone (375 px), a tablet (768 px) and a laptop (1366 px): nothing
 * scrolls sideways and the desk's due date, status and messages are on screen. Full-page
 * screenshots of each are kept as test artefacts (test-results/playwright/…).
 */
const WIDTHS = [375, 768, 1366] as const;

async function noSidewaysScroll(page: Page, width: number) {
  const scrollWidth = await page.evaluate(() => document.documentElement.scrollWidth);
  expect(scrollWidth, `page is ${scrollWidth} px wide at ${width} px`).toBeLessThanOrEqual(width);
}

async function onScreen(cell: Locator, width: number, what: string) {
  await expect(cell, what).toBeVisible();
  const box = (await cell.boundingBox())!;
  expect(box.x, `${what} starts on screen`).toBeGreaterThanOrEqual(0);
  expect(box.x + box.width, `${what} ends on screen`).toBeLessThanOrEqual(width + 0.5);
}

/** The demo case with the most reviews (so the page shows its timeline, visits and reviews). */
async function richCase(page: Page): Promise<string> {
  const list = (await (await page.request.get('/api/cases?pageSize=40&sort=completionDate&dir=asc')).json()) as { rows: { id: string }[] };
  let best = { id: list.rows[0]!.id, n: -1 };
  for (const r of list.rows) {
    const { case: c } = (await (await page.request.get(`/api/cases/${r.id}`)).json()) as { case: { reviews: unknown[]; canals: unknown[] } };
    const n = c.reviews.length * 10 + c.canals.length;
    if (n > best.n) best = { id: r.id, n };
  }
  expect(best.n, 'a demo case with reviews').toBeGreaterThanOrEqual(10);
  return best.id;
}

test('the desk, its call list and a case page fit a phone, a tablet and a laptop', async ({ page }, testInfo) => {
  test.setTimeout(90_000);
  await signInAs(page, 'coordinator');
  const caseId = await richCase(page);
  for (const width of WIDTHS) {
    await page.setViewportSize({ width, height: width < 768 ? 812 : 900 });

    await page.goto('/desk?queue=due_soon');
    const rows = page.getByRole('table', { name: 'Visits in this queue' }).locator('tbody tr');
    await expect(rows.first()).toBeVisible();
    const first = rows.first();
    await onScreen(first.getByText(/months/).first(), width, 'the visit');
    await onScreen(first.locator('td').nth(4), width, 'the due date');
    await onScreen(first.locator('td').nth(5), width, 'the status');
    await onScreen(first.locator('td').nth(6), width, 'the messages');
    await noSidewaysScroll(page, width);
    await page.screenshot({ path: testInfo.outputPath(`desk-${width}.png`), fullPage: true });

    // the printable call list: its wide table scrolls in its own box, the page does not
    await page.goto('/desk/calls');
    await expect(page.getByRole('heading', { name: 'Call list' })).toBeVisible();
    await noSidewaysScroll(page, width);

    await page.goto(`/cases/${caseId}`);
    await expect(page.getByRole('heading', { name: /^Tooth / })).toBeVisible();
    await noSidewaysScroll(page, width);
    for (const name of ['Recall visits', 'Reviews', 'Canals']) {
      const table = page.getByRole('table', { name });
      if ((await table.count()) === 0) continue;
      const box = (await table.boundingBox())!;
      expect(box.x + box.width, `the ${name} table ends on screen at ${width} px`).toBeLessThanOrEqual(width + 0.5);
    }
    await page.screenshot({ path: testInfo.outputPath(`case-${width}.png`), fullPage: true });
  }
});

test('closing the contact log with Escape returns focus to the button that opened it', async ({ page }) => {
  await signInAs(page, 'coordinator');
  await page.goto('/desk?queue=due_soon');
  const opener = page.getByRole('table', { name: 'Visits in this queue' }).locator('tbody tr').first().getByRole('button', { name: 'Contact log' });
  await opener.click();
  await expect(page.getByRole('heading', { name: 'Contact log' })).toBeFocused();
  await page.keyboard.press('Escape');
  await expect(page.getByRole('heading', { name: 'Contact log' })).toHaveCount(0);
  await expect(opener).toBeFocused();
});

test('signing out ends the session', async ({ page }) => {
  await signInWithForm(page, 'coordinator');
  await page.getByRole('button', { name: 'Sign out' }).click();
  await expect(page).toHaveURL(/\/sign-in/);
  expect((await page.request.get('/api/recall/queues')).status()).toBe(401);
});
