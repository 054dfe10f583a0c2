/**
 * The methods README of a research export: the cohort, the files, the outcome and censoring
 * definitions with their sources (the wording of lib/outcomes/cases.ts' header and
 * lib/outcomes/methods.ts — keep them in step), the de-identification applied and its figures.
 * Pure: it names no patient, clinician or id, only the export's codes and counts.
 */
import { methodsParagraphs } from '@/lib/outcomes/methods';
import { milestoneDays, windowDays } from '@/lib/outcomes/cases';
import { SCORING_CAUTION } from '@/lib/scoring';
import type { CohortVariable } from './catalogue';
import { RESTRICTED_ZIP3 } from './deidentify';
import type { KPlan } from './k-anonymity';
import type { CohortArchiveInput, CohortExportSummary } from './types';

const QI_WORDS: Record<string, string> = {
  practice: 'practice',
  completion_year: 'year of completion',
  age_band: 'age band',
  sex: 'sex',
  tooth_group: 'tooth group',
  postal_prefix: 'ZIP code prefix',
};

/** One line of text for the README, with Markdown's special characters at line start made harmless. */
const safe = (s: string) => s.replace(/[\r\n]+/g, ' ').replace(/^([#>*\-+|])/, '\\$1');

export function cohortReadme({
  input,
  summary,
  plan,
  columns,
  released,
}: {
  input: CohortArchiveInput;
  summary: CohortExportSummary;
  plan: KPlan;
  columns: readonly CohortVariable[];
  released: readonly string[];
}): string {
  const minObs = input.minObservationDays;
  const [casesPara, outcomePara] = methodsParagraphs(minObs);
  const outcome = outcomePara!.replace(/\s*Lost to follow-up:[^.]*\./, '');
  const qi = released.map((q) => QI_WORDS[q] ?? q).join(', ');
  return `# Research export: ${safe(input.cohort.name)} (version ${input.cohort.version})

Made by Lamina on ${input.today} from a saved cohort version, so it can be made again.
Cohort filters: ${safe(input.cohort.filtersText) || 'none'}.

${SCORING_CAUTION} Lamina supports clinical judgement; these data describe treated teeth, they do not diagnose.

| | |
| --- | --- |
| Cases | ${summary.cases} |
| Patients | ${summary.patients} |
| Reviews | ${summary.reviews} |
| k (smallest class size required) | ${summary.k} |
| Rows generalised | ${summary.generalised} |
| Rows suppressed | ${summary.suppressed} |
| Released equivalence classes | ${plan.classes} (the smallest holds ${plan.smallestClass}) |
| Smallest l (distinct outcomes in a class) | ${summary.minL} |

## Files

- \`cases.csv\`: one row per case (RFC 4180, UTF-8, CRLF line ends), the columns of the dictionary.
- \`reviews.csv\`: one row per review of those cases up to ${input.today} (long format): \`case_id\`, \`days\` since completion, \`pai\`, \`outcome\`.
- \`dictionary.csv\`, \`dictionary.json\`: every variable with its label, type, unit, codes and derivation.
- \`analysis.R\`: loads the files; Kaplan–Meier (\`survfit\`) and a Cox model (\`coxph\`) with \`cluster(patient_id)\` (R with the survival package).
- \`analysis.py\`: loads the files with pandas and prints the Kaplan–Meier estimates.

Cells that begin with = + - @ are written with a leading ' so spreadsheets do not run them as formulas (OWASP, CSV injection).

## Cases and outcomes

${casesPara}

${outcome}

Follow-up is cut on the day of the export (${input.today}); reviews after it are not used. Outcomes are scored by Lamina's rules (lib/scoring) with the practice's minimum observation time of ${minObs} days.

Lost to follow-up (Lamina's one definition, lib/outcomes/cases.ts \`lostAt\`): a case due for a milestone whose outcome then is not known — at 12, 24 or 48 months, due and not seen in the window (an empty \`outcome_12m\`, \`outcome_24m\`, \`outcome_48m\` once the window has ended); at the primary endpoint, due for the 12-month review and neither a review on or after day 365 nor a tooth event (an empty \`outcome_latest\`). Outcome studies count loss to follow-up so (recall rate = reviewed ÷ due; e.g. Ng et al. 2007, Int Endod J 40:921; STROBE item 13).

## Endpoints and censoring

Times are whole days since the completion of the case (day 0). Milestones: 12 months = ${milestoneDays(12)} days (window ± ${windowDays(12)}), 24 months = ${milestoneDays(24)} days and 48 months = ${milestoneDays(48)} days (windows ± ${windowDays(24)}).

- **Failure to heal** (\`healing_*\`): a failure (disease, or a terminal event: extraction, retreatment, apical surgery) is only ever found at a review, so the time is interval-censored: \`healing_left\` is the last review without a failure (0 = completion), \`healing_right\` the review that found it (empty: not found, right-censored at \`healing_left\`). For methods that need one time, \`healing_time\` is the review that found the failure (event 1) or the last review without one (event 0), as Lamina's Kaplan–Meier curves count it; interval-censored methods (Turnbull 1976, J R Stat Soc B 38:290; R's \`survival::Surv(type = "interval2")\`) use the interval.
- **Tooth loss** (\`tooth_loss_*\`): the extraction, between the last review with the tooth present and the extraction (its own date when recorded). Followed over the case's own reviews; a retreatment or surgery case on the same tooth is its own row, linked by \`previous_case_id\`.
- Kaplan–Meier (Kaplan & Meier 1958, J Am Stat Assoc 53:457) and Cox models (Cox 1972, J R Stat Soc B 34:187) with a patient's teeth as a cluster: robust (sandwich) standard errors (Lin & Wei 1989, J Am Stat Assoc 84:1074), as \`coxph(..., cluster = patient_id)\`.

## De-identification

HIPAA Safe Harbor, 45 CFR 164.514(b)(2): the 18 kinds of identifier are removed.

- Names, addresses, telephone and fax numbers, e-mail addresses, registry and record numbers, notes and every other free text never enter the export.
- Patients and cases have pseudonymous ids (\`pt-…\`, \`cs-…\`): HMAC-SHA256 under a secret made for this export alone and never stored, so they cannot be traced back to Lamina's records or linked with another export.
- Dates: every time is in days since completion; the completion keeps its calendar year only; age at completion is given in bands (five years; ten when generalised) with everyone aged 90 or over in one band, "90+".
- ZIP codes: at most the first three digits of a US ZIP code, and "000" for the three-digit areas of 20,000 people or fewer (${RESTRICTED_ZIP3.join(', ')}; HHS, Guidance Regarding Methods for De-identification, 2012); every other postal code is dropped.${columns.some((v) => v.key === 'postal_prefix') ? '' : ' This export has no postal variable.'}
- Clinicians, referrers and practices are codes of this export (C01, R01, P01…), numbered in an order that reveals nothing (an HMAC under the export's secret).

k-anonymity (Sweeney 2002, Int J Uncertain Fuzziness Knowl-Based Syst 10:557) with k = ${summary.k} on the quasi-identifiers released: ${qi}. Rows whose class held fewer than k rows were generalised (ten-year age band, five-year period of completion, ZIP prefix dropped): ${summary.generalised} rows (column \`generalised\` = 1). Rows still in a class smaller than k were suppressed (left out): ${summary.suppressed} rows. Every row of \`cases.csv\` shares its quasi-identifiers with at least ${summary.k - 1} other rows.

l-diversity (Machanavajjhala et al. 2007, ACM TKDD 1:3) is reported, not enforced: the outcome at the latest review a year or more after completion ("not known" counted as a value) takes at least ${summary.minL} distinct value${summary.minL === 1 ? '' : 's'} in every released class. Where l is 1, every case of some class had the same outcome: take care when reporting small groups.
`;
}
