import { Migration } from '@mikro-orm/migrations';

export class Migration20261201230524 extends Migration {

  override async up(): Promise<void> {
    this.addSql(`alter table "treatment_case" add column "visit_statuses" text[] not null default '{}';`);

    // The case's recall summary (next open visit, distinct visit statuses), kept by statement-level
    // triggers on recall_visit so every writer — services, jobs, SQL — keeps it right.
    this.addSql(`create or replace function lamina_case_visit_summary(case_ids uuid[]) returns void language sql as $$
  update treatment_case c
     set visit_statuses = s.statuses, next_visit_date = s.next_date, next_visit_status = s.next_status
    from (select c2.id,
                 coalesce((select array_agg(distinct v.status order by v.status) from recall_visit v where v.case_id = c2.id), '{}') as statuses,
                 n.due_date as next_date, n.status as next_status
            from treatment_case c2
            left join lateral (select v.due_date, v.status from recall_visit v
                                where v.case_id = c2.id and v.status in ('planned', 'invited', 'confirmed')
                                order by v.due_date, v.milestone limit 1) n on true
           where c2.id = any(case_ids)) s
   where c.id = s.id
     and (c.visit_statuses is distinct from s.statuses or c.next_visit_date is distinct from s.next_date
          or c.next_visit_status is distinct from s.next_status);
$$;`);
    this.addSql(`create or replace function lamina_recall_visit_inserted() returns trigger language plpgsql as $$
begin
  perform lamina_case_visit_summary(array(select distinct case_id from new_rows));
  return null;
end $$;`);
    this.addSql(`create or replace function lamina_recall_visit_updated() returns trigger language plpgsql as $$
begin
  perform lamina_case_visit_summary(array(
    select n.case_id from new_rows n join old_rows o on o.id = n.id
     where n.status is distinct from o.status or n.due_date is distinct from o.due_date or n.case_id is distinct from o.case_id
    union select o.case_id from new_rows n join old_rows o on o.id = n.id where n.case_id is distinct from o.case_id));
  return null;
end $$;`);
    this.addSql(`create or replace function lamina_recall_visit_deleted() returns trigger language plpgsql as $$
begin
  perform lamina_case_visit_summary(array(select distinct case_id from old_rows));
  return null;
end $$;`);
    this.addSql(`create trigger recall_visit_summary_after_insert after insert on "recall_visit" referencing new table as new_rows for each statement execute function lamina_recall_visit_inserted();`);
    this.addSql(`create trigger recall_visit_summary_after_update after update on "recall_visit" referencing old table as old_rows new table as new_rows for each statement execute function lamina_recall_visit_updated();`);
    this.addSql(`create trigger recall_visit_summary_after_delete after delete on "recall_visit" referencing old table as old_rows for each statement execute function lamina_recall_visit_deleted();`);
    this.addSql(`select lamina_case_visit_summary(array(select distinct case_id from recall_visit));`);

    // Case-list indexes become partial over the working list (archived cases left out), chosen with
    // EXPLAIN on 100,000 cases. The schema diff does not compare index predicates or INCLUDE, so
    // these five are written by hand; the rest was generated.
    this.addSql(`drop index "treatment_case_practice_completion_index";`);
    this.addSql(`create index "treatment_case_practice_completion_index" on "treatment_case" ("practice_id", "completion_date", "id") include ("visit_statuses") where "archived_at" is null;`);
    this.addSql(`drop index "treatment_case_practice_operator_index";`);
    this.addSql(`create index "treatment_case_practice_operator_index" on "treatment_case" ("practice_id", "operator_id", "completion_date") where "archived_at" is null;`);
    this.addSql(`drop index "treatment_case_practice_kind_index";`);
    this.addSql(`create index "treatment_case_practice_kind_index" on "treatment_case" ("practice_id", "kind", "completion_date") where "archived_at" is null;`);
    this.addSql(`drop index "treatment_case_practice_tooth_group_index";`);
    this.addSql(`create index "treatment_case_practice_tooth_group_index" on "treatment_case" ("practice_id", "tooth_group", "completion_date") where "archived_at" is null;`);
    this.addSql(`drop index "treatment_case_practice_next_visit_index";`);
    this.addSql(`create index "treatment_case_practice_next_visit_index" on "treatment_case" ("practice_id", "next_visit_date", "id") where "archived_at" is null;`);
    this.addSql(`create index "treatment_case_practice_fill_length_index" on "treatment_case" ("practice_id", "fill_length_class", "completion_date") where "archived_at" is null;`);

    this.addSql(`drop index "recall_visit_practice_status_due_index";`);

    this.addSql(`create index "recall_visit_case_status_due_index" on "recall_visit" ("case_id", "status", "due_date", "practice_id");`);
    this.addSql(`create index "recall_visit_practice_status_due_index" on "recall_visit" ("practice_id", "status", "due_date", "case_id");`);
  }

  override async down(): Promise<void> {
    this.addSql(`drop trigger recall_visit_summary_after_insert on "recall_visit";`);
    this.addSql(`drop trigger recall_visit_summary_after_update on "recall_visit";`);
    this.addSql(`drop trigger recall_visit_summary_after_delete on "recall_visit";`);
    this.addSql(`drop function lamina_recall_visit_inserted(), lamina_recall_visit_updated(), lamina_recall_visit_deleted(), lamina_case_visit_summary(uuid[]);`);
    this.addSql(`drop index "treatment_case_practice_completion_index";`);
    this.addSql(`create index "treatment_case_practice_completion_index" on "treatment_case" ("practice_id", "completion_date", "id");`);
    this.addSql(`drop index "treatment_case_practice_operator_index";`);
    this.addSql(`create index "treatment_case_practice_operator_index" on "treatment_case" ("practice_id", "operator_id", "completion_date");`);
    this.addSql(`drop index "treatment_case_practice_kind_index";`);
    this.addSql(`create index "treatment_case_practice_kind_index" on "treatment_case" ("practice_id", "kind", "completion_date");`);
    this.addSql(`drop index "treatment_case_practice_tooth_group_index";`);
    this.addSql(`create index "treatment_case_practice_tooth_group_index" on "treatment_case" ("practice_id", "tooth_group", "completion_date");`);
    this.addSql(`drop index "treatment_case_practice_next_visit_index";`);
    this.addSql(`create index "treatment_case_practice_next_visit_index" on "treatment_case" ("practice_id", "next_visit_date");`);
    this.addSql(`drop index "recall_visit_case_status_due_index";`);
    this.addSql(`drop index "recall_visit_practice_status_due_index";`);

    this.addSql(`create index "recall_visit_practice_status_due_index" on "recall_visit" ("practice_id", "status", "due_date");`);

    this.addSql(`drop index "treatment_case_practice_fill_length_index";`);
    this.addSql(`alter table "treatment_case" drop column "visit_statuses";`);
  }

}
