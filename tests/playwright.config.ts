import { defineConfig, devices } from '@playwright/test';
import path from 'node:path';

/**
 * End-to-end tests in Debian's Chromium (/usr/bin/chromium; Playwright downloads nothing —
 * never run `npx playwright install`). scripts/test.sh starts the built app and its services
 * and sets E2E_BASE_URL (and MAILBOX_URL, the mail fake's HTTP API, for e-mailed links).
 *
 * Written by scripts/test.sh through the environment:
 *   PLAYWRIGHT_JSON_FILE   where the JSON report goes (summed by scripts/summarize-tests.mjs)
 *   PLAYWRIGHT_OUTPUT_DIR  screenshots and traces of failed tests
 */
const root = path.resolve(import.meta.dirname, '..');
const baseURL = process.env.E2E_BASE_URL ?? 'http://127.0.0.1:3000';

export default defineConfig({
  testDir: path.join(root, 'tests/e2e'),
  outputDir: process.env.PLAYWRIGHT_OUTPUT_DIR ?? path.join(root, 'test-results/playwright'),
  // Two cores, one app: tests run one at a time, and a failure is a failure (no retries).
  workers: 1,
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
      name: 'chromium',
      use: {
        ...devices['Desktop Chrome'],
        launchOptions: {
          executablePath: '/usr/bin/chromium',
          args: [
            '--disable-gpu',
            '--disable-quic',
            '--no-first-run',
            '--disable-background-networking',
            '--disable-component-update',
            '--disable-sync',
          ],
        },
      },
    },
  ],
});
