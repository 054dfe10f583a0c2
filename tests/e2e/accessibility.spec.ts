import { test, expect, type Page } from '@playwright/test';
import AxeBuilder from '@axe-core/playwright';
import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { ROLES, type Role } from '../../lib/auth/roles';
import { PAGES } from './pages';
import { signInAs } from './support';

/**
 * Issue 15: axe (axe-core through @axe-core/playwright, WCAG 2.1 A and AA rules) on every page of the
 * signed-in area — the page matrix PAGES of ./pages.ts — as each role that may see it (status 200),
 * with zero serious or critical violations. One signed-in page per role, reused for all its pages.
 * Pages that take an id get a real one of the demo practice (a random id shows only "not found").
 * The counts per page and role go to test-results/playwright/axe-counts.json and the list output.
 * It runs in a Playwright project of its own, beside the other specs (tests/playwright.config.ts).
 */
type Found = { page: string; role: Role; violations: number; serious: number; details: string[] };
const results: Found[] = [];

async function realIds(page: Page): Promise<Record<string, string>> {
  const ids: Record<string, string> = {};
  const cases = await page.request.get('/api/cases?pageSize=1');
  if (cases.ok()) ids.case = ((await cases.json()) as { rows: { id: string }[] }).rows[0]?.id ?? '';
  const patients = await page.request.get('/api/patients?page=1&pageSize=1');
  if (patients.ok()) {
    const body = (await patients.json()) as { rows?: { id: string }[]; patients?: { id: string }[] };
    ids.patient = (body.rows ?? body.patients ?? [])[0]?.id ?? '';
  }
  return ids;
}

const isSignIn = (page: Page) => new URL(page.url()).pathname.startsWith('/sign-in');

function urlOf(row: (typeof PAGES)[number], ids: Record<string, string>): string {
  if (row.page.startsWith('cases/[id]') && ids.case) return row.url().replace(/\/cases\/[^/]+/, `/cases/${ids.case}`);
  if (row.page === 'patients/[id]' && ids.patient) return `/patients/${ids.patient}`;
  return row.url();
}

/**
 * axe on the page once it has settled. A page may still move on by itself after its first paint
 * (cases/new without a patient goes on to choose one): axe's run is then cut off ("Execution context
 * was destroyed"), so it runs again on the page it arrived at, a few times at most.
 */
async function analyzeSettled(page: Page) {
  for (let attempt = 1; ; attempt++) {
    try {
      return await new AxeBuilder({ page }).withTags(['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']).analyze();
    } catch (e) {
      if (attempt >= 3 || !/Execution context was destroyed|navigat/i.test((e as Error).message)) throw e;
      await page.waitForLoadState('load');
      await page.locator('main').first().waitFor();
    }
  }
}

for (const role of ROLES) {
  test(`axe: every page ${role} may see has no serious or critical violation`, async ({ page }) => {
    test.setTimeout(300_000); // up to a dozen pages and their analyses on a shared, busy machine
    await signInAs(page, role);
    const ids = await realIds(page);
    const mine = PAGES.filter((r) => r.expect[role] === 200);
    expect(mine.length).toBeGreaterThan(0);
    for (const row of mine) {
      const url = urlOf(row, ids);
      let res = await page.goto(url);
      if (isSignIn(page)) {
        // A test running beside this spec ended the person's sessions (a revoked role, "sign out
        // everywhere"): sign in again and open the page once more.
        await signInAs(page, role);
        res = await page.goto(url);
      }
      expect(res?.status(), url).toBe(200);
      expect(isSignIn(page), `${url} as ${role} was sent to sign-in`).toBe(false);
      await page.locator('main').first().waitFor();
      await page.waitForLoadState('load');
      const r = await analyzeSettled(page);
      const bad = r.violations.filter((v) => v.impact === 'serious' || v.impact === 'critical');
      results.push({
        page: row.page || '/',
        role,
        violations: r.violations.length,
        serious: bad.length,
        details: bad.map((v) => `${v.impact} ${v.id}: ${v.help} — ${v.nodes.slice(0, 3).map((n) => n.target.join(' ')).join(' | ')}`),
      });
      if (bad.length) await page.screenshot({ path: `test-results/playwright/axe-${role}-${(row.page || 'home').replaceAll('/', '_')}.png`, fullPage: true });
    }
    await page.screenshot({ path: `test-results/playwright/axe-${role}-last.png` });
    const mineFound = results.filter((f) => f.role === role);
    console.log(mineFound.map((f) => `axe ${role.padEnd(11)} ${f.page.padEnd(22)} serious+critical ${f.serious}, all ${f.violations}`).join('\n'));
    const dir = path.resolve(import.meta.dirname, '../../test-results/playwright');
    mkdirSync(dir, { recursive: true });
    writeFileSync(path.join(dir, `axe-counts-${role}.json`), JSON.stringify(mineFound, null, 2));
    expect(mineFound.filter((f) => f.serious > 0).flatMap((f) => f.details.map((d) => `${f.page}: ${d}`))).toEqual([]);
  });
}
