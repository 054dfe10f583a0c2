import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 14, research cohorts (written by hand): `cohort` (a name in a practice, its owner),
 * `cohort_version` (numbered per cohort; filters, variables and k as saved — a trigger refuses any
 * UPDATE, so a saved version is never changed and an export of it can be made again) and
 * `cohort_export` (one archive of a version made by the `cohort-export` job: status, progress,
 * figures, its deterministic object key; no secret is stored).
 */
export class Migration20261202220000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`create table "cohort" ("id" uuid not null, "practice_id" uuid not null, "name" varchar(120) not null, "owner_id" uuid not null, "created_at" timestamptz not null, "archived_at" timestamptz null, constraint "cohort_pkey" primary key ("id"));`);
    this.addSql(`create index "cohort_practice_index" on "cohort" ("practice_id", "created_at");`);
    this.addSql(`alter table "cohort" add constraint "cohort_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "cohort" add constraint "cohort_owner_id_foreign" foreign key ("owner_id") references "app_user" ("id") on update cascade;`);

    this.addSql(`create table "cohort_version" ("id" uuid not null, "cohort_id" uuid not null, "number" int not null, "filters" jsonb not null, "variables" jsonb not null, "k" int not null, "created_by_id" uuid not null, "created_at" timestamptz not null, constraint "cohort_version_pkey" primary key ("id"));`);
    this.addSql(`alter table "cohort_version" add constraint "cohort_version_cohort_number_unique" unique ("cohort_id", "number");`);
    this.addSql(`alter table "cohort_version" add constraint "cohort_version_cohort_id_foreign" foreign key ("cohort_id") references "cohort" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "cohort_version" add constraint "cohort_version_created_by_id_foreign" foreign key ("created_by_id") references "app_user" ("id") on update cascade;`);
    this.addSql(`create or replace function cohort_version_immutable() returns trigger language plpgsql as $$ begin raise exception 'a saved cohort version cannot be changed; save a new version' using errcode = 'check_violation'; end $$;`);
    this.addSql(`create trigger cohort_version_no_update before update on "cohort_version" for each row execute function cohort_version_immutable();`);

    this.addSql(`create table "cohort_export" ("id" uuid not null, "practice_id" uuid not null, "version_id" uuid not null, "requested_by_id" uuid not null, "status" text check ("status" in ('queued', 'running', 'done', 'failed', 'cancelled')) not null default 'queued', "progress_done" int not null default 0, "progress_total" int not null default 0, "cases" int null, "patients" int null, "reviews" int null, "generalised" int null, "suppressed" int null, "min_l" int null, "files" jsonb null, "object_key" varchar(200) not null, "byte_size" bigint null, "error" varchar(500) null, "attempts" int not null default 0, "created_at" timestamptz not null, "started_at" timestamptz null, "finished_at" timestamptz null, "cancel_requested_at" timestamptz null, "notified_at" timestamptz null, constraint "cohort_export_pkey" primary key ("id"));`);
    this.addSql(`create index "cohort_export_version_index" on "cohort_export" ("version_id", "created_at");`);
    this.addSql(`alter table "cohort_export" add constraint "cohort_export_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "cohort_export" add constraint "cohort_export_version_id_foreign" foreign key ("version_id") references "cohort_version" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "cohort_export" add constraint "cohort_export_requested_by_id_foreign" foreign key ("requested_by_id") references "app_user" ("id") on update cascade;`);
  }

  override async down(): Promise<void> {
    this.addSql(`drop table if exists "cohort_export" cascade;`);
    this.addSql(`drop table if exists "cohort_version" cascade;`);
    this.addSql(`drop function if exists cohort_version_immutable() cascade;`);
    this.addSql(`drop table if exists "cohort" cascade;`);
  }
}
