/**
 * Shared set-up for the recall-desk integration tests (recall-*.test.ts): invented patients,
 * cases and visits inserted in bulk, the SMTP fake's mailbox, and the worker as a child process.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import path from 'node:path';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Knex } from '@mikro-orm/knex';
import { addDaysTo } from '@/lib/registry/calendar-date';
import type { VisitStatus } from '@/lib/recall/status';
import { mailboxHeaders } from '@/lib/mail/mailbox-secret';

export const repo = path.resolve(import.meta.dirname, '../..');
export const mailboxUrl = () => process.env.MAILBOX_URL!;

export interface VisitSpec {
  /** Days from today to the due date (negative: in the past). */
  dueIn: number;
  status?: VisitStatus;
  milestone?: number;
  recallContact?: boolean;
  channel?: 'email' | 'phone' | 'post' | 'none';
  email?: string | null;
  patientArchived?: boolean;
  givenName?: string;
  familyName?: string;
  windowBefore?: number;
  windowAfter?: number;
  /** Another visit of the same case (index into the specs), for cases with several milestones. */
  sameCaseAs?: number;
}

export interface SeededVisit {
  visitId: string;
  caseId: string;
  patientId: string;
  email: string | null;
  dueDate: string;
}

const knexOf = (em: EntityManager) => em.getKnex() as Knex;

/** Inserts one patient and case per spec (unless sameCaseAs) and its visit; returns them in order. */
export async function seedVisits(em: EntityManager, practiceId: string, operatorId: string, today: string, specs: VisitSpec[], tag = 'v'): Promise<SeededVisit[]> {
  const knex = knexOf(em);
  const now = new Date();
  const out: SeededVisit[] = [];
  const patients: Record<string, unknown>[] = [];
  const cases: Record<string, unknown>[] = [];
  const visits: Record<string, unknown>[] = [];
  specs.forEach((s, i) => {
    const dueDate = addDaysTo(today, s.dueIn);
    let patientId: string;
    let caseId: string;
    let email: string | null;
    if (s.sameCaseAs !== undefined) {
      ({ patientId, caseId, email } = out[s.sameCaseAs]!);
    } else {
      patientId = randomUUID();
      caseId = randomUUID();
      email = s.email === undefined ? `${tag}${i}.${patientId.slice(0, 8)}@patients.test.invalid` : s.email;
      patients.push({
        id: patientId,
        practice_id: practiceId,
        registry_number: `${tag.toUpperCase()}-${String(i).padStart(5, '0')}-${patientId.slice(0, 4)}`,
        given_name: s.givenName ?? `Wren${i}`,
        family_name: s.familyName ?? `Ashdown${i}`,
        date_of_birth: '1971-04-12',
        sex: 'female',
        email,
        recall_contact: s.recallContact ?? true,
        recall_channel: s.channel ?? 'email',
        research_use: false,
        consent_date: '2024-01-10',
        archived_at: s.patientArchived ? now : null,
        created_at: now,
        updated_at: now,
      });
      cases.push({
        id: caseId,
        practice_id: practiceId,
        patient_id: patientId,
        tooth: 36,
        tooth_group: 'molar',
        tooth_arch: 'lower',
        kind: 'primary_treatment',
        operator_id: operatorId,
        start_date: '2024-01-10',
        completion_date: '2024-01-24',
        pulpal_diagnosis: 'pulp_necrosis',
        apical_diagnosis: 'asymptomatic_apical_periodontitis',
        pai_score: 4,
        lesion_diameter_mm: 3.5,
        source: 'form',
        created_at: now,
        updated_at: now,
      });
    }
    const visitId = randomUUID();
    visits.push({
      id: visitId,
      practice_id: practiceId,
      case_id: caseId,
      milestone: s.milestone ?? 12,
      due_date: dueDate,
      window_start: addDaysTo(dueDate, -(s.windowBefore ?? 60)),
      window_end: addDaysTo(dueDate, s.windowAfter ?? 120),
      status: s.status ?? 'planned',
      status_changed_at: now,
      created_at: now,
      updated_at: now,
    });
    out.push({ visitId, caseId, patientId, email, dueDate });
  });
  for (let i = 0; i < patients.length; i += 1000) await knex('patient').insert(patients.slice(i, i + 1000));
  for (let i = 0; i < cases.length; i += 1000) await knex('treatment_case').insert(cases.slice(i, i + 1000));
  for (let i = 0; i < visits.length; i += 1000) await knex('recall_visit').insert(visits.slice(i, i + 1000));
  return out;
}

