import { test, expect, type APIRequestContext } from '@playwright/test';
import { signInAs } from './support';

/**
 * Issue 9, the edge of the app: demo mailbox (item 3), the address a request came from (4), open
 * redirects (5), cross-site writes (6), security headers and stable error codes (12). Page
 * statuses (item 11) are in authz-matrix.spec.ts. Each test here failed on the code before.
 */

// This file sends its own Origin headers (foreign, missing, same-origin) on every write.
test.use({ extraHTTPHeaders: {} });

const originOf = (baseURL: string | undefined) => new URL(baseURL!).origin;

interface AuditRow {
  action: string;
  ip: string | null;
  at: string;
}
async function auditRows(request: APIRequestContext, action: string): Promise<AuditRow[]> {
  const res = await request.get(`/api/audit?page=1&pageSize=50&action=${action}`);
  expect(res.status()).toBe(200);
  return ((await res.json()) as { rows: AuditRow[] }).rows;
}

test.describe('demo mode (item 3)', () => {
  test('every page says that mail is caught locally, signed in or not', async ({ page }) => {
    await page.goto('/sign-in');
    await expect(page.getByTestId('demo-band')).toContainText('mail is caught locally');
    await signInAs(page, 'coordinator');
    await expect(page.getByTestId('demo-band')).toContainText('mail is caught locally');
  });

  test('reading the mailbox is audited', async ({ page }) => {
    await signInAs(page, 'admin');
    const before = Date.now() - 1000;
    expect((await page.request.get('/api/dev-mailbox')).status()).toBe(200);
    const rows = await auditRows(page.request, 'mailbox.');
    expect(rows.some((r) => r.action === 'mailbox.list' && Date.parse(r.at) >= before)).toBe(true);
  });
});

test('a forged X-Forwarded-For does not change "from where" in the audit trail (item 4)', async ({ page }) => {
  await signInAs(page, 'admin');
  const forged = '203.0.113.77';
  expect((await page.request.get('/api/audit?page=1&action=audit', { headers: { 'X-Forwarded-For': forged } })).status()).toBe(200);
  const rows = await auditRows(page.request, 'audit.read');
  expect(rows.length).toBeGreaterThan(0);
  expect(rows.map((r) => r.ip)).not.toContain(forged);
  // The newest is the request with the forged header (a read is audited after it is read): the socket's address.
  expect(rows[0]!.ip).toBe('127.0.0.1');
});

test.describe('no open redirect (item 5)', () => {
  const hostile = ['//evil.example/x', '/\\evil.example/x', 'https://evil.example/x', '/%2F%2Fevil.example/x', '%2F%2Fevil.example', '/%5Cevil.example'];

  test('the server redirect of a signed-in visitor stays on Lamina', async ({ page }) => {
    await signInAs(page, 'coordinator');
    for (const target of hostile) {
      const res = await page.request.get(`/sign-in?callbackUrl=${encodeURIComponent(target)}`, { maxRedirects: 0 });
      expect(res.status(), target).toBe(307);
      expect(res.headers()['location'], target).toBe('/');
    }
    const ok = await page.request.get(`/sign-in?callbackUrl=${encodeURIComponent('/desk')}`, { maxRedirects: 0 });
    expect(ok.headers()['location']).toBe('/desk');
  });

  test('signing in on a page with a hostile callbackUrl lands on Lamina', async ({ page, baseURL }) => {
    await page.goto(`/sign-in?callbackUrl=${encodeURIComponent('//evil.example/x')}`);
    await page.getByLabel('E-mail', { exact: true }).fill('coordinator@lamina-demo.invalid');
    await page.getByLabel('Password', { exact: true }).fill('lamina-demo-2026');
    await page.getByRole('button', { name: 'Sign in', exact: true }).click();
    await expect(page.getByTestId('whoami')).toBeVisible();
    expect(new URL(page.url()).origin).toBe(originOf(baseURL));
  });
});

