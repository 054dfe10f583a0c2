import { Migration } from '@mikro-orm/migrations';
import { assessRecordedReview, type RecordedToothStatus } from '../lib/scoring/recorded';

/**
 * Outcome engine (issue 11), written by hand:
 * - review: `event_date` (the day of an extraction, retreatment or surgery when not the review
 *   date) and `extraction_reason` (endodontic, fracture, periodontal, other); the outcome
 *   'uncertain' (tenderness to percussion was always kept in `signs`, and is now scored);
 * - treatment_case: `previous_case_id`, the same tooth's earlier case (a retreatment or surgery
 *   links to the case it follows);
 * - practice: `min_observation_days` (default 365): before it an unchanged lesion is uncertain;
 * - every stored review outcome recomputed with the new rules (lib/scoring assessRecordedReview),
 *   in the same transaction, so existing databases end consistent with the rules.
 */
export class Migration20261202110000 extends Migration {
  override async up(): Promise<void> {
    await this.execute(`alter table "review" add column "event_date" date null, add column "extraction_reason" text check ("extraction_reason" in ('endodontic', 'fracture', 'periodontal', 'other')) null;`);
    await this.execute(`alter table "review" drop constraint if exists "review_outcome_check";`);
    await this.execute(`alter table "review" add constraint "review_outcome_check" check ("outcome" in ('healed', 'healing', 'uncertain', 'disease', 'tooth-extracted', 'retreated', 'apical-surgery'));`);
    await this.execute(`alter table "treatment_case" add column "previous_case_id" uuid null;`);
    await this.execute(`alter table "treatment_case" add constraint "treatment_case_previous_case_id_foreign" foreign key ("previous_case_id") references "treatment_case" ("id") on update cascade on delete set null;`);
    await this.execute(`create index "treatment_case_previous_case_index" on "treatment_case" ("previous_case_id");`);
    await this.execute(`alter table "practice" add column "min_observation_days" smallint not null default 365;`);
    await this.recomputeOutcomes();
  }

  /**
   * Recomputes every review's outcome, success flags and reasons; writes only those that changed.
   * Returns how many changed (tests/integration/review-outcomes.test.ts runs it on stale rows).
   */
  async recomputeOutcomes(): Promise<number> {
    const rows = (await this.execute(`
      select r.id, to_char(r.review_date, 'YYYY-MM-DD') as review_date, r.tooth_status, r.pai_score, r.signs,
             r.outcome, r.success_strict, r.success_lenient, r.outcome_reasons,
             to_char(c.completion_date, 'YYYY-MM-DD') as completion_date, c.pai_score as baseline_pai, p.min_observation_days
        from "review" r
        join "treatment_case" c on c.id = r.case_id
        join "practice" p on p.id = r.practice_id
       where c.completion_date is not null`)) as {
      id: string;
      review_date: string;
      tooth_status: RecordedToothStatus;
      pai_score: number | null;
      signs: Record<string, boolean> | null;
      outcome: string;
      success_strict: boolean;
      success_lenient: boolean;
      outcome_reasons: string[];
      completion_date: string;
      baseline_pai: number;
      min_observation_days: number;
    }[];
    const changed: { id: string; outcome: string; success_strict: boolean; success_lenient: boolean; outcome_reasons: string[] }[] = [];
    for (const r of rows) {
      const a = assessRecordedReview(
        { completionDate: r.completion_date, baselinePai: r.baseline_pai },
        { reviewDate: r.review_date, toothStatus: r.tooth_status, paiScore: r.pai_score, signs: r.signs ?? {} },
        r.min_observation_days,
      );
      const same =
        a.outcome === r.outcome &&
        a.successStrict === r.success_strict &&
        a.successLenient === r.success_lenient &&
        JSON.stringify(a.reasons) === JSON.stringify(r.outcome_reasons ?? []);
      if (!same) changed.push({ id: r.id, outcome: a.outcome, success_strict: a.successStrict, success_lenient: a.successLenient, outcome_reasons: a.reasons });
    }
    for (let i = 0; i < changed.length; i += 1000) {
      await this.execute(
        `update "review" as r
            set "outcome" = v.outcome, "success_strict" = v.success_strict, "success_lenient" = v.success_lenient, "outcome_reasons" = v.outcome_reasons
           from jsonb_to_recordset(?::jsonb) as v(id uuid, outcome text, success_strict boolean, success_lenient boolean, outcome_reasons text[])
          where r.id = v.id`,
        [JSON.stringify(changed.slice(i, i + 1000))],
      );
    }
    return changed.length;
  }

  override async down(): Promise<void> {
    // Before this migration an unchanged lesion was disease at any time.
    await this.execute(`update "review" set "outcome" = 'disease', "success_strict" = false, "success_lenient" = false, "outcome_reasons" = array['lesion unchanged'] where "outcome" = 'uncertain';`);
    await this.execute(`alter table "review" drop constraint if exists "review_outcome_check";`);
    await this.execute(`alter table "review" add constraint "review_outcome_check" check ("outcome" in ('healed', 'healing', 'disease', 'tooth-extracted', 'retreated', 'apical-surgery'));`);
    await this.execute(`alter table "review" drop column "event_date", drop column "extraction_reason";`);
    await this.execute(`alter table "treatment_case" drop constraint "treatment_case_previous_case_id_foreign";`);
    await this.execute(`drop index "treatment_case_previous_case_index";`);
    await this.execute(`alter table "treatment_case" drop column "previous_case_id";`);
    await this.execute(`alter table "practice" drop column "min_observation_days";`);
  }
}
