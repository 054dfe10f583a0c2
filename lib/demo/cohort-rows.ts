/**
 * Invented rows of a research cohort (lib/cohorts/types.ts CohortRow) for the archive writer's
 * tests and `npm run bench -- cohort-archive`: made again, identically, on every call (seeded by
 * `createRandom`), one at a time, so a pass over 100,000 rows holds none of them. Each row can
 * carry the identifiers a real reader must leave out (`withIdentifiers`: name, e-mail, phone,
 * registry number, a note — as extra properties of the patient and case objects), so a test can
 * prove the writer never lets one through. Everything here is invented.
 */
import type { CohortRow } from '@/lib/cohorts/types';
import { addDaysTo, type CalendarDate } from '@/lib/registry/calendar-date';
import type { RecordedReview } from '@/lib/scoring';
import { createRandom, type Random } from './random';

export interface SyntheticCohortOptions {
  rows: number;
  seed?: number;
  /** Completion dates from this day on, over `years` years (default 2015-01-01, 10). */
  from?: CalendarDate;
  years?: number;
  practices?: number;
  clinicians?: number;
  withIdentifiers?: boolean;
}

/** The identifiers planted on a row when `withIdentifiers` (what the leak test searches for). */
export interface PlantedIdentifiers {
  name: string;
  email: string;
  phone: string;
  registryNumber: string;
  notes: string;
}

const hex = (rnd: Random, n: number) => Array.from({ length: n }, () => '0123456789abcdef'[rnd.int(0, 15)]).join('');
const uuid = (rnd: Random) => `${hex(rnd, 8)}-${hex(rnd, 4)}-4${hex(rnd, 3)}-a${hex(rnd, 3)}-${hex(rnd, 12)}`;
const SYLLABLES = ['zan', 'qor', 'vel', 'mir', 'tox', 'bru', 'kel', 'dap', 'wyn', 'osk', 'fjo', 'nym'];
const word = (rnd: Random) => {
  const w = Array.from({ length: 3 }, () => rnd.pick(SYLLABLES)).join('');
  return w[0]!.toUpperCase() + w.slice(1);
};
const GROUPS = [
  ['molar', 0.45],
  ['premolar', 0.3],
  ['incisor', 0.17],
  ['canine', 0.08],
] as const;
const POSTAL = (rnd: Random) =>
  rnd.weighted<() => string>([
    [() => String(rnd.int(10000, 99999)), 0.7],
    [() => `03${rnd.int(600, 699)}`, 0.05], // a restricted three-digit area (036)
    [() => `${rnd.pick(['SW', 'NW', 'EH', 'M'])}${rnd.int(1, 20)} ${rnd.int(1, 9)}${rnd.pick(['AB', 'QX', 'ZT'])}`, 0.15],
    [() => '', 0.1],
  ])();

/** The rows, made again on every call (one pass). */
export async function* syntheticCohortRows(o: SyntheticCohortOptions): AsyncGenerator<CohortRow & { planted?: PlantedIdentifiers }> {
  const rnd = createRandom(o.seed ?? 14);
  const from = o.from ?? '2015-01-01';
  const span = Math.round((o.years ?? 10) * 365.25);
  const practices = Array.from({ length: o.practices ?? 2 }, () => uuid(rnd));
  const clinicians = Array.from({ length: o.clinicians ?? 5 }, () => uuid(rnd));
  const referrers = Array.from({ length: 6 }, () => uuid(rnd));
  let made = 0;
  while (made < o.rows) {
    const patientId = uuid(rnd);
    const practiceId = rnd.pick(practices);
    const dateOfBirth = addDaysTo('1925-01-01', rnd.int(0, 80 * 365));
    const sex = rnd.weighted([
      ['female', 0.52],
      ['male', 0.45],
      ['other', 0.01],
      ['not_stated', 0.02],
    ] as const);
    const postalCode = POSTAL(rnd) || null;
    const teeth = rnd.weighted([
      [1, 0.6],
      [2, 0.3],
      [3, 0.1],
    ] as const);
    const planted: PlantedIdentifiers | undefined = o.withIdentifiers
      ? {
          name: `${word(rnd)} ${word(rnd)}`,
          email: `${word(rnd).toLowerCase()}.${hex(rnd, 4)}@example.org`,
          phone: `+1 555 ${rnd.int(100, 999)} ${rnd.int(1000, 9999)}`,
          registryNumber: `RN-${rnd.int(100000, 999999)}`,
          notes: `Note ${word(rnd)} ${hex(rnd, 6)}: sensitive to cold`,
        }
      : undefined;
    for (let t = 0; t < teeth && made < o.rows; t++) {
      const completionDate = addDaysTo(from, rnd.int(0, span));
      const lesion = rnd.chance(0.45) ? 0 : Math.round(rnd.between(0.5, 12) * 10) / 10;
      const baselinePai = lesion === 0 ? rnd.int(1, 2) : rnd.int(3, 5);
      const kind = rnd.chance(0.25) ? 'nonsurgical_retreatment' : 'primary_treatment';
      const toothGroup = rnd.weighted(GROUPS);
      const reviews: RecordedReview[] = [];
      const hazard = (1 / 2500) * Math.exp(0.5 * (kind === 'primary_treatment' ? 0 : 1) + 0.06 * lesion);
      const failAt = -Math.log(Math.max(rnd.next(), 1e-12)) / hazard;
      const lastDay = rnd.int(100, 2200);
      for (const target of [180, 365, 730, 1095, 1461, 2000]) {
        const d = target + rnd.int(-30, 45);
        if (d > lastDay || rnd.chance(0.15)) continue;
        if (d >= failAt) {
          const status = rnd.weighted([
            ['present', 0.5],
            ['retreated', 0.25],
            ['extracted', 0.2],
            ['surgery', 0.05],
          ] as const);
          reviews.push({ reviewDate: addDaysTo(completionDate, d), toothStatus: status, paiScore: status === 'present' ? rnd.int(3, 5) : null, signs: {} });
          if (status !== 'present') break;
        } else {
          reviews.push({ reviewDate: addDaysTo(completionDate, d), toothStatus: 'present', paiScore: rnd.int(1, Math.max(1, Math.min(baselinePai, 2))), signs: {} });
        }
      }
      const row: CohortRow & { planted?: PlantedIdentifiers } = {
        case: {
          id: uuid(rnd),
          patientId,
          operatorId: rnd.pick(clinicians),
          kind,
          completionDate,
          baselinePai,
          lesionDiameterMm: lesion,
          fillLengthClass: rnd.weighted([
            ['within', 0.75],
            ['short', 0.15],
            ['beyond', 0.1],
          ] as const),
          toothGroup,
          toothArch: rnd.chance(0.5) ? 'upper' : 'lower',
          previousCaseId: kind === 'nonsurgical_retreatment' && rnd.chance(0.3) ? uuid(rnd) : null,
          referrerId: rnd.chance(0.4) ? rnd.pick(referrers) : null,
          openVisit: false,
          reviews,
        },
        patient: { dateOfBirth, sex, postalCode },
        practiceId,
      };
      if (planted) {
        row.planted = planted;
        Object.assign(row.patient, { name: planted.name, email: planted.email, phone: planted.phone, registryNumber: planted.registryNumber });
        Object.assign(row.case, { notes: planted.notes, registryNumber: planted.registryNumber });
      }
      made += 1;
      yield row;
    }
  }
}
