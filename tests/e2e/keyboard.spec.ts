import { readFileSync } from 'node:fs';
import path from 'node:path';
import { test, expect, type Browser, type Locator, type Page } from '@playwright/test';
import { demoUser, newPatientWithCase, signInAs } from './support';

// Issue 15: a keyboard-only walk of the recall desk, the review form and the reading queue. After
// sign-in nothing is clicked or filled: only page.keyboard (Tab, Shift+Tab, Enter, Space, typing,
// Escape and the product's own shortcuts). Every stop of every walk must show where the focus is
// (an outline or a ring that the element does not have unfocused: computed style), focus must
// never be lost after an action, and each page is walked from its first stop to its last and back,
// so a stop that holds the focus (a keyboard trap) fails the walk. Reads through page.request only
// find the data to act on and confirm what was saved.

interface Stop {
  /** One number per element for the page's life (a WeakMap in the page), to compare walks. */
  id: number;
  label: string;
  visible: boolean;
  why: string;
}

type KbWindow = Window & {
  __kb: {
    measure: (el: Element) => Stop;
    log: (Stop | 'left')[];
    /** Once latched, Tab and Shift+Tab move nothing until the test reads the log. */
    latched: boolean;
    stopAt: Element | 'left' | null;
  };
};

/**
 * Runs in every document of the page (addInitScript): a log of the focus stops, each measured the
 * moment it gets the focus, and a latch that stops Tab at the walk's end (focus leaving the page,
 * or the element wanted), so a walk presses keys in batches and reads the log once per batch.
 */
function installFocusLog() {
  const ids = new WeakMap<Element, number>();
  let next = 0;
  const opaque = (colour: string) => !/^transparent$|rgba\([^)]*,\s*0\)$/.test(colour.trim());
  const measure = (el: Element): Stop => {
    const h = el as HTMLElement;
    let id = ids.get(el);
    if (id === undefined) ids.set(el, (id = ++next));
    const named = h.getAttribute('aria-label') ?? (h as HTMLInputElement).labels?.[0]?.textContent ?? h.textContent ?? '';
    const label = `${h.tagName.toLowerCase()}${h.getAttribute('type') ? `[${h.getAttribute('type')}]` : ''} “${named.replace(/\s+/g, ' ').trim().slice(0, 60)}”`;
    // The same element unfocused: a shallow clone beside it, measured and removed at once (no paint
    // happens in between). The focus indicator is what differs, so a permanent ring (a pressed
    // button) does not count as one.
    const rest = h.cloneNode(false) as HTMLElement;
    rest.removeAttribute('id');
    h.after(rest);
    const a = getComputedStyle(h);
    const b = getComputedStyle(rest);
    const focusOutline = `${a.outlineStyle} ${a.outlineWidth} ${a.outlineColor}`;
    const restOutline = `${b.outlineStyle} ${b.outlineWidth}`;
    const restShadow = b.boxShadow;
    rest.remove();
    const outline = a.outlineStyle !== 'none' && parseFloat(a.outlineWidth) >= 2 && opaque(a.outlineColor) && `${a.outlineStyle} ${a.outlineWidth}` !== restOutline;
    // box-shadow's computed form: "<colour> x y blur spread", comma-separated; a ring has a spread.
    const shadows = a.boxShadow === 'none' ? [] : a.boxShadow.split(/,(?![^(]*\))/);
    const ring =
      a.boxShadow !== restShadow &&
      shadows.some((sh) => {
        const colour = sh.match(/rgba?\([^)]*\)/)?.[0] ?? '';
        const px = [...sh.replace(colour, '').matchAll(/(-?[\d.]+)px/g)].map((m) => Number(m[1]));
        return opaque(colour) && (px[3] ?? 0) >= 1;
      });
    const box = h.getBoundingClientRect();
    const shown = box.width >= 4 && box.height >= 4 && h.checkVisibility({ opacityProperty: true, visibilityProperty: true });
    const why = !shown
      ? `not shown (${Math.round(box.width)}×${Math.round(box.height)} px)`
      : outline || ring
        ? ''
        : `no focus indicator (outline ${focusOutline}, unfocused ${restOutline}; box-shadow ${a.boxShadow})`;
    return { id, label, visible: shown && (outline || ring), why };
  };
  const kb: KbWindow['__kb'] = { measure, log: [], latched: false, stopAt: null };
  (window as unknown as KbWindow).__kb = kb;
  let entered = false;
  document.addEventListener(
    'focusin',
    (e) => {
      if (!(e.target instanceof Element)) return;
      entered = true;
      kb.log.push(measure(e.target));
      if (kb.stopAt === e.target) kb.latched = true;
    },
    true,
  );
  // A Tab that moves the focus inside one element (a date field's day, month, year and calendar
  // button) fires no focusin: such a stop is measured when the key comes up.
  window.addEventListener(
    'keydown',
    (e) => {
      if (e.key !== 'Tab') return;
      if (kb.latched) e.preventDefault();
      entered = false;
    },
    true,
  );
  window.addEventListener(
    'keyup',
    (e) => {
      const el = document.activeElement;
      if (e.key !== 'Tab' || entered || kb.latched || !el || el === document.body) return;
      kb.log.push(measure(el));
    },
    true,
  );
  document.addEventListener(
    'focusout',
    (e) => {
      if (e.relatedTarget) return;
      queueMicrotask(() => {
        if (document.activeElement && document.activeElement !== document.body) return;
        // A walk ends when the focus leaves the page after at least one stop: a walk that starts on
        // the first (or last) stop leaves at once and goes on from the other end.
        if (kb.stopAt === 'left' && kb.log.some((x) => x !== 'left')) kb.latched = true;
        kb.log.push('left');
      });
    },
    true,
  );
}

