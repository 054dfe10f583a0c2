import { Migration } from '@mikro-orm/migrations';

export class Migration20261201232637 extends Migration {

  override async up(): Promise<void> {
    this.addSql(`create table "reminder" ("id" uuid not null, "practice_id" uuid not null, "visit_id" uuid not null, "step" text check ("step" in ('invitation', 'second_invitation', 'last_notice')) not null, "origin" text check ("origin" in ('scan', 'desk')) not null default 'scan', "requested_by_id" uuid null, "status" text check ("status" in ('queued', 'sending', 'sent', 'failed', 'skipped')) not null default 'queued', "attempts" smallint not null default 0, "last_error" varchar(500) null, "message_id" varchar(255) null, "queued_on" date not null, "queued_at" timestamptz not null, "claim_expires_at" timestamptz null, "sent_at" timestamptz null, "sent_on" date null, "failed_at" timestamptz null, "updated_at" timestamptz not null, constraint "reminder_pkey" primary key ("id"));`);
    this.addSql(`create index "reminder_open_index" on "reminder" ("practice_id", "status") where "status" in ('queued', 'sending');`);
    this.addSql(`alter table "reminder" add constraint "reminder_visit_step_unique" unique ("visit_id", "step");`);

    this.addSql(`create table "reply_nonce" ("nonce" varchar(22) not null, "practice_id" uuid not null, "visit_id" uuid not null, "reminder_id" uuid null, "answer" text check ("answer" in ('confirmed', 'another_time', 'declined')) not null, "used_at" timestamptz not null, constraint "reply_nonce_pkey" primary key ("nonce"));`);

    this.addSql(`create table "contact_log_entry" ("id" uuid not null, "practice_id" uuid not null, "visit_id" uuid not null, "at" timestamptz not null, "kind" text check ("kind" in ('message_sent', 'delivery_failed', 'reply', 'call', 'appointment', 'status_change', 'consent_withdrawn')) not null, "by" text check ("by" in ('user', 'patient', 'system')) not null, "user_id" uuid null, "reminder_id" uuid null, "step" text check ("step" in ('invitation', 'second_invitation', 'last_notice')) null, "answer" text check ("answer" in ('confirmed', 'another_time', 'declined')) null, "reached" boolean null, "from_status" text check ("from_status" in ('planned', 'invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed')) null, "to_status" text check ("to_status" in ('planned', 'invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed')) null, "note" varchar(1000) null, constraint "contact_log_entry_pkey" primary key ("id"));`);
    this.addSql(`create index "contact_log_entry_visit_at_index" on "contact_log_entry" ("visit_id", "at");`);
    this.addSql(`create index "contact_log_entry_practice_at_index" on "contact_log_entry" ("practice_id", "at");`);

    this.addSql(`alter table "reminder" add constraint "reminder_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "reminder" add constraint "reminder_visit_id_foreign" foreign key ("visit_id") references "recall_visit" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "reminder" add constraint "reminder_requested_by_id_foreign" foreign key ("requested_by_id") references "app_user" ("id") on update cascade on delete set null;`);

    this.addSql(`alter table "reply_nonce" add constraint "reply_nonce_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "reply_nonce" add constraint "reply_nonce_visit_id_foreign" foreign key ("visit_id") references "recall_visit" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "reply_nonce" add constraint "reply_nonce_reminder_id_foreign" foreign key ("reminder_id") references "reminder" ("id") on update cascade on delete set null;`);

    this.addSql(`alter table "contact_log_entry" add constraint "contact_log_entry_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "contact_log_entry" add constraint "contact_log_entry_visit_id_foreign" foreign key ("visit_id") references "recall_visit" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "contact_log_entry" add constraint "contact_log_entry_user_id_foreign" foreign key ("user_id") references "app_user" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "contact_log_entry" add constraint "contact_log_entry_reminder_id_foreign" foreign key ("reminder_id") references "reminder" ("id") on update cascade on delete set null;`);

    this.addSql(`alter table "practice" add column "reminder_policy" jsonb not null default '{"invitationWeeksBefore":3,"secondInvitationAfterDays":10,"lastNoticeDaysAfterDue":14,"lostAfterUnansweredAttempts":3}';`);

    this.addSql(`alter table "recall_visit" add column "proposed_start" timestamptz null, add column "delivery_failed_at" timestamptz null;`);
  }

  override async down(): Promise<void> {
    this.addSql(`alter table "reply_nonce" drop constraint "reply_nonce_reminder_id_foreign";`);

    this.addSql(`alter table "contact_log_entry" drop constraint "contact_log_entry_reminder_id_foreign";`);

    this.addSql(`drop table if exists "reminder" cascade;`);

    this.addSql(`drop table if exists "reply_nonce" cascade;`);

    this.addSql(`drop table if exists "contact_log_entry" cascade;`);

    this.addSql(`alter table "practice" drop column "reminder_policy";`);

    this.addSql(`alter table "recall_visit" drop column "proposed_start", drop column "delivery_failed_at";`);
  }

}
