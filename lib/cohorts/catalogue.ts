/**
 * The variable catalogue of a research export (issue 14): every column `cases.csv` can hold, with
 * the data dictionary's words for it (variable, label, type, unit, codes, derivation) and how its
 * value is worked out from a de-identified row. Pure. The factors are lib/outcomes/compute.ts
 * FACTORS (their codes, never their words, in the file; the words are in the dictionary); the
 * endpoints are lib/outcomes/cases.ts' definitions, in days since completion.
 *
 * Some variables are in every export (`always`: the pseudonymous ids, the completion year, the
 * practice code, the endpoints and the outcomes at the milestones); the others are chosen in the
 * cohort version (`COHORT_VARIABLE_KEYS`, what the app's schema should accept).
 */
import type { CsvValue } from '@/lib/csv/write';
import { FACTORS, type FactorKey } from '@/lib/outcomes/compute';
import { MILESTONES, milestoneDays, outcomeAfterAYear, outcomeAtMilestone, windowDays, type OutcomeCase } from '@/lib/outcomes/cases';
import { OUTCOME_LABELS, type Interval } from '@/lib/scoring';
import { SEXES } from '@/lib/schemas/patient';
import { ageBandCodes } from './deidentify';

/** One case after de-identification: everything a column may show (see lib/cohorts/archive.ts). */
export interface ExportRow {
  /** pseudonymous ids (lib/cohorts/deidentify.ts `pseudonym`) */
  caseId: string;
  patientId: string;
  previousCaseId: string | null;
  /** codes of the export (C01, R01, P01; 'none': no referrer recorded) */
  practice: string;
  clinician: string;
  referrer: string;
  /** "2019", or the five-year period "2015-2019" when generalised for k-anonymity */
  completionYear: string;
  /** "40-44", or "40-49" when generalised; "90+" */
  ageBand: string;
  sex: string;
  /** a US three-digit ZIP prefix, '000', or null (dropped; also when generalised) */
  postalPrefix: string | null;
  generalised: boolean;
  /** the case with its reviews cut at the export's day */
  case: OutcomeCase;
  healing: Interval;
  toothLoss: Interval;
  minObservationDays: number;
}

export type VariableType = 'identifier' | 'integer' | 'number' | 'categorical' | 'boolean';

export interface CohortVariable {
  key: string;
  label: string;
  type: VariableType;
  unit: string | null;
  /** code → words; null for open values (numbers, ids) */
  codes: Readonly<Record<string, string>> | null;
  derivation: string;
  /** in every export */
  always: boolean;
  /** a quasi-identifier: part of the k-anonymity classes when released */
  quasiIdentifier: boolean;
  value: (r: ExportRow) => CsvValue;
}

const OUTCOME_CODES: Readonly<Record<string, string>> = { ...OUTCOME_LABELS };
const BOOL_CODES = { '1': 'Yes', '0': 'No' } as const;

/** Where an endpoint's words come from (kept in the dictionary and the README). */
const HEALING_WORDS =
  'Failure to heal (lib/scoring caseObservations over the case’s own reviews, the practice’s minimum observation time): the interval between the last review without a failure (0 = completion) and the first review that found one (disease, or a terminal event: extraction, retreatment, apical surgery).';
const TOOTH_LOSS_WORDS =
  'Tooth loss (lib/scoring caseObservations over the case’s own reviews): the interval between the last review with the tooth present (0 = completion) and the review or event date of the extraction. Followed over this case’s reviews only; a later case on the same tooth is its own row (previous_case_id links them).';

function interval(key: string, label: string, which: 'left' | 'right', of: (r: ExportRow) => Interval, words: string): CohortVariable {
  return {
    key,
    label,
    type: 'integer',
    unit: 'days since completion',
    codes: null,
    derivation:
      which === 'left'
        ? `${words} Left end of the interval: the last day the endpoint was known not to have happened.`
        : `${words} Right end of the interval: the day it was found; empty when it has not been found (right-censored at the left end).`,
    always: true,
    quasiIdentifier: false,
    value: (r) => {
      const i = of(r);
      return which === 'left' ? i.left : i.right;
    },
  };
}
function censoredTime(key: string, label: string, of: (r: ExportRow) => Interval, words: string): CohortVariable[] {
  return [
    {
      key: `${key}_time`,
      label: `${label}: time (right-censored)`,
      type: 'integer',
      unit: 'days since completion',
      codes: null,
      derivation: `${words} As a right-censored time: the day of the review that found it (the interval's right end) when found, otherwise the last day it was known not to have happened (the left end) — as Lamina's Kaplan–Meier curves count it.`,
      always: true,
      quasiIdentifier: false,
      value: (r) => of(r).right ?? of(r).left,
    },
    {
      key: `${key}_event`,
      label: `${label}: event (1) or censored (0)`,
      type: 'boolean',
      unit: null,
      codes: BOOL_CODES,
      derivation: `1 when the endpoint was found (the interval has a right end), 0 when censored at ${key}_time.`,
      always: true,
      quasiIdentifier: false,
      value: (r) => (of(r).right !== null ? 1 : 0),
    },
  ];
}

