/**
 * Invented visits due for a reminder, written straight to PostgreSQL for the reminder benchmark
 * (scripts/bench/reminders.ts) and the scale test (scripts/scale-test.ts): one practice, one
 * clinician, and per reminder a patient (who agreed to recall contact by e-mail), a completed
 * case and a 12-month visit due within 20 days. Every address ends in `.<tag>@patients.bench.invalid`.
 */
import { randomUUID } from 'node:crypto';
import type { Knex } from '@mikro-orm/knex';
import { addDaysTo } from '../../lib/registry/calendar-date';

export interface SeededPractice {
  practiceId: string;
  userId: string;
  userEmail: string;
  caseIds: string[];
}

export async function seedDueVisits(
  knex: Knex,
  options: { n: number; today: string; tag: string; practiceName?: string; passwordHash?: string },
): Promise<SeededPractice> {
  const { n, today, tag } = options;
  const now = new Date();
  const practiceId = randomUUID();
  const userId = randomUUID();
  const userEmail = `clinician.${tag}@bench.invalid`;
  await knex('practice').insert({ id: practiceId, name: options.practiceName ?? 'Harbour Endodontics (bench)', slug: `bench-${tag}`, created_at: now });
  await knex('app_user').insert({ id: userId, email: userEmail, name: 'Bench Clinician', created_at: now, ...(options.passwordHash ? { password_hash: options.passwordHash } : {}) });
  await knex('membership').insert({ id: randomUUID(), user_id: userId, practice_id: practiceId, role: 'clinician', granted_at: now });
  const caseIds: string[] = [];
  for (let start = 0; start < n; start += 1000) {
    const patients: object[] = [];
    const cases: object[] = [];
    const visits: object[] = [];
    for (let i = start; i < Math.min(n, start + 1000); i++) {
      const patientId = randomUUID();
      const caseId = randomUUID();
      caseIds.push(caseId);
      const due = addDaysTo(today, 1 + (i % 20));
      patients.push({
        id: patientId, practice_id: practiceId, registry_number: `B-${String(i).padStart(6, '0')}`, given_name: `Rowan${i}`, family_name: `Mere${i}`,
        date_of_birth: '1968-05-17', sex: 'male', email: `rowan${i}.${tag}@patients.bench.invalid`, recall_contact: true, recall_channel: 'email',
        research_use: false, consent_date: '2024-02-01', created_at: now, updated_at: now,
      });
      cases.push({
        id: caseId, practice_id: practiceId, patient_id: patientId, tooth: 46, tooth_group: 'molar', tooth_arch: 'lower', kind: 'primary_treatment',
        operator_id: userId, start_date: '2025-01-06', completion_date: '2025-01-20', pulpal_diagnosis: 'pulp_necrosis',
        apical_diagnosis: 'asymptomatic_apical_periodontitis', pai_score: 3, lesion_diameter_mm: 2, source: 'demo', created_at: now, updated_at: now,
      });
      visits.push({
        id: randomUUID(), practice_id: practiceId, case_id: caseId, milestone: 12, due_date: due, window_start: addDaysTo(due, -60),
        window_end: addDaysTo(due, 120), status: 'planned', status_changed_at: now, created_at: now, updated_at: now,
      });
    }
    await knex('patient').insert(patients);
    await knex('treatment_case').insert(cases);
    await knex('recall_visit').insert(visits);
  }
  return { practiceId, userId, userEmail, caseIds };
}
