import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 16, reading a practice's own spreadsheet (written by hand): the column mapping a practice
 * chose for a file layout, per import template, proposed again for the next file of that layout.
 */
export class Migration20261202150000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(
      `create table "import_mapping" ("id" uuid not null, "practice_id" uuid not null, "template" varchar(40) not null, "signature" varchar(64) not null, "headers" jsonb not null, "choices" jsonb not null, "updated_by_id" uuid null, "created_at" timestamptz not null, "updated_at" timestamptz not null, constraint "import_mapping_pkey" primary key ("id"));`,
    );
    this.addSql(`alter table "import_mapping" add constraint "import_mapping_practice_template_signature_unique" unique ("practice_id", "template", "signature");`);
    this.addSql(`alter table "import_mapping" add constraint "import_mapping_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "import_mapping" add constraint "import_mapping_updated_by_id_foreign" foreign key ("updated_by_id") references "app_user" ("id") on update cascade on delete set null;`);
  }

  override async down(): Promise<void> {
    this.addSql(`drop table if exists "import_mapping" cascade;`);
  }
}
