/**
 * Research cohorts (issue 14), pure: the variable catalogue, de-identification, k-anonymity and
 * the export archive's writer (`writeCohortArchive`, the contract of ./types). No database.
 */
export * from './types';
export { COHORT_VARIABLES, COHORT_VARIABLE_KEYS, cohortVariable, exportColumns, dictionaryRows, type CohortVariable, type ExportRow } from './catalogue';
export { pseudonym, codeBook, ageBand, postalPrefix, yearPeriod, RESTRICTED_ZIP3, AGE_TOP } from './deidentify';
export { KAnonymityCounter, classKey, type KPlan, type KDecision } from './k-anonymity';
export { writeCohortArchive, COHORT_FILES, REVIEW_COLUMNS, PROGRESS_EVERY, cutAt } from './archive';
