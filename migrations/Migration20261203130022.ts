import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 15, load: the recall desk's counts and queue rows were hash joins over every queued visit
 * (~206,000 at 100,000 cases) and a sequential scan of the whole (wide) case table on every request,
 * about a CPU-second each with PostgreSQL's parallel workers. Two covering partial indexes make both
 * index-only: the visits in a status some queue asks for, with every column the queue conditions
 * read (lib/services/recall-desk.ts QUEUED_STATUSES), and the live cases with what the join needs.
 */
export class Migration20261203130022 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`create index "treatment_case_live_index" on "treatment_case" ("id") include ("patient_id", "operator_id", "archived_at") where "archived_at" is null;`);
    this.addSql(
      `create index "recall_visit_desk_index" on "recall_visit" ("practice_id", "status", "due_date") include ("id", "case_id", "booked_date", "proposed_start", "window_end", "delivery_failed_at") where "status" in ('planned', 'invited', 'confirmed', 'missed', 'declined');`,
    );
  }

  override async down(): Promise<void> {
    this.addSql(`drop index "recall_visit_desk_index";`);
    this.addSql(`drop index "treatment_case_live_index";`);
  }
}