function factor(key: FactorKey, variable: string, over: Partial<CohortVariable> = {}): CohortVariable {
  const f = FACTORS[key] as (typeof FACTORS)[FactorKey] & { levels?: Readonly<Record<string, string>> };
  return {
    key: variable,
    label: f.label,
    type: 'categorical',
    unit: null,
    codes: f.levels ?? null,
    derivation: `Lamina's outcome factor "${key}" (lib/outcomes/compute.ts FACTORS): its level's code for the case. "not_applicable": the field does not apply to the treatment kind; "not_recorded": left empty.`,
    always: false,
    quasiIdentifier: false,
    value: (r) => f.code(r.case),
    ...over,
  };
}

function milestone(months: number): CohortVariable {
  return {
    key: `outcome_${months}m`,
    label: `Outcome at ${months} months`,
    type: 'categorical',
    unit: null,
    codes: OUTCOME_CODES,
    derivation: `lib/outcomes/cases.ts outcomeAtMilestone: a terminal event found by the end of the window (day ${milestoneDays(months)} ± ${windowDays(months)}), otherwise the outcome of the review in the window closest to day ${milestoneDays(months)} (the later one on a tie). Empty: not seen at ${months} months (not yet due, or lost to follow-up).`,
    always: true,
    quasiIdentifier: false,
    value: (r) => outcomeAtMilestone(r.case, months, r.minObservationDays),
  };
}

export const COHORT_VARIABLES: readonly CohortVariable[] = [
  {
    key: 'case_id',
    label: 'Case (pseudonymous)',
    type: 'identifier',
    unit: null,
    codes: null,
    derivation: 'HMAC-SHA256 of the case under a secret made for this export and never kept: stable within the export, unlinkable to Lamina or to other exports.',
    always: true,
    quasiIdentifier: false,
    value: (r) => r.caseId,
  },
  {
    key: 'patient_id',
    label: 'Patient (pseudonymous; the cluster id)',
    type: 'identifier',
    unit: null,
    codes: null,
    derivation: 'HMAC-SHA256 of the patient under the export’s secret. Teeth of one patient share it: use it as the cluster in models (cluster(patient_id) in R’s coxph).',
    always: true,
    quasiIdentifier: false,
    value: (r) => r.patientId,
  },
  {
    key: 'previous_case_id',
    label: 'Earlier case on the same tooth (pseudonymous)',
    type: 'identifier',
    unit: null,
    codes: null,
    derivation: 'For a retreatment or apical surgery: the pseudonymous id of the tooth’s earlier case (which may not be in this cohort). Empty otherwise.',
    always: true,
    quasiIdentifier: false,
    value: (r) => r.previousCaseId,
  },
  {
    key: 'practice',
    label: 'Practice (code)',
    type: 'categorical',
    unit: null,
    codes: null,
    derivation: 'The practice as a code of this export (P01, P02…, numbered in the order of an HMAC of the practice under the export’s secret).',
    always: true,
    quasiIdentifier: true,
    value: (r) => r.practice,
  },
  {
    key: 'completion_year',
    label: 'Year of completion',
    type: 'categorical',
    unit: 'calendar year',
    codes: null,
    derivation: 'The calendar year of the completion date (the only date element kept, 45 CFR 164.514(b)(2)(i)(C)); a five-year period such as "2015-2019" when generalised for k-anonymity.',
    always: true,
    quasiIdentifier: true,
    value: (r) => r.completionYear,
  },
  {
    key: 'generalised',
    label: 'Quasi-identifiers generalised for k-anonymity',
    type: 'boolean',
    unit: null,
    codes: BOOL_CODES,
    derivation: '1 when the row’s equivalence class was smaller than k, so its age band was widened to 10 years, its completion year to a five-year period and its postal prefix dropped (see README).',
    always: true,
    quasiIdentifier: false,
    value: (r) => (r.generalised ? 1 : 0),
  },
  {
    key: 'age_band',
    label: 'Age at completion (band)',
    type: 'categorical',
    unit: 'years',
    codes: Object.fromEntries([...ageBandCodes(5), ...ageBandCodes(10)].map((c) => [c, c === '90+' ? '90 years or older' : `${c.replace('-', ' to ')} years`])),
    derivation: 'Whole years from the date of birth to the completion date, in five-year bands (ten-year when generalised); 90 and over as one band, "90+" (45 CFR 164.514(b)(2)(i)(C)). The date of birth is not exported.',
    always: false,
    quasiIdentifier: true,
    value: (r) => r.ageBand,
  },
  {
    key: 'sex',
    label: 'Sex',
    type: 'categorical',
    unit: null,
    codes: Object.fromEntries(SEXES.map((s) => [s, ({ female: 'Female', male: 'Male', other: 'Other', not_stated: 'Not stated' } as Record<string, string>)[s] ?? s])),
    derivation: 'The patient’s sex as recorded.',
    always: false,
    quasiIdentifier: true,
    value: (r) => r.sex,
  },
  {
    key: 'postal_prefix',
    label: 'ZIP code, first three digits',
    type: 'categorical',
    unit: null,
    codes: null,
    derivation:
      'The first three digits of a US ZIP code where its area holds more than 20,000 people, "000" where it does not (45 CFR 164.514(b)(2)(i)(B); HHS de-identification guidance 2012). Empty for other postal codes (dropped) and for generalised rows.',
    always: false,
    quasiIdentifier: true,
    value: (r) => r.postalPrefix,
  },
  factor('kind', 'kind'),
  factor('lesion', 'lesion'),
  {
    key: 'lesion_mm',
    label: 'Lesion diameter before treatment',
    type: 'number',
    unit: 'mm',
    codes: null,
    derivation: 'The largest diameter of the periapical lesion before treatment as recorded (0: no lesion).',
    always: false,
    quasiIdentifier: false,
    value: (r) => r.case.lesionDiameterMm,
  },
  factor('pai', 'pai', { type: 'integer', unit: 'PAI score (1–5)', derivation: 'The periapical index (PAI, Ørstavik 1986) before treatment, 1–5.' }),
  factor('fill', 'fill'),
  factor('density', 'density'),
  factor('group', 'tooth_group', { quasiIdentifier: true }),
  factor('arch', 'arch'),
  factor('sealer', 'sealer'),
  factor('technique', 'technique'),
  factor('complications', 'complications'),
  factor('coronal', 'coronal'),
  factor('definitive', 'definitive'),
  {
    key: 'clinician',
    label: 'Clinician (code)',
    type: 'categorical',
    unit: null,
    codes: null,
    derivation: 'The treating clinician as a code of this export (C01, C02…, numbered in the order of an HMAC under the export’s secret); no name or id.',
    always: false,
    quasiIdentifier: false,
    value: (r) => r.clinician,
  },
  {
    key: 'referrer',
    label: 'Referrer (code)',
    type: 'categorical',
    unit: null,
    codes: null,
    derivation: 'The referring dentist as a code of this export (R01, R02…, HMAC order); "none" when no referrer is recorded.',
    always: false,
    quasiIdentifier: false,
    value: (r) => r.referrer,
  },
  interval('healing_left', 'Failure to heal: interval, left end', 'left', (r) => r.healing, HEALING_WORDS),
  interval('healing_right', 'Failure to heal: interval, right end', 'right', (r) => r.healing, HEALING_WORDS),
  ...censoredTime('healing', 'Failure to heal', (r) => r.healing, HEALING_WORDS),
  interval('tooth_loss_left', 'Tooth loss: interval, left end', 'left', (r) => r.toothLoss, TOOTH_LOSS_WORDS),
  interval('tooth_loss_right', 'Tooth loss: interval, right end', 'right', (r) => r.toothLoss, TOOTH_LOSS_WORDS),
  ...censoredTime('tooth_loss', 'Tooth loss', (r) => r.toothLoss, TOOTH_LOSS_WORDS),
  ...MILESTONES.map(milestone),
  {
    key: 'outcome_latest',
    label: 'Outcome at the latest review a year or more after completion',
    type: 'categorical',
    unit: null,
    codes: OUTCOME_CODES,
    derivation: 'lib/outcomes/cases.ts outcomeAfterAYear (the registry’s primary endpoint): a terminal event at any time, otherwise the latest review on day 365 or later. Empty: none yet.',
    always: true,
    quasiIdentifier: false,
    value: (r) => outcomeAfterAYear(r.case, r.minObservationDays),
  },
];