/** The focused element and whether its focus indicator shows; null when focus is on the page itself. */
async function focused(page: Page): Promise<Stop | null> {
  return page.evaluate(() => {
    const el = document.activeElement;
    return el && el !== document.body && el !== document.documentElement ? (window as unknown as KbWindow).__kb.measure(el) : null;
  });
}

/** The focus is on an element (not lost to the page) and can be seen there. */
async function expectVisibleFocus(page: Page, after: string): Promise<Stop> {
  const stop = await focused(page);
  expect(stop, `focus was lost (on the page itself) after ${after}`).not.toBeNull();
  expect(stop!.visible, `focus after ${after} is on ${stop!.label}: ${stop!.why}`).toBe(true);
  return stop!;
}

/**
 * Presses `key` in batches until the latch holds (`stopAt` reached), at most `max` times; returns
 * the stops on the way (up to and including `stopAt` when it is an element) with the ends of the
 * page marked 'left'.
 */
async function pressUntil(page: Page, key: 'Tab' | 'Shift+Tab', stopAt: Locator | 'left', max: number): Promise<(Stop | 'left')[]> {
  if (stopAt === 'left') await page.evaluate(() => Object.assign((window as unknown as KbWindow).__kb, { log: [], latched: false, stopAt: 'left' }));
  else await stopAt.evaluate((el) => Object.assign((window as unknown as KbWindow).__kb, { log: [], latched: false, stopAt: el }));
  for (let pressed = 0; pressed < max; ) {
    for (let i = 0; i < 8; i++, pressed++) await page.keyboard.press(key);
    const { log, latched } = await page.evaluate(() => {
      const kb = (window as unknown as KbWindow).__kb;
      return { log: kb.log, latched: kb.latched };
    });
    if (latched) {
      await page.evaluate(() => Object.assign((window as unknown as KbWindow).__kb, { latched: false, stopAt: null }));
      return log;
    }
  }
  throw new Error(`${key} ${max} times never reached ${stopAt === 'left' ? 'the end of the page: a keyboard trap?' : stopAt}`);
}

function expectAllVisible(stops: (Stop | 'left')[]) {
  const hidden = stops.filter((s): s is Stop => s !== 'left' && !s.visible);
  expect(hidden.map((s) => `${s.label}: ${s.why}`), 'every stop shows where the focus is').toEqual([]);
}

/**
 * Tab (or Shift+Tab) until the focus leaves the page; every stop shows its focus. A trap never
 * leaves. (Chromium puts the focus back in the page at its other end on the key after it left, so
 * a walk may start at an end: it then leaves at once and walks the whole page.)
 */
async function walk(page: Page, key: 'Tab' | 'Shift+Tab', max = 400): Promise<Stop[]> {
  const log = await pressUntil(page, key, 'left', max);
  const from = log[0] === 'left' ? 1 : 0;
  const stops = log.slice(from, log.indexOf('left', from)) as Stop[];
  expectAllVisible(stops);
  return stops;
}

/**
 * Moves the focus with Tab (or Shift+Tab) to `target`, every stop on the way showing its focus;
 * passing the end of the page wraps round to its other end (at most once).
 */
async function tabTo(page: Page, target: Locator, key: 'Tab' | 'Shift+Tab' = 'Tab', max = 300): Promise<void> {
  await expect(target).toBeVisible();
  const log = await pressUntil(page, key, target, max);
  expect(log.filter((s) => s === 'left').length, `${key} went round the whole page without reaching ${target}`).toBeLessThanOrEqual(1);
  expectAllVisible(log);
  await expect(target).toBeFocused();
}

