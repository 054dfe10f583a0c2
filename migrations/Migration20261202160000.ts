import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 16, the review import (written by hand): a recall visit may be kept out of the automatic
 * reminders. The import sets it on visits already due when the practice's history came in (their
 * follow-up happened outside Lamina), unless the coordinator asks for reminders; the recall scan
 * leaves such visits alone, the desk can still send by hand.
 */
export class Migration20261202160000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`alter table "recall_visit" add column "auto_reminders" boolean not null default true;`);
  }

  override async down(): Promise<void> {
    this.addSql(`alter table "recall_visit" drop column "auto_reminders";`);
  }
}