test('a cross-site or non-JSON write is refused and changes nothing (item 6)', async ({ page, baseURL }) => {
  await signInAs(page, 'coordinator');
  const list = (await (await page.request.get('/api/patients?page=1&pageSize=1')).json()) as { rows: { id: string }[] };
  const id = list.rows[0]!.id;
  const phoneOf = async () => ((await (await page.request.get(`/api/patients/${id}`)).json()) as { patient: { phone: string | null } }).patient.phone;
  const before = await phoneOf();
  const body = JSON.stringify({ phone: '01632 960999' });

  const attempts: { headers: Record<string, string>; status: number; error: string }[] = [
    { headers: { Origin: 'https://evil.example', 'Content-Type': 'text/plain' }, status: 403, error: 'cross_site' },
    { headers: { Origin: 'https://evil.example', 'Content-Type': 'application/json' }, status: 403, error: 'cross_site' },
    { headers: { 'Content-Type': 'application/json' }, status: 403, error: 'cross_site' }, // no Origin
    { headers: { Origin: originOf(baseURL), 'Sec-Fetch-Site': 'cross-site', 'Content-Type': 'application/json' }, status: 403, error: 'cross_site' },
    { headers: { Origin: originOf(baseURL), 'Content-Type': 'text/plain' }, status: 415, error: 'unsupported_media_type' },
    { headers: { Origin: originOf(baseURL), 'Content-Type': 'application/x-www-form-urlencoded' }, status: 415, error: 'unsupported_media_type' },
  ];
  for (const a of attempts) {
    const res = await page.request.fetch(`/api/patients/${id}`, { method: 'PATCH', headers: a.headers, data: body });
    expect(res.status(), JSON.stringify(a.headers)).toBe(a.status);
    expect(((await res.json()) as { error: string }).error).toBe(a.error);
  }
  const del = await page.request.fetch(`/api/patients/${id}`, { method: 'DELETE', headers: { Origin: 'https://evil.example' } });
  expect(del.status()).toBe(403);
  expect(await phoneOf()).toBe(before);

  // The same change from Lamina's own page (the browser sends Origin and Sec-Fetch-Site itself) works.
  await page.goto(`/patients/${id}`);
  const status = await page.evaluate(
    async ([url, data]) => (await fetch(url!, { method: 'PATCH', headers: { 'Content-Type': 'application/json' }, body: data })).status,
    [`/api/patients/${id}`, JSON.stringify({ phone: before ?? '01632 960000' })],
  );
  expect(status).toBe(200);
});

test.describe('headers and error bodies (item 12)', () => {
  test('pages carry a nonce CSP that their scripts satisfy, and a Permissions-Policy', async ({ page }) => {
    const violations: string[] = [];
    page.on('console', (m) => {
      if (/Content Security Policy|Refused to/i.test(m.text())) violations.push(m.text());
    });
    await signInAs(page, 'clinician');
    const res = await page.goto('/cases');
    const csp = res!.headers()['content-security-policy'] ?? '';
    // One policy: the page's replaces the deny-all one the web server starts every response with.
    expect((await res!.headersArray()).filter((h) => h.name.toLowerCase() === 'content-security-policy')).toHaveLength(1);
    const scriptSrc = csp.split(';').map((d) => d.trim()).find((d) => d.startsWith('script-src')) ?? '';
    const nonce = /'nonce-([^']+)'/.exec(scriptSrc)?.[1];
    expect(nonce).toBeTruthy();
    expect(scriptSrc).not.toContain('unsafe-inline');
    expect(csp).toContain("frame-ancestors 'none'");
    expect(res!.headers()['permissions-policy']).toContain('camera=()');
    expect(res!.headers()['strict-transport-security']).toBeUndefined(); // http here; unit-tested for https
    // Every script Next wrote carries this response's nonce, and the page works (it hydrated).
    const scripts = await page.locator('script').evaluateAll((els) => els.map((e) => (e as HTMLScriptElement).nonce));
    expect(scripts.length).toBeGreaterThan(0);
    expect(scripts.every((n) => n === nonce)).toBe(true);
    await expect(page.getByRole('table')).toBeVisible();
    const again = await page.request.get('/cases');
    expect(again.headers()['content-security-policy']).not.toContain(`'nonce-${nonce}'`);
    expect(violations).toEqual([]);
  });

  test('API errors say a stable code, not a minified class name', async ({ page, baseURL, playwright }) => {
    await signInAs(page, 'coordinator');
    const missing = await page.request.get('/api/patients/00000000-0000-4000-8000-000000000000');
    expect(missing.status()).toBe(404);
    expect((await missing.json()).error).toBe('not_found');
    const invalid = await page.request.post('/api/patients', { data: { registryNumber: '' }, headers: { Origin: originOf(baseURL) } });
    expect(invalid.status()).toBe(422);
    expect((await invalid.json()).error).toBe('validation');
    const forbidden = await page.request.get('/api/team/members');
    expect((await forbidden.json()).error).toBe('forbidden');
    expect(forbidden.headers()['content-security-policy']).toContain("default-src 'none'");
    // A path no API route serves: the same JSON error and deny-all policy, for any method, signed in or not.
    for (const res of [
      await page.request.get('/api/no-such-route'),
      await page.request.delete('/api/cases/no/such/route', { headers: { Origin: originOf(baseURL) } }),
      await (await playwright.request.newContext({ baseURL })).put('/api/nothing-here', { headers: { Origin: originOf(baseURL) } }),
    ]) {
      expect(res.status()).toBe(404);
      expect((await res.json()).error).toBe('not_found');
      expect(res.headers()['content-security-policy']).toBe("default-src 'none'; frame-ancestors 'none'");
      expect((await res.headersArray()).filter((h) => h.name.toLowerCase() === 'content-security-policy')).toHaveLength(1);
    }
  });
});
