import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 12, the non-healing worklist (written by hand): `case_decision`, the next steps clinicians
 * record for cases on the worklist (entities/CaseDecision.ts). History as rows: a change replaces
 * the current row (unique `replaces_id`); one first row per case (partial unique index), so a
 * case's decisions form one chain.
 */
export class Migration20261202140000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(
      `create table "case_decision" ("id" uuid not null, "practice_id" uuid not null, "case_id" uuid not null, "step" text check ("step" in ('watch', 'retreat', 'surgery', 'extract', 'refer')) not null, "date" date not null, "note" varchar(300) null, "review_date" date not null, "linked_case_id" uuid null, "visit_id" uuid null, "replaces_id" uuid null, "decided_by_id" uuid not null, "created_at" timestamptz not null, constraint "case_decision_pkey" primary key ("id"));`,
    );
    this.addSql(`create index "case_decision_case_index" on "case_decision" ("case_id", "created_at");`);
    this.addSql(`alter table "case_decision" add constraint "case_decision_replaces_id_unique" unique ("replaces_id");`);
    this.addSql(`create unique index "case_decision_case_first_unique" on "case_decision" ("case_id") where "replaces_id" is null;`);
    this.addSql(`alter table "case_decision" add constraint "case_decision_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "case_decision" add constraint "case_decision_case_id_foreign" foreign key ("case_id") references "treatment_case" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "case_decision" add constraint "case_decision_linked_case_id_foreign" foreign key ("linked_case_id") references "treatment_case" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "case_decision" add constraint "case_decision_visit_id_foreign" foreign key ("visit_id") references "recall_visit" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "case_decision" add constraint "case_decision_replaces_id_foreign" foreign key ("replaces_id") references "case_decision" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "case_decision" add constraint "case_decision_decided_by_id_foreign" foreign key ("decided_by_id") references "app_user" ("id") on update cascade;`);
  }

  override async down(): Promise<void> {
    this.addSql(`drop table if exists "case_decision" cascade;`);
  }
}