const BY_KEY = new Map(COHORT_VARIABLES.map((v) => [v.key, v]));

/** The variables a cohort version may choose (the others are in every export). */
export const COHORT_VARIABLE_KEYS: readonly string[] = COHORT_VARIABLES.filter((v) => !v.always).map((v) => v.key);

export function cohortVariable(key: string): CohortVariable | undefined {
  return BY_KEY.get(key);
}

/** The columns of an export, in the catalogue's order: every `always` variable and the chosen ones. Unknown keys throw. */
export function exportColumns(chosen: readonly string[]): CohortVariable[] {
  const unknown = chosen.filter((k) => !BY_KEY.has(k));
  if (unknown.length) throw new RangeError(`Not a cohort variable: ${unknown.join(', ')} (lib/cohorts/catalogue.ts)`);
  const want = new Set(chosen);
  return COHORT_VARIABLES.filter((v) => v.always || want.has(v.key));
}

/** The dictionary's rows (dictionary.csv and .json). */
export function dictionaryRows(columns: readonly CohortVariable[], extraCodes: Readonly<Record<string, Readonly<Record<string, string>>>> = {}) {
  return columns.map((v) => ({
    variable: v.key,
    label: v.label,
    type: v.type,
    unit: v.unit,
    codes: extraCodes[v.key] ?? v.codes,
    derivation: v.derivation,
  }));
}

/** The codes as one cell of dictionary.csv: "code=words; code=words". */
export function codesCell(codes: Readonly<Record<string, string>> | null): string {
  return codes ? Object.entries(codes).map(([c, w]) => `${c}=${w}`).join('; ') : '';
}
