import { Migration } from '@mikro-orm/migrations';

export class Migration20261201223805 extends Migration {

  override async up(): Promise<void> {
    // Trigram index for patient search (pg_trgm is a trusted extension: the database owner may create it).
    this.addSql(`create extension if not exists pg_trgm;`);
    this.addSql(`create table "referrer" ("id" uuid not null, "practice_id" uuid not null, "name" varchar(160) not null, "practice_name" varchar(160) null, "email" varchar(254) null, "archived_at" timestamptz null, "created_at" timestamptz not null, constraint "referrer_pkey" primary key ("id"));`);
    this.addSql(`create index "referrer_practice_name_index" on "referrer" ("practice_id", "name");`);

    this.addSql(`create table "patient" ("id" uuid not null, "practice_id" uuid not null, "registry_number" varchar(32) not null, "given_name" varchar(100) not null, "family_name" varchar(100) not null, "date_of_birth" date not null, "sex" text check ("sex" in ('female', 'male', 'other', 'not_stated')) not null, "email" varchar(254) null, "phone" varchar(32) null, "postal_code" varchar(12) null, "recall_contact" boolean not null, "recall_channel" text check ("recall_channel" in ('email', 'phone', 'post', 'none')) not null, "research_use" boolean not null, "consent_date" date not null, "consent_recorded_by_id" uuid null, "archived_at" timestamptz null, "created_at" timestamptz not null, "updated_at" timestamptz not null, constraint "patient_pkey" primary key ("id"));`);
    this.addSql(`create index "patient_practice_family_name_index" on "patient" ("practice_id", "family_name", "given_name");`);
    this.addSql(`create index "patient_search_trgm_index" on "patient" using gin ((lower(("registry_number")::text || ' ' || ("given_name")::text || ' ' || ("family_name")::text)) gin_trgm_ops);`);
    this.addSql(`alter table "patient" add constraint "patient_practice_registry_number_unique" unique ("practice_id", "registry_number");`);

    this.addSql(`create table "treatment_case" ("id" uuid not null, "practice_id" uuid not null, "patient_id" uuid not null, "tooth" smallint not null, "tooth_group" text check ("tooth_group" in ('incisor', 'canine', 'premolar', 'molar')) not null, "tooth_arch" text check ("tooth_arch" in ('upper', 'lower')) not null, "kind" text check ("kind" in ('primary_treatment', 'nonsurgical_retreatment', 'apical_surgery', 'vital_pulp_therapy', 'regenerative_endodontics')) not null, "operator_id" uuid not null, "referrer_id" uuid null, "start_date" date not null, "completion_date" date null, "pulpal_diagnosis" text check ("pulpal_diagnosis" in ('normal_pulp', 'reversible_pulpitis', 'symptomatic_irreversible_pulpitis', 'asymptomatic_irreversible_pulpitis', 'pulp_necrosis', 'previously_treated', 'previously_initiated_therapy')) not null, "apical_diagnosis" text check ("apical_diagnosis" in ('normal_apical_tissues', 'symptomatic_apical_periodontitis', 'asymptomatic_apical_periodontitis', 'chronic_apical_abscess', 'acute_apical_abscess', 'condensing_osteitis')) not null, "pai_score" smallint not null, "lesion_diameter_mm" numeric(4,1) not null, "preop_symptoms" text[] not null default '{}', "sinus_tract" boolean null, "probing_depth_mm" smallint null, "canals" jsonb not null default '[]', "canal_count" smallint not null default 0, "filling_technique" text check ("filling_technique" in ('cold_lateral_compaction', 'warm_vertical_compaction', 'continuous_wave', 'carrier_based', 'single_cone', 'thermoplastic_injection', 'apical_barrier', 'other')) null, "sealer_class" text check ("sealer_class" in ('zinc_oxide_eugenol', 'epoxy_resin', 'calcium_silicate', 'calcium_hydroxide', 'methacrylate_resin', 'silicone', 'glass_ionomer', 'other')) null, "apical_patency" boolean null, "complications" text[] not null default '{}', "root_end_filling" text check ("root_end_filling" in ('calcium_silicate', 'reinforced_zinc_oxide_eugenol', 'composite', 'glass_ionomer', 'none', 'other')) null, "pulp_therapy_type" text check ("pulp_therapy_type" in ('indirect_pulp_cap', 'direct_pulp_cap', 'partial_pulpotomy', 'full_pulpotomy')) null, "capping_material" text check ("capping_material" in ('calcium_silicate', 'calcium_hydroxide', 'glass_ionomer', 'other')) null, "fill_density" text check ("fill_density" in ('homogeneous', 'voids')) null, "fill_length_class" text check ("fill_length_class" in ('within', 'short', 'beyond')) null, "coronal_restoration" text check ("coronal_restoration" in ('none', 'temporary', 'direct_composite', 'direct_amalgam', 'glass_ionomer', 'existing_indirect')) null, "definitive_restoration" text check ("definitive_restoration" in ('direct_composite', 'direct_amalgam', 'onlay', 'crown', 'post_and_crown', 'existing_indirect')) null, "definitive_restoration_date" date null, "next_visit_date" date null, "next_visit_status" text check ("next_visit_status" in ('planned', 'invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed')) null, "source" text check ("source" in ('form', 'import', 'demo')) not null default 'form', "created_by_id" uuid null, "archived_at" timestamptz null, "created_at" timestamptz not null, "updated_at" timestamptz not null, constraint "treatment_case_pkey" primary key ("id"));`);
    this.addSql(`create index "treatment_case_practice_completion_index" on "treatment_case" ("practice_id", "completion_date", "id");`);
    this.addSql(`create index "treatment_case_practice_operator_index" on "treatment_case" ("practice_id", "operator_id", "completion_date");`);
    this.addSql(`create index "treatment_case_practice_kind_index" on "treatment_case" ("practice_id", "kind", "completion_date");`);
    this.addSql(`create index "treatment_case_practice_tooth_group_index" on "treatment_case" ("practice_id", "tooth_group", "completion_date");`);
    this.addSql(`create index "treatment_case_practice_next_visit_index" on "treatment_case" ("practice_id", "next_visit_date");`);
    this.addSql(`create index "treatment_case_patient_index" on "treatment_case" ("patient_id");`);

    this.addSql(`create table "recall_visit" ("id" uuid not null, "practice_id" uuid not null, "case_id" uuid not null, "milestone" smallint not null, "due_date" date not null, "window_start" date not null, "window_end" date not null, "status" text check ("status" in ('planned', 'invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed')) not null default 'planned', "booked_date" date null, "reinvite_needed" boolean not null default false, "lost_to_follow_up" boolean not null default false, "closed_on" date null, "note" varchar(500) null, "status_changed_at" timestamptz not null, "status_changed_by_id" uuid null, "created_at" timestamptz not null, "updated_at" timestamptz not null, constraint "recall_visit_pkey" primary key ("id"));`);
    this.addSql(`create index "recall_visit_practice_status_due_index" on "recall_visit" ("practice_id", "status", "due_date");`);
    this.addSql(`create index "recall_visit_practice_due_index" on "recall_visit" ("practice_id", "due_date");`);
    this.addSql(`alter table "recall_visit" add constraint "recall_visit_case_milestone_unique" unique ("case_id", "milestone");`);

    this.addSql(`create table "review" ("id" uuid not null, "practice_id" uuid not null, "case_id" uuid not null, "visit_id" uuid null, "assessor_id" uuid not null, "review_date" date not null, "days_since_completion" int not null, "tooth_status" text check ("tooth_status" in ('present', 'extracted', 'retreated', 'surgery')) not null, "pai_score" smallint null, "lesion_diameter_mm" numeric(4,1) null, "signs" jsonb not null default '{}', "other_findings" varchar(500) null, "outcome" text check ("outcome" in ('healed', 'healing', 'disease', 'tooth-extracted', 'retreated', 'apical-surgery')) not null, "success_strict" boolean not null, "success_lenient" boolean not null, "outcome_reasons" text[] not null default '{}', "created_at" timestamptz not null, "updated_at" timestamptz not null, constraint "review_pkey" primary key ("id"));`);
    this.addSql(`create index "review_case_date_index" on "review" ("case_id", "review_date");`);
    this.addSql(`create index "review_practice_outcome_index" on "review" ("practice_id", "outcome");`);
    this.addSql(`create index "review_visit_index" on "review" ("visit_id");`);

    this.addSql(`alter table "referrer" add constraint "referrer_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);

    this.addSql(`alter table "patient" add constraint "patient_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "patient" add constraint "patient_consent_recorded_by_id_foreign" foreign key ("consent_recorded_by_id") references "app_user" ("id") on update cascade on delete set null;`);

    this.addSql(`alter table "treatment_case" add constraint "treatment_case_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "treatment_case" add constraint "treatment_case_patient_id_foreign" foreign key ("patient_id") references "patient" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "treatment_case" add constraint "treatment_case_operator_id_foreign" foreign key ("operator_id") references "app_user" ("id") on update cascade on delete restrict;`);
    this.addSql(`alter table "treatment_case" add constraint "treatment_case_referrer_id_foreign" foreign key ("referrer_id") references "referrer" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "treatment_case" add constraint "treatment_case_created_by_id_foreign" foreign key ("created_by_id") references "app_user" ("id") on update cascade on delete set null;`);

    this.addSql(`alter table "recall_visit" add constraint "recall_visit_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "recall_visit" add constraint "recall_visit_case_id_foreign" foreign key ("case_id") references "treatment_case" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "recall_visit" add constraint "recall_visit_status_changed_by_id_foreign" foreign key ("status_changed_by_id") references "app_user" ("id") on update cascade on delete set null;`);

    this.addSql(`alter table "review" add constraint "review_practice_id_foreign" foreign key ("practice_id") references "practice" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "review" add constraint "review_case_id_foreign" foreign key ("case_id") references "treatment_case" ("id") on update cascade on delete cascade;`);
    this.addSql(`alter table "review" add constraint "review_visit_id_foreign" foreign key ("visit_id") references "recall_visit" ("id") on update cascade on delete set null;`);
    this.addSql(`alter table "review" add constraint "review_assessor_id_foreign" foreign key ("assessor_id") references "app_user" ("id") on update cascade on delete restrict;`);

    this.addSql(`alter table "practice" add column "recall_policy" jsonb not null default '{"milestones":[{"months":6,"windowBeforeDays":30,"windowAfterDays":60},{"months":12,"windowBeforeDays":60,"windowAfterDays":120},{"months":24,"windowBeforeDays":90,"windowAfterDays":180}]}';`);
  }

  override async down(): Promise<void> {
    this.addSql(`alter table "treatment_case" drop constraint "treatment_case_referrer_id_foreign";`);

    this.addSql(`alter table "treatment_case" drop constraint "treatment_case_patient_id_foreign";`);

    this.addSql(`alter table "recall_visit" drop constraint "recall_visit_case_id_foreign";`);

    this.addSql(`alter table "review" drop constraint "review_case_id_foreign";`);

    this.addSql(`alter table "review" drop constraint "review_visit_id_foreign";`);

    this.addSql(`drop table if exists "referrer" cascade;`);

    this.addSql(`drop table if exists "patient" cascade;`);

    this.addSql(`drop table if exists "treatment_case" cascade;`);

    this.addSql(`drop table if exists "recall_visit" cascade;`);

    this.addSql(`drop table if exists "review" cascade;`);

    this.addSql(`alter table "practice" drop column "recall_policy";`);
  }

}
