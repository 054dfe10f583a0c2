import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 13, reading queue (written by hand): `film_reading` (every reading of a film — first,
 * blinded second, adjudication, calibration exercise — kept, never updated), `reference_film`
 * (the practice's reference set with the lead's reference PAI) and the practice setting
 * `second_reading_percent` (default 20).
 */
export class Migration20261202200000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`alter table "practice" add column "second_reading_percent" smallint not null default 20;`);
    this.addSql(`create table "film_reading" ("id" uuid not null, "practice_id" uuid not null, "film_id" uuid not null, "reader_id" uuid not null, "kind" text check ("kind" in ('first', 'second', 'adjudication', 'reference-exercise')) not null, "pai" smallint not null check ("pai" between 1 and 5), "signs" jsonb not null default '{}', "consensus" boolean not null default false, "created_at" timestamptz not null, constraint "film_reading_pkey" primary key ("id"));`);
    this.addSql(`create index "film_reading_film_index" on "film_reading" ("film_id", "created_at");`);
    this.addSql(`create index "film_reading_practice_kind_index" on "film_reading" ("practice_id", "kind");`);
    this.addSql(`alter table "film_reading" add constraint "film_reading_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "film_reading" add constraint "film_reading_film_id_foreign" foreign key ("film_id") references "film" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "film_reading" add constraint "film_reading_reader_id_foreign" foreign key ("reader_id") references "app_user" ("id") on update cascade;`);
    this.addSql(`create table "reference_film" ("film_id" uuid not null, "practice_id" uuid not null, "pai" smallint not null check ("pai" between 1 and 5), "set_by_id" uuid not null, "set_at" timestamptz not null, constraint "reference_film_pkey" primary key ("film_id"));`);
    this.addSql(`create index "reference_film_practice_index" on "reference_film" ("practice_id");`);
    this.addSql(`alter table "reference_film" add constraint "reference_film_film_id_foreign" foreign key ("film_id") references "film" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "reference_film" add constraint "reference_film_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "reference_film" add constraint "reference_film_set_by_id_foreign" foreign key ("set_by_id") references "app_user" ("id") on update cascade;`);
  }

  override async down(): Promise<void> {
    this.addSql(`drop table if exists "reference_film" cascade;`);
    this.addSql(`drop table if exists "film_reading" cascade;`);
    this.addSql(`alter table "practice" drop column if exists "second_reading_percent";`);
  }
}
