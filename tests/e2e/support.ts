import { gzipSync } from 'node:zlib';
import { expect, type Page, type APIRequestContext, type BrowserContext } from '@playwright/test';
import { DEMO_LOCUM, DEMO_PASSWORD, demoUser, demoUserB } from '../../lib/demo/people';
import type { Role } from '../../lib/auth/roles';
import { mailboxHeaders } from '../../lib/mail/mailbox-secret';

export { DEMO_LOCUM, DEMO_PASSWORD, demoUser, demoUserB };

export async function signIn(page: Page, email: string, password = DEMO_PASSWORD) {
  await page.goto('/sign-in');
  await page.getByLabel('E-mail', { exact: true }).fill(email);
  await page.getByLabel('Password', { exact: true }).fill(password);
  await page.getByRole('button', { name: 'Sign in', exact: true }).click();
  await expect(page.getByTestId('whoami')).toBeVisible();
}

/**
 * The session cookies of each demo person this worker has signed in through the form (Playwright's
 * storageState pattern, kept per worker process). A session ends when a test signs that person
 * out, revokes a role or ends every session; `signInAs` then notices and signs in again.
 */
const sessions = new Map<string, Awaited<ReturnType<BrowserContext['cookies']>>>();

/**
 * Signs in as the demo person with that role, in the demo practice (A) or the second one (B), and
 * leaves the page on the home page with the person shown (as the form does). The first time in a
 * worker this goes through the sign-in form; afterwards the session it made is reused while the
 * server still accepts it. Tests about signing in, signing out or sessions use `signInWithForm`.
 */
export async function signInAs(page: Page, role: Role, practice: 'A' | 'B' = 'A') {
  const email = (practice === 'A' ? demoUser : demoUserB)(role).email;
  const saved = sessions.get(email);
  if (saved) {
    await page.context().addCookies(saved);
    await page.goto('/');
    // An ended session is sent to sign-in; a live one shows the person.
    if (!new URL(page.url()).pathname.startsWith('/sign-in')) {
      await expect(page.getByTestId('whoami')).toBeVisible();
      return;
    }
    sessions.delete(email);
  }
  await signIn(page, email);
  sessions.set(email, (await page.context().cookies()).filter((c) => c.name.includes('next-auth')));
}

/** Signs in as the demo person with that role through the form every time: a session of its own. */
export async function signInWithForm(page: Page, role: Role, practice: 'A' | 'B' = 'A') {
  await signIn(page, (practice === 'A' ? demoUser : demoUserB)(role).email);
}

/**
 * A page's First Load JS as scripts/first-load-js.mjs counts it: every <script src> of the served HTML,
 * nomodule polyfills left out, gzip sizes summed; in kB, one decimal.
 */
export async function firstLoadJsKb(page: Page, route: string): Promise<number> {
  const html = await (await page.request.get(route)).text();
  const srcs = [...new Set([...html.matchAll(/<script[^>]+src="([^"]+)"[^>]*>/g)].filter((m) => !/\bnomodule\b/i.test(m[0])).map((m) => m[1]!))];
  let total = 0;
  for (const src of srcs) total += gzipSync(await (await page.request.get(src)).body()).length;
  return Math.round((total / 1024) * 10) / 10;
}

const mailboxUrl = () => process.env.MAILBOX_URL ?? 'http://127.0.0.1:2526';

export interface Mail {
  id: string;
  to: string | string[];
  subject: string;
  text: string;
  html: string;
  headers?: Record<string, unknown>;
}

/**
 * Waits for the newest message to an address in the local mail fake. The send goes through the
 * worker (a queue, a claim, SMTP): on a loaded machine that takes far longer than on a quiet one,
 * so the deadline is a minute, polled every half second (callers' tests allow for it).
 */
export async function waitForMail(request: APIRequestContext, to: string, subject: RegExp, since = 0): Promise<Mail> {
  let found: Mail | undefined;
  await expect
    .poll(
      async () => {
        const res = await request.get(`${mailboxUrl()}/messages?to=${encodeURIComponent(to)}`, { headers: mailboxHeaders(process.env.MAILBOX_SECRET) });
        const body = (await res.json()) as Mail[] | { messages: Mail[] };
        const list = Array.isArray(body) ? body : body.messages;
        found = list.find((m) => subject.test(m.subject) && Date.parse((m as unknown as { receivedAt: string }).receivedAt) >= since);
        return Boolean(found);
      },
      { timeout: 60_000, intervals: [250, 500] },
    )
    .toBe(true);
  return found!;
}

export function firstLink(mail: Mail, pattern: RegExp): string {
  const m = mail.text.match(pattern);
  if (!m) throw new Error(`no link matching ${pattern} in: ${mail.text}`);
  return m[0];
}

/** The parts of a new patient a test names; the rest are a consenting e-mail patient's defaults. */
export interface TestPatient {
  registryNumber: string;
  givenName: string;
  familyName: string;
  dateOfBirth: string;
  sex: 'female' | 'male';
  email?: string;
  recallContact?: boolean;
  recallChannel?: 'email' | 'none';
  consentDate?: string;
}

/** The parts of a completed case a test names; the rest are a primary treatment's defaults. */
export interface TestCase {
  tooth: number;
  completionDate: string;
  startDate?: string;
  paiScore?: number;
  lesionDiameterMm?: number;
  referrerId?: string;
  /** The operator by e-mail; the practice's first clinician when left out. */
  operatorEmail?: string;
}

/**
 * Makes a patient of the test's own and a completed primary treatment of one tooth for them through
 * the API, as whoever `request` is signed in as, and returns both ids. Each write must answer 201.
 */
export async function newPatientWithCase(request: APIRequestContext, patient: TestPatient, kase: TestCase): Promise<{ patientId: string; caseId: string }> {
  const { consentDate = '2025-01-10', recallContact = true, recallChannel = patient.email ? 'email' : 'none', ...named } = patient;
  const made = await request.post('/api/patients', { data: { ...named, recallContact, recallChannel, researchUse: false, consentDate } });
  expect(made.status(), await made.text()).toBe(201);
  const patientId = ((await made.json()) as { patient: { id: string } }).patient.id;
  const clinicians = ((await (await request.get('/api/clinicians')).json()) as { clinicians: { id: string; email: string }[] }).clinicians;
  const operator = kase.operatorEmail ? clinicians.find((c) => c.email === kase.operatorEmail) : clinicians[0];
  expect(operator, `a clinician ${kase.operatorEmail ?? ''}`).toBeDefined();
  const { operatorEmail: _operatorEmail, startDate = kase.completionDate, paiScore = 4, lesionDiameterMm = 4, ...rest } = kase;
  const created = await request.post('/api/cases', {
    data: {
      ...rest,
      patientId,
      operatorId: operator!.id,
      kind: 'primary_treatment',
      startDate,
      pulpalDiagnosis: 'pulp_necrosis',
      apicalDiagnosis: 'asymptomatic_apical_periodontitis',
      paiScore,
      lesionDiameterMm,
      canals: [{ name: 'D', workingLengthMm: 21, apicalSize: 40, fillToApexMm: 1 }],
    },
  });
  expect(created.status(), await created.text()).toBe(201);
  return { patientId, caseId: ((await created.json()) as { case: { id: string } }).case.id };
}
