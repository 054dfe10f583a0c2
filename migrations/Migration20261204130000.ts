import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 15, load (written by hand): a queue of the recall desk sorted by patient name. Its page and
 * its count were one materialized read that joined every visit of the queue to its patient and
 * sorted them all: ~100 ms at 100,000 cases for the 43,000 missed visits, on every page. Now the
 * count reads the desk index alone and the page can walk the patients in name order and, for each,
 * its queued visits through this index (same predicate as recall_visit_desk_index: the queued
 * statuses of a live case), stopping at the page: ~10 ms for the first pages.
 */
export class Migration20261204130000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(
      `create index "recall_visit_patient_queued_index" on "recall_visit" ("patient_id", "due_date") where "status" in ('planned', 'invited', 'confirmed', 'missed', 'declined') and "case_live";`,
    );
  }

  override async down(): Promise<void> {
    this.addSql(`drop index if exists "recall_visit_patient_queued_index";`);
  }
}
