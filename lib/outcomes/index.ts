/** The outcomes area's pure computation (issue 12): see cases.ts for the definitions, compute.ts for the figures. */
export * from './cases';
export * from './compute';
export * from './curves';
