import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 12, speed (written by hand): what changed at each outcomes data version, so a web instance
 * whose cached rows are a few versions old re-reads only the changed cases
 * (lib/services/outcomes-cache.ts) instead of the practice's 100,000.
 *
 * The statement triggers of Migration20261202180000 keep calling outcomes_data_bump(); this
 * replaces its body. Each statement still bumps the version of every practice it touched, once,
 * and now also writes one row per changed case (treatment_case: its id; review and recall_visit:
 * their case_id) or patient (patient: its id) under the new version into outcomes_data_change.
 * A statement touching more than 2,000 cases or patients of a practice (an import) writes a single
 * row with neither (= "re-read everything"), so bulk writes stay cheap. TRUNCATE
 * (outcomes_data_bump_all) writes no rows: a reader missing any version in its range reads
 * everything again. Every 128th version of a practice drops its rows older than 1,024 versions.
 */
export class Migration20261202230000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`create table "outcomes_data_change" ("id" bigserial primary key, "practice_id" uuid not null, "version" bigint not null, "case_id" uuid null, "patient_id" uuid null);`);
    this.addSql(`create index "outcomes_data_change_practice_version_index" on "outcomes_data_change" ("practice_id", "version");`);
    this.addSql(`create or replace function outcomes_data_bump() returns trigger language plpgsql as $fn$
declare
  key text := case when TG_TABLE_NAME in ('treatment_case', 'patient') then 'id' else 'case_id' end;
  col text := case when TG_TABLE_NAME = 'patient' then 'patient_id' else 'case_id' end;
  src text;
begin
  src := case TG_OP
    when 'INSERT' then format('select practice_id, %I as k from changed_new', key)
    when 'DELETE' then format('select practice_id, %I as k from changed_old', key)
    -- an update: the rows before and after (a row moved to another practice bumps both)
    else format('select practice_id, %1$I as k from changed_new union all select practice_id, %1$I as k from changed_old', key)
  end;
  execute format($q$
    with ch as (select distinct practice_id, k from (%1$s) x where practice_id is not null),
    per as (select practice_id, count(*) as n from ch group by practice_id),
    bumped as (
      insert into outcomes_data_version as v (practice_id) select practice_id from per
      on conflict (practice_id) do update set version = v.version + 1
      returning v.practice_id, v.version
    ),
    pruned as (
      delete from outcomes_data_change d using bumped b
      where b.version %% 128 = 0 and d.practice_id = b.practice_id and d.version <= b.version - 1024
    )
    insert into outcomes_data_change (practice_id, version, %2$I)
      select b.practice_id, b.version, ch.k from bumped b join per using (practice_id) join ch using (practice_id) where per.n <= 2000
      union all
      select b.practice_id, b.version, null from bumped b join per using (practice_id) where per.n > 2000
  $q$, src, col);
  return null;
end $fn$;`);
  }

  override async down(): Promise<void> {
    // the body of Migration20261202180000
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
    insert into outcomes_data_version as v (practice_id)
      select distinct o.practice_id from changed_old o where o.practice_id is not null and not exists (select 1 from changed_new n where n.practice_id = o.practice_id)
      on conflict (practice_id) do update set version = v.version + 1;
  end if;
  return null;
end $$;`);
    this.addSql(`drop table if exists "outcomes_data_change";`);
  }
}
