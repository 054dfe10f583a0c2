/**
 * Every migration, in order. `npm run migration:create` writes a new file here; add it to
 * this list by hand (bundlers and vitest cannot glob .ts migrations at run time).
 */
import type { MigrationObject } from '@mikro-orm/core';
import { Migration20261201221639 } from './Migration20261201221639';
import { Migration20261201223805 } from './Migration20261201223805';
import { Migration20261201230524 } from './Migration20261201230524';
import { Migration20261201232637 } from './Migration20261201232637';
import { Migration20261202100000 } from './Migration20261202100000';
import { Migration20261202110000 } from './Migration20261202110000';
import { Migration20261202120000 } from './Migration20261202120000';
import { Migration20261202130000 } from './Migration20261202130000';
import { Migration20261202140000 } from './Migration20261202140000';
import { Migration20261202150000 } from './Migration20261202150000';
import { Migration20261202160000 } from './Migration20261202160000';
import { Migration20261202170000 } from './Migration20261202170000';
import { Migration20261202180000 } from './Migration20261202180000';
import { Migration20261202190000 } from './Migration20261202190000';
import { Migration20261202200000 } from './Migration20261202200000';
import { Migration20261202210000 } from './Migration20261202210000';
import { Migration20261202220000 } from './Migration20261202220000';
import { Migration20261202230000 } from './Migration20261202230000';
import { Migration20261203130022 } from './Migration20261203130022';
import { Migration20261203170000 } from './Migration20261203170000';
import { Migration20261203230000 } from './Migration20261203230000';
import { Migration20261204120000 } from './Migration20261204120000';
import { Migration20261204130000 } from './Migration20261204130000';

export const migrationsList: MigrationObject[] = [
  { name: 'Migration20261201221639', class: Migration20261201221639 },
  { name: 'Migration20261201223805', class: Migration20261201223805 },
  { name: 'Migration20261201230524', class: Migration20261201230524 },
  { name: 'Migration20261201232637', class: Migration20261201232637 },
  { name: 'Migration20261202100000', class: Migration20261202100000 },
  { name: 'Migration20261202110000', class: Migration20261202110000 },
  { name: 'Migration20261202120000', class: Migration20261202120000 },
  { name: 'Migration20261202130000', class: Migration20261202130000 },
  { name: 'Migration20261202140000', class: Migration20261202140000 },
  { name: 'Migration20261202150000', class: Migration20261202150000 },
  { name: 'Migration20261202160000', class: Migration20261202160000 },
  { name: 'Migration20261202170000', class: Migration20261202170000 },
  { name: 'Migration20261202180000', class: Migration20261202180000 },
  { name: 'Migration20261202190000', class: Migration20261202190000 },
  { name: 'Migration20261202200000', class: Migration20261202200000 },
  { name: 'Migration20261202210000', class: Migration20261202210000 },
  { name: 'Migration20261202220000', class: Migration20261202220000 },
  { name: 'Migration20261202230000', class: Migration20261202230000 },
  { name: 'Migration20261203130022', class: Migration20261203130022 },
  { name: 'Migration20261203170000', class: Migration20261203170000 },
  { name: 'Migration20261203230000', class: Migration20261203230000 },
  { name: 'Migration20261204120000', class: Migration20261204120000 },
  { name: 'Migration20261204130000', class: Migration20261204130000 },
];
