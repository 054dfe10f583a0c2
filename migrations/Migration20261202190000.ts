import { Migration } from '@mikro-orm/migrations';

/**
 * Issue 13, viewer and measurement (written by hand): a film's calibration (its source — the DICOM
 * pixel spacing or a known length drawn on the film —, mm per pixel across and down of the original
 * image, the drawn reference as JSON) and its lesion measurement (the largest diameter's two ends,
 * an optional outline, and the figures computed from them by lib/films/measure.ts), each with when
 * it was last set. Points are in the original image's pixels.
 */
export class Migration20261202190000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`alter table "film" add column "calibration_source" text check ("calibration_source" in ('dicom', 'drawn')) null, add column "mm_per_px_x" double precision null, add column "mm_per_px_y" double precision null, add column "calibration_reference" jsonb null, add column "calibrated_at" timestamptz null, add column "lesion_diameter" jsonb null, add column "lesion_outline" jsonb null, add column "lesion_diameter_mm" double precision null, add column "lesion_area_mm2" double precision null, add column "measured_at" timestamptz null;`);
    this.addSql(`alter table "film" add constraint "film_calibration_complete" check (("calibration_source" is null) = ("mm_per_px_x" is null) and ("mm_per_px_x" is null) = ("mm_per_px_y" is null) and ("mm_per_px_x" is null or ("mm_per_px_x" > 0 and "mm_per_px_y" > 0)));`);
    this.addSql(`alter table "film" add constraint "film_measurement_calibrated" check ("lesion_diameter_mm" is null or "calibration_source" is not null);`);
  }

  override async down(): Promise<void> {
    this.addSql(`alter table "film" drop constraint if exists "film_measurement_calibrated";`);
    this.addSql(`alter table "film" drop constraint if exists "film_calibration_complete";`);
    this.addSql(`alter table "film" drop column "calibration_source", drop column "mm_per_px_x", drop column "mm_per_px_y", drop column "calibration_reference", drop column "calibrated_at", drop column "lesion_diameter", drop column "lesion_outline", drop column "lesion_diameter_mm", drop column "lesion_area_mm2", drop column "measured_at";`);
  }
}
