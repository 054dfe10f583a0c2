import { Migration } from '@mikro-orm/migrations';

export class Migration20261201221639 extends Migration {

  override async up(): Promise<void> {
    this.addSql(`create table "audit_event" ("id" uuid not null, "at" timestamptz not null, "practice_id" uuid null, "actor_id" uuid null, "actor_email" varchar(254) null, "action" varchar(80) not null, "entity_type" varchar(60) null, "entity_id" varchar(80) null, "ip" varchar(64) null, "user_agent" varchar(300) null, "detail" jsonb null, constraint "audit_event_pkey" primary key ("id"));`);
    this.addSql(`create index "audit_event_at_index" on "audit_event" ("at");`);
    this.addSql(`create index "audit_event_practice_id_index" on "audit_event" ("practice_id");`);
    this.addSql(`create index "audit_event_action_index" on "audit_event" ("action");`);

    this.addSql(`create table "practice" ("id" uuid not null, "name" varchar(160) not null, "slug" varchar(60) not null, "tooth_notation" text check ("tooth_notation" in ('fdi', 'universal')) not null default 'fdi', "time_zone" varchar(60) not null default 'Europe/London', "created_at" timestamptz not null, constraint "practice_pkey" primary key ("id"));`);
    this.addSql(`alter table "practice" add constraint "practice_slug_unique" unique ("slug");`);

    this.addSql(`create table "app_user" ("id" uuid not null, "email" varchar(254) not null, "name" varchar(160) null, "password_hash" varchar(100) null, "email_verified" timestamptz null, "created_at" timestamptz not null, "last_sign_in_at" timestamptz null, constraint "app_user_pkey" primary key ("id"));`);
    this.addSql(`alter table "app_user" add constraint "app_user_email_unique" unique ("email");`);

    this.addSql(`create table "membership" ("id" uuid not null, "user_id" uuid not null, "practice_id" uuid not null, "role" text check ("role" in ('admin', 'coordinator', 'clinician', 'auditor', 'researcher')) not null, "granted_at" timestamptz not null, "revoked_at" timestamptz null, constraint "membership_pkey" primary key ("id"));`);
    this.addSql(`alter table "membership" add constraint "membership_user_id_practice_id_role_unique" unique ("user_id", "practice_id", "role");`);

    this.addSql(`create table "invitation" ("id" uuid not null, "practice_id" uuid not null, "user_id" uuid not null, "invited_by_id" uuid null, "token_hash" varchar(64) not null, "roles" text[] not null, "created_at" timestamptz not null, "expires_at" timestamptz not null, "accepted_at" timestamptz null, constraint "invitation_pkey" primary key ("id"));`);
    this.addSql(`alter table "invitation" add constraint "invitation_token_hash_unique" unique ("token_hash");`);

    this.addSql(`create table "verification_token" ("identifier" varchar(254) not null, "token" varchar(128) not null, "expires" timestamptz not null, constraint "verification_token_pkey" primary key ("identifier", "token"));`);

    this.addSql(`alter table "membership" add constraint "membership_user_id_foreign" foreign key ("user_id") references "app_user" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "membership" add constraint "membership_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);

    this.addSql(`alter table "invitation" add constraint "invitation_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "invitation" add constraint "invitation_user_id_foreign" foreign key ("user_id") references "app_user" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "invitation" add constraint "invitation_invited_by_id_foreign" foreign key ("invited_by_id") references "app_user" ("id") on update cascade on delete set null;`);
  }

}
