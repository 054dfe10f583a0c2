import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 10, reminders and the desk (written by hand):
 * - the practice's address, phone and e-mail for patient messages and calendar files;
 * - reminder rounds: a time proposed by e-mail is its own step ('proposal') and starts a new round
 *   of the reminder steps, so the outbox row is unique per visit, round and step;
 * - an index for the desk's call queue and "this month" view (visits by practice and due date,
 *   with the case for the clinician filter).
 */
export class Migration20261202130000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`alter table "practice" add column "address" varchar(300) null, add column "phone" varchar(40) null, add column "contact_email" varchar(254) null;`);

    this.addSql(`alter table "recall_visit" add column "reminder_round" smallint not null default 0;`);
    this.addSql(`alter table "reminder" add column "round" smallint not null default 0;`);
    this.addSql(`alter table "reminder" drop constraint "reminder_visit_step_unique";`);
    this.addSql(`alter table "reminder" add constraint "reminder_visit_round_step_unique" unique ("visit_id", "round", "step");`);
    this.addSql(`alter table "reminder" drop constraint if exists "reminder_step_check";`);
    this.addSql(`alter table "reminder" add constraint "reminder_step_check" check ("step" in ('invitation', 'second_invitation', 'last_notice', 'proposal'));`);
    this.addSql(`alter table "contact_log_entry" drop constraint if exists "contact_log_entry_step_check";`);
    this.addSql(`alter table "contact_log_entry" add constraint "contact_log_entry_step_check" check ("step" in ('invitation', 'second_invitation', 'last_notice', 'proposal'));`);
  }

  override async down(): Promise<void> {
    this.addSql(`delete from "contact_log_entry" where "step" = 'proposal';`);
    this.addSql(`delete from "reminder" where "step" = 'proposal' or "round" > 0;`);
    this.addSql(`alter table "contact_log_entry" drop constraint if exists "contact_log_entry_step_check";`);
    this.addSql(`alter table "contact_log_entry" add constraint "contact_log_entry_step_check" check ("step" in ('invitation', 'second_invitation', 'last_notice'));`);
    this.addSql(`alter table "reminder" drop constraint if exists "reminder_step_check";`);
    this.addSql(`alter table "reminder" add constraint "reminder_step_check" check ("step" in ('invitation', 'second_invitation', 'last_notice'));`);
    this.addSql(`alter table "reminder" drop constraint "reminder_visit_round_step_unique";`);
    this.addSql(`alter table "reminder" add constraint "reminder_visit_step_unique" unique ("visit_id", "step");`);
    this.addSql(`alter table "reminder" drop column "round";`);
    this.addSql(`alter table "recall_visit" drop column "reminder_round";`);
    this.addSql(`alter table "practice" drop column "address", drop column "phone", drop column "contact_email";`);
  }
}