/**
 * The whole page by keyboard: from the focus to the start (Shift+Tab), the start to the end (Tab)
 * and back (Shift+Tab). Every stop shows its focus, focus leaves the page at both ends (no trap),
 * and the way back is the way there reversed. Returns the stops from the top.
 */
async function walkWholePage(page: Page, atLeast: number): Promise<Stop[]> {
  await walk(page, 'Shift+Tab');
  const there = await walk(page, 'Tab');
  const back = await walk(page, 'Shift+Tab');
  expect(there.length, 'stops on the page').toBeGreaterThanOrEqual(atLeast);
  expect(back.map((s) => s.id).reverse(), 'Shift+Tab goes back the way Tab came').toEqual(there.map((s) => s.id));
  return there;
}

const stamp = () => Date.now().toString(36);
const isoDaysAgo = (days: number) => new Date(Date.now() - days * 86_400_000).toISOString().slice(0, 10);

/** A patient who agreed to no recall contact (the desk leaves them alone) and a completed case of theirs. */
async function makeCase(page: Page, registryNumber: string, completionDate: string): Promise<string> {
  const { caseId } = await newPatientWithCase(
    page.request,
    { registryNumber, givenName: 'Keya', familyName: 'Tabbering', dateOfBirth: '1971-04-19', sex: 'female', recallContact: false },
    {
      tooth: 36,
      startDate: new Date(Date.parse(completionDate) - 14 * 86_400_000).toISOString().slice(0, 10),
      completionDate,
      paiScore: 3,
      lesionDiameterMm: 2,
      operatorEmail: demoUser('clinician').email,
    },
  );
  return caseId;
}

/** From wherever the focus is, to a link of the main navigation, and follow it. */
async function goByNav(page: Page, name: string) {
  await tabTo(page, page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name, exact: true }));
  await page.keyboard.press('Enter');
}

interface DeskRow {
  visitId: string;
  patient: { name: string; canEmail: boolean };
  tooth: string;
  milestone: number;
  reminders: { step: string; status: string }[];
  nextStep: string | null;
}

test('the recall desk by keyboard: invite a due visit, note a call in its contact log', async ({ page }) => {
  test.setTimeout(300_000); // whole-page walks of a 25-row desk (~150 stops each way): minutes on a loaded machine
  await page.addInitScript(installFocusLog);
  await signInAs(page, 'coordinator');

  await goByNav(page, 'Recall desk');
  await expect(page.getByRole('heading', { name: 'Recall desk', level: 1 })).toBeVisible();
  const table = page.getByRole('table', { name: 'Visits in this queue' });
  await expect(table.getByRole('row').nth(1)).toBeVisible({ timeout: 30_000 }); // the rows load after the page, slowly under load
  const stops = await walkWholePage(page, 40);
  expect(stops[0]!.label, 'the first stop skips to the content').toContain('Skip to content');

  // A due visit with no message yet, of a patient who may be e-mailed, on the first page.
  const due = (await (await page.request.get('/api/recall/visits?queue=due_soon&page=1&pageSize=25')).json()) as { rows: DeskRow[] };
  const row = due.rows.find((r) => r.patient.canEmail && r.reminders.length === 0 && r.nextStep);
  expect(row, 'the demo desk has a due visit with no message yet').toBeTruthy();
  const select = page.getByRole('checkbox', { name: `Select ${row!.patient.name}, tooth ${row!.tooth}, ${row!.milestone} months` });
  await tabTo(page, select);
  await page.keyboard.press('Space');
  await expect(select).toBeChecked();
  await expect(page.getByText('1 selected')).toBeVisible();
  await tabTo(page, page.getByRole('button', { name: 'Send invitations now' }), 'Shift+Tab');
  await page.keyboard.press('Enter');
  await expect(page.getByRole('status').filter({ hasText: /queued|sent|invitation/i }).first()).toBeVisible();
  await expectVisibleFocus(page, 'sending the invitation');
  // Saved: the visit's invitation is in the outbox.
  await expect
    .poll(async () => {
      const log = (await (await page.request.get(`/api/recall/visits/${row!.visitId}/contact-log`)).json()) as { entries: { reminder?: unknown; kind: string }[] };
      return JSON.stringify(log.entries);
    })
    .toMatch(/invitation/i);

  // The call list: a patient who cannot be e-mailed; note the call in the visit's contact log.
  await tabTo(page, page.getByRole('navigation', { name: 'Work queues' }).getByRole('button', { name: /To call$/ }), 'Shift+Tab');
  await page.keyboard.press('Enter');
  await expect(page.getByText(/agreed to recall contact but cannot be e-mailed|cannot be e-mailed/i).first()).toBeVisible();
  // the previous queue's rows stay (aria-busy) until the call list's arrive: the target must be one of the new rows
  await expect(table).not.toHaveAttribute('aria-busy', 'true', { timeout: 30_000 });
  const opener = table.getByRole('button', { name: 'Contact log' }).first();
  await expect(opener).toBeVisible();
  await tabTo(page, opener);
  await page.keyboard.press('Enter');
  const log = page.getByRole('complementary', { name: 'Contact log' });
  await expect(log).toBeVisible();
  await expect(log.getByRole('heading', { name: 'Contact log' })).toBeFocused();
  await expectVisibleFocus(page, 'opening the contact log');
  await tabTo(page, log.getByLabel('What was said'));
  const note = `Rang at ${stamp()}, agreed to ring back.`;
  await page.keyboard.type(note);
  await page.keyboard.press('Tab');
  await expect(log.getByRole('checkbox', { name: 'I spoke to the patient' })).toBeFocused();
  await page.keyboard.press('Space');
  await page.keyboard.press('Tab');
  await expect(log.getByRole('button', { name: 'Add to the log' })).toBeFocused();
  await page.keyboard.press('Enter');
  await expect(log.getByText(note)).toBeVisible();
  await expect(log.getByText('Call — spoke to the patient').first()).toBeVisible();
  await expectVisibleFocus(page, 'adding the call to the log');
  // The drawer holds nobody: Tab goes on past it and off the page; Escape closes it and the
  // focus goes back to the button that opened it.
  await walk(page, 'Tab');
  await page.keyboard.press('Escape');
  await expect(log).toBeHidden();
  await expect(opener).toBeFocused();
  await expectVisibleFocus(page, 'closing the contact log');
});

