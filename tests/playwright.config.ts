import { defineConfig, devices } from '@playwright/test';
import path from 'node:path';

/**
 * End-to-end tests in Debian's Chromium, its headless shell (/usr/bin/chromium-headless-shell, Debian's
 * package chromium-headless-shell, built from the same sources as /usr/bin/chromium; Playwright downloads
 * nothing — never run `npx playwright install`). The shell renders pages as the browser does without the
 * browser's windowing and display compositor: on these two cores it used about a quarter less CPU for
 * the same specs (measured in DEVELOPERS.md), and the e2e phase is mostly Chromium's CPU. scripts/test.sh starts the built app and its services
 * and sets E2E_BASE_URL (and MAILBOX_URL, the mail fake's HTTP API, for e-mailed links).
 *
 * Written by scripts/test.sh through the environment:
 *   PLAYWRIGHT_JSON_FILE   where the JSON report goes (summed by scripts/summarize-tests.mjs)
 *   PLAYWRIGHT_OUTPUT_DIR  screenshots and traces of failed tests
 */
const root = path.resolve(import.meta.dirname, '..');
const baseURL = process.env.E2E_BASE_URL ?? 'http://127.0.0.1:3000';

const chromium = {
  ...devices['Desktop Chrome'],
  launchOptions: {
    executablePath: '/usr/bin/chromium-headless-shell',
    args: [
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
    ],
  },
};

export default defineConfig({
  testDir: path.join(root, 'tests/e2e'),
  outputDir: process.env.PLAYWRIGHT_OUTPUT_DIR ?? path.join(root, 'test-results/playwright'),
  // Two workers, one per project (below): the specs that write to the shared demo world run one at a
  // time; the accessibility spec, which only reads, runs beside them. A failure is a failure (no retries).
  workers: 2,
  fullyParallel: false,
  retries: 0,
  forbidOnly: Boolean(process.env.CI),
  timeout: 30_000,
  expect: { timeout: 10_000 },
  reporter: [
    ['list'],
    ['json', { outputFile: process.env.PLAYWRIGHT_JSON_FILE ?? path.join(root, 'test-results/playwright.json') }],
  ],
  use: {
    baseURL,
    // Writes carry the Origin a browser sends from Lamina's own pages (lib/http.ts refuses others);
    // tests/e2e/security.spec.ts turns this off to send foreign and missing Origins itself.
    extraHTTPHeaders: { Origin: new URL(baseURL).origin },
    screenshot: 'only-on-failure',
    trace: 'retain-on-failure',
    actionTimeout: 10_000,
    navigationTimeout: 20_000,
  },
  projects: [
    {
      // Every spec but the accessibility one, one test at a time: most change the shared demo world
      // (send, book, review, import, roles) and some read what others wrote.
      name: 'chromium',
      testIgnore: /accessibility\.spec\.ts$/,
      workers: 1,
      use: chromium,
    },
    {
      // axe on every page as each role (issue 15): reads only, so it runs beside the project above, in
      // the second worker, one role at a time. It signs in again when a test there ends its session.
      name: 'accessibility',
      testMatch: /accessibility\.spec\.ts$/,
      workers: 1,
      use: chromium,
    },
  ],
});
