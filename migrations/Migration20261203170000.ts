import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 15, load (written by hand): the recall desk's counts and a queue's rows joined every queued
 * visit (~206,000 at 100,000 cases) to its case and patient only to learn whether both are live (not
 * archived) and who the case's clinician is: ~175 ms of PostgreSQL a count, ~60% of its time under
 * `npm run bench -- load`. Each visit now carries them — `case_live` (case and patient not archived),
 * `operator_id` (the case's clinician) and `patient_id` — kept by triggers, so every writer
 * (services, jobs, SQL) keeps them right:
 *   - before a visit is inserted or moved to another case: read from its case and patient (a visit
 *     whose case is not there yet, as in a restore that loads visits first, keeps the values it came with);
 *   - after a case's archived_at, operator_id or patient_id changes: its visits;
 *   - after a patient's archived_at changes: the visits of their cases.
 * The desk's index then covers the live queued visits alone, with the clinician, and the counts
 * read no other table: each queue is counted on its own range of that index (one statement). Two
 * small partial indexes serve the rest: the visits whose delivery failed, and the patients who agreed
 * to recall contact but not by e-mail (the "to call" queue, its only join).
 */
export class Migration20261203170000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`alter table "recall_visit" add column "case_live" boolean not null default true, add column "operator_id" uuid null, add column "patient_id" uuid null;`);
    this.addSql(`update "recall_visit" v set "case_live" = (c."archived_at" is null and p."archived_at" is null), "operator_id" = c."operator_id", "patient_id" = c."patient_id"
  from "treatment_case" c join "patient" p on p."id" = c."patient_id" where c."id" = v."case_id";`);

    this.addSql(`create or replace function lamina_visit_case_state() returns trigger language plpgsql as $$
declare
  live boolean; op uuid; pat uuid;
begin
  select c.archived_at is null and p.archived_at is null, c.operator_id, c.patient_id into live, op, pat
    from treatment_case c join patient p on p.id = c.patient_id where c.id = new.case_id;
  if found then
    new.case_live := live; new.operator_id := op; new.patient_id := pat;
  end if;
  return new;
end $$;`);
    this.addSql(`create trigger recall_visit_case_state before insert or update of "case_id" on "recall_visit" for each row execute function lamina_visit_case_state();`);

    this.addSql(`create or replace function lamina_case_visits_state() returns trigger language plpgsql as $$
begin
  update recall_visit v set case_live = (new.archived_at is null and p.archived_at is null), operator_id = new.operator_id, patient_id = new.patient_id
    from patient p
   where p.id = new.patient_id and v.case_id = new.id
     and (v.case_live is distinct from (new.archived_at is null and p.archived_at is null)
          or v.operator_id is distinct from new.operator_id or v.patient_id is distinct from new.patient_id);
  return null;
end $$;`);
    this.addSql(`create trigger treatment_case_visits_state after update of "archived_at", "operator_id", "patient_id" on "treatment_case" for each row
  when (old."archived_at" is distinct from new."archived_at" or old."operator_id" is distinct from new."operator_id" or old."patient_id" is distinct from new."patient_id")
  execute function lamina_case_visits_state();`);

    this.addSql(`create or replace function lamina_patient_visits_state() returns trigger language plpgsql as $$
begin
  update recall_visit v set case_live = (c.archived_at is null and new.archived_at is null)
    from treatment_case c
   where c.patient_id = new.id and v.case_id = c.id and v.case_live is distinct from (c.archived_at is null and new.archived_at is null);
  return null;
end $$;`);
    this.addSql(`create trigger patient_visits_state after update of "archived_at" on "patient" for each row
  when (old."archived_at" is distinct from new."archived_at") execute function lamina_patient_visits_state();`);

    // The desk's index: live visits in a queued status (lib/services/recall-desk.ts QUEUED_STATUSES), with the clinician.
    this.addSql(`drop index "recall_visit_desk_index";`);
    this.addSql(
      `create index "recall_visit_desk_index" on "recall_visit" ("practice_id", "status", "due_date") include ("id", "operator_id", "patient_id", "booked_date", "proposed_start", "window_end", "delivery_failed_at") where "status" in ('planned', 'invited', 'confirmed', 'missed', 'declined') and "case_live";`,
    );
    this.addSql(`create index "recall_visit_delivery_failed_index" on "recall_visit" ("practice_id", "operator_id") where "delivery_failed_at" is not null and "case_live";`);
    this.addSql(`create index "patient_phone_recall_index" on "patient" ("id") where "recall_contact" and not ("recall_channel" = 'email' and "email" is not null and "email" <> '');`);
  }

  override async down(): Promise<void> {
    this.addSql(`drop index "patient_phone_recall_index";`);
    this.addSql(`drop index "recall_visit_delivery_failed_index";`);
    this.addSql(`drop index "recall_visit_desk_index";`);
    this.addSql(
      `create index "recall_visit_desk_index" on "recall_visit" ("practice_id", "status", "due_date") include ("id", "case_id", "booked_date", "proposed_start", "window_end", "delivery_failed_at") where "status" in ('planned', 'invited', 'confirmed', 'missed', 'declined');`,
    );
    this.addSql(`drop trigger "patient_visits_state" on "patient";`);
    this.addSql(`drop function lamina_patient_visits_state();`);
    this.addSql(`drop trigger "treatment_case_visits_state" on "treatment_case";`);
    this.addSql(`drop function lamina_case_visits_state();`);
    this.addSql(`drop trigger "recall_visit_case_state" on "recall_visit";`);
    this.addSql(`drop function lamina_visit_case_state();`);
    this.addSql(`alter table "recall_visit" drop column "case_live", drop column "operator_id", drop column "patient_id";`);
  }
}