test.describe('as a clinician', () => {
  test.describe.configure({ mode: 'serial' });
  let page: Page;
  test.beforeAll(async ({ browser }: { browser: Browser }) => {
    test.setTimeout(90_000);
    page = await browser.newPage();
    await page.addInitScript(installFocusLog);
    await signInAs(page, 'clinician');
  });
  test.afterAll(async () => {
    await page.context().close();
  });

  test('the review form by keyboard: a visit’s review with PAI, signs and findings', async () => {
    test.setTimeout(240_000); // a walk presses a key and measures a stop ~150 times: minutes on a loaded machine
    // Completed 12 months less 20 days ago: the 12-month visit's window is open.
    const registryNumber = `KB-${stamp()}`;
    const caseId = await makeCase(page, registryNumber, isoDaysAgo(345));

    // The case list's search, by keyboard, to the case.
    await goByNav(page, 'Cases');
    await expect(page.getByRole('heading', { name: 'Cases', level: 1 })).toBeVisible();
    await tabTo(page, page.getByLabel('Patient name or registry number'));
    await page.keyboard.type(registryNumber);
    await page.keyboard.press('Enter');
    const caseLink = page.locator(`table a[href="/cases/${caseId}"]`).first();
    await expect(caseLink).toBeVisible();
    await tabTo(page, caseLink);
    await page.keyboard.press('Enter');
    await expect(page).toHaveURL(new RegExp(`/cases/${caseId}$`));
    const visit = page.getByTestId('visit-12');
    await expect(visit).toBeVisible();
    await walkWholePage(page, 15);

    // The 12-month visit's "Record the review": the form opens with the focus in it.
    await tabTo(page, visit.getByRole('link', { name: 'Record the review' }));
    await page.keyboard.press('Enter');
    const form = page.getByRole('form', { name: 'Record a review' });
    await expect(form).toBeVisible();
    await expect(form.getByLabel('At visit')).toHaveValue(/.+/);
    await expect.poll(() => form.evaluate((f) => f.contains(document.activeElement)), { message: 'the opened form has the focus' }).toBe(true);
    await expectVisibleFocus(page, 'opening the review form');

    await tabTo(page, form.getByLabel('Periapical index (PAI) now'));
    await page.keyboard.type('2'); // a closed select takes the option that starts with what is typed
    await expect(form.getByLabel('Periapical index (PAI) now')).toHaveValue('2');
    await page.keyboard.press('Tab');
    await expect(form.getByLabel('Largest lesion diameter now (mm)')).toBeFocused();
    await page.keyboard.type('0.5');
    // The reference drawings are buttons too: PAI 2 is pressed now.
    await tabTo(page, form.getByRole('button', { name: 'PAI 2' }));
    await expect(form.getByRole('button', { name: 'PAI 2' })).toHaveAttribute('aria-pressed', 'true');
    await expectVisibleFocus(page, 'reaching a pressed reference drawing');
    await tabTo(page, form.getByRole('checkbox', { name: 'Tender to percussion' }));
    await page.keyboard.press('Space');
    await expect(form.getByRole('checkbox', { name: 'Tender to percussion' })).toBeChecked();
    await tabTo(page, form.getByLabel('Other findings'));
    const findings = `Keyboard review ${registryNumber}`;
    await page.keyboard.type(findings);
    await tabTo(page, form.getByRole('button', { name: /^Save review/ }));
    await page.keyboard.press('Enter');

    // Saved: the review is in the table with what was typed; the focus stays on the page, on the
    // button that records the next review, and the page still walks end to end.
    await expect(form).toBeHidden();
    const saved = page.getByRole('table', { name: 'Reviews' }).getByRole('row').filter({ hasText: findings });
    await expect(saved).toContainText('Disease');
    await expect(saved).toContainText('tender to percussion');
    await expect(saved).toContainText('12 months');
    await expect(page.getByRole('button', { name: 'Record a review' })).toBeFocused();
    await expectVisibleFocus(page, 'saving the review');
    await expect(page.getByRole('status').filter({ hasText: 'Review saved' })).toBeVisible();
    await walk(page, 'Tab');
  });

  test('the reading queue by keyboard: the next film, a score and signs by keys, saved, the queue moves on', async () => {
    test.setTimeout(240_000); // a walk presses a key and measures a stop ~150 times: minutes on a loaded machine
    const caseId = await makeCase(page, `KB-R-${stamp()}`, '2025-01-24');
    const fixture = readFileSync(path.resolve(import.meta.dirname, '../support/films/radiograph.png'));
    const upload = await page.request.post(`/api/cases/${caseId}/films`, { multipart: { role: 'follow_up', file: { name: 'recall.png', mimeType: 'image/png', buffer: fixture } } });
    expect(upload.status(), await upload.text()).toBe(201);
    const filmId = (await upload.json()).film.id as string;

    await goByNav(page, 'Reading');
    await expect(page.getByRole('heading', { name: 'Reading queue', level: 1 })).toBeVisible();
    const title = page.locator('#reading-title');
    await expect(title).toContainText(/\d+ of \d+/);
    await walkWholePage(page, 10);

    // "n" until the film is ours (at most once round the queue).
    const total = Number((await title.textContent())!.match(/of (\d+)/)![1]);
    expect(total).toBeGreaterThanOrEqual(1);
    const ours = page.locator(`figure[data-film="${filmId}"]`);
    for (let i = 0; i <= total && !(await ours.isVisible()); i++) {
      const before = await title.textContent();
      await page.keyboard.press('n');
      if (total > 1) await expect(title).not.toHaveText(before!);
    }
    await expect(ours).toBeVisible();
    await expect(page.getByRole('heading', { name: /First reading/ })).toBeVisible();

    // Score by key, a sign by its letter, another by Tab and Space; then save by key from there.
    await page.keyboard.press('3');
    await expect(page.getByRole('button', { name: '3', exact: true })).toHaveAttribute('aria-pressed', 'true');
    await page.keyboard.press('b');
    await expect(page.getByRole('checkbox', { name: /Pain on biting/ })).toBeChecked();
    const swelling = page.getByRole('checkbox', { name: /Swelling/ });
    await tabTo(page, swelling);
    await page.keyboard.press('Space');
    await expect(swelling).toBeChecked();
    const sent = page.waitForRequest((r) => r.method() === 'POST' && r.url().endsWith(`/api/reading/films/${filmId}/readings`));
    await page.keyboard.press('s');
    // What went to the server: the score and the two signs, nothing else.
    const request = await sent;
    expect(request.postDataJSON()).toEqual({ kind: 'first', pai: 3, signs: { painOnBiting: true, swelling: true } });
    expect((await request.response())?.status()).toBe(200);
    await expect(page.getByText(/Reading saved: PAI 3\./)).toBeVisible();

    // The queue moved on: our film is gone, one fewer to read, and the focus is on the next task.
    await expect(ours).toHaveCount(0);
    if (total > 1) {
      await expect(title).toContainText(`of ${total - 1}`);
      await expect(title).toBeFocused();
      await expectVisibleFocus(page, 'saving the reading');
    } else {
      await expect(page.getByText('No film is waiting for you')).toBeVisible();
    }
    await walk(page, 'Tab');
  });
});
