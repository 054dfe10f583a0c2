import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 15, load (written by hand): the case list's count of "this kind of treatment and that tooth
 * group" (or arch, fill length, clinician) visited every table page of the kind's cases — 26 ms warm,
 * 76–400 ms when the pages had left PostgreSQL's buffers, at 100,000 cases ("retreatments of molars":
 * 14,279 of 24,104 retreatments, 8,424 pages). The kind index now carries those columns, so the count
 * is an index-only scan of the kind's range (2–13 ms); its keys, and so the list's order by completion
 * date within a kind, are unchanged.
 */
export class Migration20261203230000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`drop index if exists "treatment_case_practice_kind_index";`);
    this.addSql(
      `create index "treatment_case_practice_kind_index" on "treatment_case" ("practice_id", "kind", "completion_date") include ("tooth_group", "tooth_arch", "fill_length_class", "operator_id") where "archived_at" is null;`,
    );
  }

  override async down(): Promise<void> {
    this.addSql(`drop index if exists "treatment_case_practice_kind_index";`);
    this.addSql(`create index "treatment_case_practice_kind_index" on "treatment_case" ("practice_id", "kind", "completion_date") where "archived_at" is null;`);
  }
}
