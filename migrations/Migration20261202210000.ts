import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 13, films from referring dentists and the letter back (written by hand):
 *
 * - `referrer_upload_link`: a single-purpose upload link for one recall visit, sent to the case's
 *   referrer. Only a hash of the token is kept (`token_hash`, unique); `used_at` is set by the one
 *   upload that consumes it (a compare-and-set), `expires_at` bounds it.
 * - `referrer_message`: the outbox of mail to referrers (the upload link, the outcome letter), the
 *   same shape as `reminder`: one row per subject and kind (unique), written before the job.
 * - `film`: a film sent by a referrer has no uploading user (`uploaded_by_id` null) and names its
 *   link (`referrer_link_id`); `source` says who sent it.
 */
export class Migration20261202210000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`create table "referrer_upload_link" ("id" uuid not null, "practice_id" uuid not null, "case_id" uuid not null, "visit_id" uuid not null, "referrer_id" uuid null, "token_hash" varchar(64) not null, "expires_at" timestamptz not null, "created_by_id" uuid not null, "created_at" timestamptz not null, "used_at" timestamptz null, "film_count" smallint not null default 0, constraint "referrer_upload_link_pkey" primary key ("id"));`);
    this.addSql(`alter table "referrer_upload_link" add constraint "referrer_upload_link_token_hash_unique" unique ("token_hash");`);
    this.addSql(`create index "referrer_upload_link_case_index" on "referrer_upload_link" ("case_id", "created_at");`);
    this.addSql(`alter table "referrer_upload_link" add constraint "referrer_upload_link_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "referrer_upload_link" add constraint "referrer_upload_link_case_id_foreign" foreign key ("case_id") references "treatment_case" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "referrer_upload_link" add constraint "referrer_upload_link_visit_id_foreign" foreign key ("visit_id") references "recall_visit" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "referrer_upload_link" add constraint "referrer_upload_link_referrer_id_foreign" foreign key ("referrer_id") references "referrer" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "referrer_upload_link" add constraint "referrer_upload_link_created_by_id_foreign" foreign key ("created_by_id") references "app_user" ("id") on update cascade;`);

    this.addSql(`create table "referrer_message" ("id" uuid not null, "practice_id" uuid not null, "case_id" uuid not null, "kind" text check ("kind" in ('upload_link', 'outcome_letter')) not null, "subject_id" uuid not null, "referrer_id" uuid null, "to_address" varchar(254) not null, "requested_by_id" uuid null, "status" text check ("status" in ('queued', 'sending', 'sent', 'failed')) not null default 'queued', "attempts" smallint not null default 0, "last_error" varchar(500) null, "message_id" varchar(255) null, "queued_at" timestamptz not null, "claim_expires_at" timestamptz null, "sent_at" timestamptz null, "failed_at" timestamptz null, "updated_at" timestamptz not null, constraint "referrer_message_pkey" primary key ("id"));`);
    this.addSql(`alter table "referrer_message" add constraint "referrer_message_kind_subject_unique" unique ("kind", "subject_id");`);
    this.addSql(`create index "referrer_message_case_index" on "referrer_message" ("case_id");`);
    this.addSql(`create index "referrer_message_open_index" on "referrer_message" ("practice_id", "status") where "status" in ('queued', 'sending');`);
    this.addSql(`alter table "referrer_message" add constraint "referrer_message_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "referrer_message" add constraint "referrer_message_case_id_foreign" foreign key ("case_id") references "treatment_case" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "referrer_message" add constraint "referrer_message_referrer_id_foreign" foreign key ("referrer_id") references "referrer" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "referrer_message" add constraint "referrer_message_requested_by_id_foreign" foreign key ("requested_by_id") references "app_user" ("id") on update cascade on delete set null;`);

    this.addSql(`alter table "film" alter column "uploaded_by_id" drop not null;`);
    this.addSql(`alter table "film" add column "source" text check ("source" in ('practice', 'referrer')) not null default 'practice', add column "referrer_link_id" uuid null;`);
    this.addSql(`alter table "film" add constraint "film_referrer_link_id_foreign" foreign key ("referrer_link_id") references "referrer_upload_link" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "film" add constraint "film_source_uploader_check" check (("source" = 'referrer') = ("uploaded_by_id" is null));`);
  }

  override async down(): Promise<void> {
    this.addSql(`alter table "film" drop constraint if exists "film_source_uploader_check";`);
    this.addSql(`alter table "film" drop constraint if exists "film_referrer_link_id_foreign";`);
    this.addSql(`alter table "film" drop column if exists "referrer_link_id", drop column if exists "source";`);
    this.addSql(`drop table if exists "referrer_message" cascade;`);
    this.addSql(`drop table if exists "referrer_upload_link" cascade;`);
  }
}
