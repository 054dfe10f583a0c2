/**
 * The case service, split by kind of work: the list query (cases-list), the commands
 * (cases-commands), the column mapping (case-columns) and the case page's view model (case-page).
 * Import from here.
 */
export * from './cases-list';
export * from './case-page';
export * from './cases-commands';
export * from './case-columns';
