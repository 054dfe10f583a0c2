/**
 * The methods paragraph of the printed audit report (issue 12, item 8), in plain words: the
 * definitions at the top of lib/outcomes/cases.ts and the methods of compute.ts and funnel.ts.
 * Keep it in step with them (tests/unit/outcomes/report.test.ts checks the figures it names).
 */
import { COMPLETENESS_WARNING, FEW_CASES } from './compute';
import { EVENTS_PER_PARAMETER, MIN_LEVEL_CASES } from './funnel';
import { milestoneDays, windowDays } from './cases';

export function methodsParagraphs(minObservationDays: number): string[] {
  return [
    `Cases: completed treatments of the practice (archived cases and patients left out), chosen by completion date, clinician and kind. A milestone of M months is M × 365.25 / 12 days after completion (12 months = ${milestoneDays(12)} days), with a window of ± ${windowDays(12)} days at 12 months and ± ${windowDays(24)} days later on. A case is due for a milestone once its window has ended, and seen when it has a review inside the window or a terminal event (extraction, retreatment, apical surgery) found by the window's end.`,
    `Outcome: at a milestone, a terminal event found by the window's end (a failure), otherwise the outcome of the review in the window closest to the milestone, scored by Lamina's rules from the PAI and the lesion against the baseline, with the practice's minimum observation time of ${minObservationDays} days. At the latest review a year or more after completion: a terminal event at any time, otherwise the latest review on day 365 or later. Success is strict when healed and lenient when healed or healing; "uncertain" reviews are left out of n. Lost to follow-up: a case due for the milestone whose outcome then is not known (at the latest review: due for the 12-month review, with neither a review on or after day 365 nor a tooth event), whatever the reason; a recall visit closed as lost is one reason among others.`,
    `Figures: proportions with Wilson 95% intervals (Wilson 1927; Newcombe 1998); fewer than ${FEW_CASES} cases are marked "few cases". Completeness is the share of due cases seen at 12 and 24 months; below ${Math.round(COMPLETENESS_WARNING * 100)}% the results describe the reviewed cases, not the practice. Best and worst cases count every case not seen as a success or as a failure. Tooth survival: Kaplan-Meier on the review that found the loss, followed across later cases on the same tooth, with log-scale 95% intervals. By factor: Fisher's exact test for two levels, Pearson's chi-square test for more.`,
    `Clinician audit: each clinician's strict success against the practice's rate, with exact binomial 95% and 99.8% funnel limits (Spiegelhalter 2005, Stat Med 24:1185-1202). Risk-adjusted rates use indirect standardisation: a logistic case-mix model (lesion size, treatment kind, tooth group, PAI before treatment) fitted on the practice's judged cases gives each clinician's expected successes E; the adjusted rate is O/E times the practice's rate, shown against the same limits. Levels with fewer than ${MIN_LEVEL_CASES} cases join the commonest level; the model keeps at least ${EVENTS_PER_PARAMETER} of the rarer result per coefficient. A point outside the limits is a prompt to look at the case mix and the records, not a verdict.`,
  ];
}
