import { test, expect } from '@playwright/test';
import { signInAs } from './support';

/** Issue 9 item 9 on a page: a NUL in the patient list's search is said plainly (it was a 500). */
test('a control character in the patient search is refused with a message, not an error page', async ({ page }) => {
  await signInAs(page, 'coordinator');
  const res = await page.goto('/patients?q=Ash%00down');
  expect(res?.status()).toBe(200);
  await expect(page.getByText(/The search was not run: Remove the invisible control character U\+0000/)).toBeVisible();
  await expect(page.getByRole('heading', { name: 'Patients', level: 1 })).toBeVisible();
});