// --- the SMTP fake --------------------------------------------------------------------------------

export interface FakeMessage {
  id: string;
  messageId: string | null;
  to: string[];
  envelope: { rcptTo: string[] };
  subject: string;
  text: string;
  html: string | null;
  headers: Record<string, string | string[]>;
  listUnsubscribe: string | null;
  listUnsubscribePost: string | null;
  attachments: { filename: string | null; contentType: string; content: string }[];
}

export async function clearMailbox(): Promise<void> {
  await fetch(new URL('/messages', mailboxUrl()), { method: 'DELETE', headers: mailboxHeaders(process.env.MAILBOX_SECRET) });
}

export async function mailbox(to?: string): Promise<FakeMessage[]> {
  const url = new URL('/messages', mailboxUrl());
  if (to) url.searchParams.set('to', to);
  url.searchParams.set('limit', '10000');
  return (await (await fetch(url, { headers: mailboxHeaders(process.env.MAILBOX_SECRET) })).json()) as FakeMessage[];
}

export async function refuseSmtp(n: number): Promise<void> {
  const res = await fetch(new URL('/control', mailboxUrl()), { method: 'POST', headers: { 'Content-Type': 'application/json', ...mailboxHeaders(process.env.MAILBOX_SECRET) }, body: JSON.stringify({ refuse: n }) });
  if (!res.ok) throw new Error(`mail fake control answered ${res.status}`);
}

/** The next n SMTP transactions get the message and no answer (scripts/mail-fake.ts {"hang": n}). */
export async function hangSmtp(n: number): Promise<void> {
  const res = await fetch(new URL('/control', mailboxUrl()), { method: 'POST', headers: { 'Content-Type': 'application/json', ...mailboxHeaders(process.env.MAILBOX_SECRET) }, body: JSON.stringify({ hang: n }) });
  if (!res.ok) throw new Error(`mail fake control answered ${res.status}`);
}

/** How many transactions the mail fake still leaves unanswered. */
export async function smtpHanging(): Promise<number> {
  const health = (await (await fetch(new URL('/health', mailboxUrl()))).json()) as { hanging: number };
  return health.hanging;
}

export async function mailboxCount(): Promise<number> {
  const health = (await (await fetch(new URL('/health', mailboxUrl()))).json()) as { messages: number };
  return health.messages;
}

export const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

export async function waitFor<T>(what: string, fn: () => Promise<T | false | null | undefined>, timeoutMs = 30_000, everyMs = 200): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  let last: unknown;
  while (Date.now() < deadline) {
    try {
      const v = await fn();
      if (v) return v;
    } catch (e) {
      last = e;
    }
    await sleep(everyMs);
  }
  throw new Error(`timed out waiting for ${what}${last ? `: ${(last as Error).message}` : ''}`);
}

// --- the worker as a child process ----------------------------------------------------------------

export interface WorkerChild {
  proc: ChildProcess;
  output: () => string;
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

/**
 * Starts the real worker (`node --import tsx jobs/worker.ts` with the scripts tsconfig, as
 * scripts/test.sh and the supervisor do): one process, so its pid is the worker's own.
 */
export function spawnWorker(env: Record<string, string>): WorkerChild {
  const proc = spawn(process.execPath, ['--import', 'tsx', 'jobs/worker.ts'], {
    cwd: repo,
    env: { ...process.env, NODE_ENV: 'production', TSX_TSCONFIG_PATH: 'scripts/tsconfig.json', ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let out = '';
  proc.stdout!.on('data', (d: Buffer) => (out += d.toString()));
  proc.stderr!.on('data', (d: Buffer) => (out += d.toString()));
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) => proc.on('exit', (code, signal) => resolve({ code, signal })));
  return { proc, output: () => out, exited };
}

/** Rows of the outbox by status. */
export async function outboxCounts(em: EntityManager): Promise<Record<string, number>> {
  const rows = (await knexOf(em)('reminder').groupBy('status').select('status').count('* as n')) as { status: string; n: string }[];
  return Object.fromEntries(rows.map((r) => [r.status, Number(r.n)]));
}
