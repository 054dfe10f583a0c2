import { Migration } from '@mikro-orm/migrations';

/**
 * Visits: why a visit was missed, when, and from which status (so a person's "mark missed" can be
 * undone the same day). Reviews: a correction keeps the earlier version, linked to the one that
 * supersedes it, with who corrected it and why.
 */
export class Migration20261202120000 extends Migration {

  override async up(): Promise<void> {
    this.addSql(`alter table "recall_visit" add column "missed_reason" text check ("missed_reason" in ('no_show', 'cancelled_late', 'unreachable', 'window_ended')) null, add column "missed_on" date null, add column "missed_from" text check ("missed_from" in ('planned', 'invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed')) null;`);
    this.addSql(`update "recall_visit" set "missed_reason" = 'window_ended' where "status" = 'missed';`);

    this.addSql(`alter table "review" add column "superseded_by_id" uuid null, add column "superseded_at" timestamptz null, add column "correction_reason" varchar(500) null, add column "corrected_by_id" uuid null;`);
    this.addSql(`alter table "review" add constraint "review_superseded_by_id_foreign" foreign key ("superseded_by_id") references "review" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "review" add constraint "review_corrected_by_id_foreign" foreign key ("corrected_by_id") references "app_user" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "review" add constraint "review_superseded_by_id_unique" unique ("superseded_by_id");`);
  }

  override async down(): Promise<void> {
    this.addSql(`alter table "review" drop constraint "review_superseded_by_id_unique";`);
    this.addSql(`alter table "review" drop constraint "review_corrected_by_id_foreign";`);
    this.addSql(`alter table "review" drop constraint "review_superseded_by_id_foreign";`);
    this.addSql(`alter table "review" drop column "superseded_by_id", drop column "superseded_at", drop column "correction_reason", drop column "corrected_by_id";`);
    this.addSql(`alter table "recall_visit" drop column "missed_reason", drop column "missed_on", drop column "missed_from";`);
  }

}
