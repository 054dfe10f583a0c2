import { Migration } from '@mikro-orm/migrations';

const TABLES = ['treatment_case', 'review', 'recall_visit', 'patient'] as const;

/**
 * Issue 12, performance (written by hand): a data version per practice for the outcomes area's
 * cache (lib/services/outcomes-cache.ts). Every statement that inserts, updates or deletes cases,
 * reviews, recall visits or patients bumps the version of each practice it touched, in the same
 * transaction, so a web instance that finds the version unchanged knows its cached rows are
 * current (correct with several instances). Statement-level triggers with transition tables:
 * one bump per statement and practice (a bulk import of 100,000 rows costs one row update).
 * No foreign key: a practice's deletion cascades into its cases, whose trigger then bumps a row
 * of a practice that no longer exists; the row is harmless.
 */
export class Migration20261202180000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`create table "outcomes_data_version" ("practice_id" uuid not null, "version" bigint not null default 1, constraint "outcomes_data_version_pkey" primary key ("practice_id"));`);
    this.addSql(`create or replace function outcomes_data_bump() returns trigger language plpgsql as $$
begin
  if TG_OP = 'DELETE' then
    insert into outcomes_data_version as v (practice_id) select distinct practice_id from changed_old where practice_id is not null
      on conflict (practice_id) do update set version = v.version + 1;
  else
    insert into outcomes_data_version as v (practice_id) select distinct practice_id from changed_new where practice_id is not null
      on conflict (practice_id) do update set version = v.version + 1;
  end if;
  if TG_OP = 'UPDATE' then
    -- a row moved to another practice (not done today) bumps the old one too
    insert into outcomes_data_version as v (practice_id)
      select distinct o.practice_id from changed_old o where o.practice_id is not null and not exists (select 1 from changed_new n where n.practice_id = o.practice_id)
      on conflict (practice_id) do update set version = v.version + 1;
  end if;
  return null;
end $$;`);
    // TRUNCATE fires no row or delete triggers and names no practice: every version moves on
    this.addSql(`create or replace function outcomes_data_bump_all() returns trigger language plpgsql as $$
begin
  update outcomes_data_version set version = version + 1;
  return null;
end $$;`);
    for (const t of TABLES) {
      this.addSql(`create trigger "${t}_outcomes_trunc" after truncate on "${t}" for each statement execute function outcomes_data_bump_all();`);
      this.addSql(`create trigger "${t}_outcomes_ins" after insert on "${t}" referencing new table as changed_new for each statement execute function outcomes_data_bump();`);
      this.addSql(`create trigger "${t}_outcomes_upd" after update on "${t}" referencing old table as changed_old new table as changed_new for each statement execute function outcomes_data_bump();`);
      this.addSql(`create trigger "${t}_outcomes_del" after delete on "${t}" referencing old table as changed_old for each statement execute function outcomes_data_bump();`);
    }
  }

  override async down(): Promise<void> {
    for (const t of TABLES) {
      this.addSql(`drop trigger if exists "${t}_outcomes_ins" on "${t}";`);
      this.addSql(`drop trigger if exists "${t}_outcomes_upd" on "${t}";`);
      this.addSql(`drop trigger if exists "${t}_outcomes_del" on "${t}";`);
      this.addSql(`drop trigger if exists "${t}_outcomes_trunc" on "${t}";`);
    }
    this.addSql(`drop function if exists outcomes_data_bump();`);
    this.addSql(`drop function if exists outcomes_data_bump_all();`);
    this.addSql(`drop table if exists "outcomes_data_version";`);
  }
}
