import { Migration } from '@mikro-orm/migrations';

const TABLES = ['treatment_case', 'recall_visit', 'patient'] as const;

/**
 * Issue 15, load (written by hand): a version per practice of what the case list counts — its cases,
 * their recall visits and its patients (a search reads names) — for the list's kept totals
 * (lib/services/cases-list.ts). Like the outcomes data version (Migration20261202180000): statement
 * triggers with transition tables bump each practice a statement touched, in the same transaction,
 * so a web instance that finds the version unchanged knows a total it counted is still exact,
 * whichever process made a change. Reviews are left out: no list filter reads them, so the many
 * review saves of a clinic's day do not make every total be counted again. No foreign key (see
 * that migration).
 */
export class Migration20261204120000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`create table "case_list_version" ("practice_id" uuid not null, "version" bigint not null default 1, constraint "case_list_version_pkey" primary key ("practice_id"));`);
    this.addSql(`create or replace function case_list_bump() returns trigger language plpgsql as $$
begin
  if TG_OP = 'DELETE' then
    insert into case_list_version as v (practice_id) select distinct practice_id from changed_old where practice_id is not null
      on conflict (practice_id) do update set version = v.version + 1;
  else
    insert into case_list_version as v (practice_id) select distinct practice_id from changed_new where practice_id is not null
      on conflict (practice_id) do update set version = v.version + 1;
  end if;
  if TG_OP = 'UPDATE' then
    insert into case_list_version as v (practice_id)
      select distinct o.practice_id from changed_old o where o.practice_id is not null and not exists (select 1 from changed_new n where n.practice_id = o.practice_id)
      on conflict (practice_id) do update set version = v.version + 1;
  end if;
  return null;
end $$;`);
    // TRUNCATE fires no row or delete triggers and names no practice: every version moves on
    this.addSql(`create or replace function case_list_bump_all() returns trigger language plpgsql as $$
begin
  update case_list_version set version = version + 1;
  return null;
end $$;`);
    for (const t of TABLES) {
      this.addSql(`create trigger "${t}_case_list_trunc" after truncate on "${t}" for each statement execute function case_list_bump_all();`);
      this.addSql(`create trigger "${t}_case_list_ins" after insert on "${t}" referencing new table as changed_new for each statement execute function case_list_bump();`);
      this.addSql(`create trigger "${t}_case_list_upd" after update on "${t}" referencing old table as changed_old new table as changed_new for each statement execute function case_list_bump();`);
      this.addSql(`create trigger "${t}_case_list_del" after delete on "${t}" referencing old table as changed_old for each statement execute function case_list_bump();`);
    }
  }

  override async down(): Promise<void> {
    for (const t of TABLES) {
      for (const what of ['ins', 'upd', 'del', 'trunc']) this.addSql(`drop trigger if exists "${t}_case_list_${what}" on "${t}";`);
    }
    this.addSql(`drop function if exists case_list_bump();`);
    this.addSql(`drop function if exists case_list_bump_all();`);
    this.addSql(`drop table if exists "case_list_version";`);
  }
}
