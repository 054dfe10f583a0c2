import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 13, films (written by hand): the `film` table — a radiograph of a case (optionally of a
 * recall visit and the review that scored it), its three object-storage keys, what was read from
 * the file (size, pixel spacing and its source, acquisition date, modality, transfer syntax; the
 * DICOM patient name and id only to compare), and one live film per case, role and content
 * (partial unique index: an archived film does not block the same file again).
 */
export class Migration20261202170000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`create table "film" ("id" uuid not null, "practice_id" uuid not null, "case_id" uuid not null, "visit_id" uuid null, "review_id" uuid null, "role" text check ("role" in ('pre_operative', 'post_fill', 'follow_up')) not null, "original_key" varchar(200) not null, "web_key" varchar(200) not null, "thumbnail_key" varchar(200) not null, "content_type" varchar(40) not null, "byte_size" int not null, "sha256" varchar(64) not null, "width" int not null, "height" int not null, "web_width" int not null, "web_height" int not null, "pixel_spacing_row_mm" double precision null, "pixel_spacing_col_mm" double precision null, "spacing_source" text check ("spacing_source" in ('pixel_spacing', 'imager_pixel_spacing', 'none')) not null default 'none', "acquisition_date" date null, "modality" varchar(16) null, "transfer_syntax" varchar(64) null, "dicom_patient_name" varchar(200) null, "dicom_patient_id" varchar(64) null, "patient_mismatch" boolean not null default false, "uploaded_by_id" uuid not null, "created_at" timestamptz not null, "archived_at" timestamptz null, constraint "film_pkey" primary key ("id"));`);
    this.addSql(`create index "film_case_index" on "film" ("case_id", "created_at");`);
    this.addSql(`create index "film_visit_index" on "film" ("visit_id");`);
    this.addSql(`create unique index "film_case_role_sha256_live_unique" on "film" ("case_id", "role", "sha256") where "archived_at" is null;`);
    this.addSql(`alter table "film" add constraint "film_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "film" add constraint "film_case_id_foreign" foreign key ("case_id") references "treatment_case" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "film" add constraint "film_visit_id_foreign" foreign key ("visit_id") references "recall_visit" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "film" add constraint "film_review_id_foreign" foreign key ("review_id") references "review" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "film" add constraint "film_uploaded_by_id_foreign" foreign key ("uploaded_by_id") references "app_user" ("id") on update cascade;`);
  }

  override async down(): Promise<void> {
    this.addSql(`drop table if exists "film" cascade;`);
  }
}
