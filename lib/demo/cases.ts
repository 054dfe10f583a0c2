/**
 * The invented demo world for the seed: a specialist practice in an invented town, its staff,
 * referring dentists, ~630 patients and 760 completed cases over the five years before `today` (five,
 * so that some teeth are seen at their four-year review and tooth survival at four years can be read),
 * each with its recall visits (in every status) and, at attended visits, the raw review findings.
 *
 * Everything is invented: names are made up (family names are built from syllables), e-mails are
 * on the reserved `.invalid` domain, phone numbers are in the 07700 900xxx range set aside for
 * fiction, postal codes use the unused "ZZ" area. Deterministic: the same `seed` and `today` give
 * the same world (a seeded generator, no Math.random, no clock).
 *
 * Mixes (common practice in specialist endodontics, approximate and invented for the demo): molars
 * are treated most, then premolars, then anterior teeth; about two thirds of cases are primary
 * treatments, a quarter non-surgical retreatments, a few apical surgeries, vital pulp therapies and
 * (for young patients) regenerative procedures. Fills are mostly 0–2 mm short of the apex, some more
 * than 2 mm short, some beyond.
 *
 * Healing is set so that the world's rates sit inside the ranges the literature reports, by
 * factor: primary treatment without / with a lesion, retreatment, lesion size, fill length class
 * (Ng et al. 2007, 2008 systematic reviews of primary and secondary root canal treatment outcome;
 * Sjögren et al. 1990 for fill length; tooth survival after Ng et al. 2010 — figures from memory,
 * the ranges and their sources are in tests/unit/demo/rates.test.ts). The probabilities are set
 * for the demo and are no estimate of anything. Patients have 1.1–1.3 treated teeth on average;
 * about a third stop coming to reviews within four years; a failing tooth may be extracted,
 * re-treated or operated on, at the practice (a retreatment or surgery is a new case linked to
 * the tooth's earlier one) or elsewhere (found at the next review, often with its date). Events
 * are recorded only while the patient is followed, the same as for teeth without an event, so
 * censoring and events follow one rule.
 *
 * Plain objects only: the seed persists them and computes outcomes with the scoring rules.
 */
import type { Role } from '@/lib/auth/roles';
import { planVisits, type PlannedVisit } from '@/lib/recall/plan';
import { canTransition, type VisitStatus } from '@/lib/recall/status';
import { addDaysTo, addMonthsClamped, compareDates, daysBetween, type CalendarDate } from '@/lib/registry/calendar-date';
import type {
  ApicalDiagnosis,
  CaseImport,
  CaseKind,
  Complication,
  CompletionRestoration,
  DefinitiveRestoration,
  FillingTechnique,
  PreopSymptom,
  PulpalDiagnosis,
  SealerClass,
} from '@/lib/schemas/case';
import type { PatientCreate, RecallChannel, Sex } from '@/lib/schemas/patient';
import { RecallPolicySchema, type RecallPolicy } from '@/lib/schemas/recall-policy';
import type { ExtractionReason, ToothStatus } from '@/lib/schemas/review';
import { toothInfo } from '@/lib/teeth';
import { DEMO_PRACTICE, DEMO_USERS } from './people';
import { clamp, createRandom, roundTo, type Random } from './random';

// --- the world's fixed parts --------------------------------------------------------------------

export const DEMO_TOWN = 'Ellery Bay';
export const DEMO_SEED = 20260601;

/** The demo practice asks for a 4-year review too (ESE 2006), so the added-milestone case is visible. */
export const DEMO_RECALL_POLICY: RecallPolicy = RecallPolicySchema.parse({ milestones: [6, 12, 24, 48].map((months) => ({ months })) });

export interface DemoStaff {
  email: string;
  name: string;
  roles: Role[];
}

/** Clinicians beyond the one in people.ts, so the practice has four. Invented names. */
export const DEMO_EXTRA_CLINICIANS: readonly DemoStaff[] = [
  { email: 'clinician2@lamina-demo.invalid', name: 'Teodora Wrenfield', roles: ['clinician'] },
  { email: 'clinician3@lamina-demo.invalid', name: 'Malik Ferrowby', roles: ['clinician'] },
  { email: 'clinician4@lamina-demo.invalid', name: 'Sunniva Ardeluce', roles: ['clinician'] },
];

const REFERRING_PRACTICES = [
  'Gullsett Dental',
  'Wrenlow Dental Care',
  'Saltvale Dental Studio',
  'Quenford Street Dental',
  'Brindlecote Dental Practice',
  'Fenwhistle Dental',
  'Orrinmouth Family Dental',
  'Tarnheddle Dental',
] as const;

const FEMALE_NAMES = ['Amara', 'Anouk', 'Carys', 'Cleo', 'Elin', 'Freya', 'Greta', 'Hana', 'Ines', 'Juno', 'Kaia', 'Lina', 'Mirela', 'Nell', 'Oona', 'Priya', 'Rhea', 'Rosa', 'Talia', 'Tove', 'Uma', 'Vera', 'Willa', 'Yara', 'Zora', 'Maren', 'Signe', 'Ottilie', 'Esme', 'Liesel'];
const MALE_NAMES = ['Bram', 'Dario', 'Emeka', 'Farid', 'Gideon', 'Hamish', 'Idris', 'Jonah', 'Kofi', 'Leif', 'Mateo', 'Nadim', 'Osric', 'Piet', 'Quentin', 'Silas', 'Soren', 'Ugo', 'Viggo', 'Yusuf', 'Zeno', 'Anselm', 'Corvin', 'Teodor', 'Lorcan', 'Ruben', 'Ivo', 'Matthias', 'Elias', 'Bastian'];
const NEUTRAL_NAMES = ['Ari', 'Robin', 'Sasha', 'Noor', 'Kim', 'Alex'];
const FAMILY_HEADS = ['Quill', 'Vell', 'Kest', 'Pell', 'Sedge', 'Yarrow', 'Gorse', 'Nettle', 'Rook', 'Fen', 'Larken', 'Brind', 'Orrin', 'Tams', 'Whin', 'Marl', 'Corrie', 'Dunna', 'Harl', 'Skell', 'Tull', 'Wend', 'Alder', 'Bracken', 'Cray'];
const FAMILY_TAILS = ['mere', 'holt', 'combe', 'thwaite', 'wick', 'hallow', 'brook', 'dene', 'garth', 'ley', 'by', 'stow', 'ridge', 'moss', 'worth'];

// --- output shapes ------------------------------------------------------------------------------

export interface DemoReferrer {
  key: string;
  name: string;
  practiceName: string;
  email: string;
}

export interface DemoPatient extends PatientCreate {
  /** = registryNumber; cases refer to it. */
  key: string;
}

/** Raw findings of one review, as the review form would record them (no outcome). */
export interface DemoReview {
  reviewDate: CalendarDate;
  assessorEmail: string;
  toothStatus: ToothStatus;
  paiScore?: number;
  lesionDiameterMm?: number;
  painOnBiting?: boolean;
  tenderToPercussion?: boolean;
  tenderToPalpation?: boolean;
  spontaneousPain?: boolean;
  swelling?: boolean;
  sinusTract?: boolean;
  mobility?: boolean;
  /** The day of an extraction, retreatment or surgery found at this review, when known and not the review date. */
  eventDate?: CalendarDate;
  extractionReason?: ExtractionReason;
}

export interface DemoStatusStep {
  status: VisitStatus;
  on: CalendarDate;
}

export interface DemoVisit extends PlannedVisit {
  status: VisitStatus;
  /** Every status the visit went through, from planned (on the completion date) to `status`. */
  history: DemoStatusStep[];
  /** The review, when the visit was attended. */
  review?: DemoReview;
}

export interface DemoCase {
  key: string;
  patientKey: string;
  /** The same tooth's earlier case, when this one re-treats or operates on it. */
  previousCaseKey: string | null;
  operatorEmail: string;
  referrerKey: string | null;
  /** The case fields (ids left out: the seed links patient, operator and referrer by key). */
  data: CaseImport;
  visits: DemoVisit[];
  /** Reviews outside the recall plan: a tooth extracted, re-treated or operated on at the practice between visits. */
  unplannedReviews: DemoReview[];
}

export interface DemoWorld {
  seed: number;
  today: CalendarDate;
  practice: { slug: string; name: string; town: string; toothNotation: 'fdi'; recallPolicy: RecallPolicy };
  staff: DemoStaff[];
  /** E-mails of the four clinicians, in order. */
  clinicians: string[];
  referrers: DemoReferrer[];
  patients: DemoPatient[];
  cases: DemoCase[];
}

export interface DemoWorldOptions {
  /** The day the world is seen from, 'YYYY-MM-DD' (the seed passes the practice's today). */
  today: CalendarDate;
  seed?: number;
  /** Default 630 (760 cases: about 1.2 treated teeth per patient). */
  patients?: number;
  /** Completed cases; default 760 (at least 600 over the last four years). */
  cases?: number;
}

// --- generator ----------------------------------------------------------------------------------

export function generateDemoWorld(options: DemoWorldOptions): DemoWorld {
  const { today } = options;
  const seed = options.seed ?? DEMO_SEED;
  const nPatients = options.patients ?? 630;
  const nCases = options.cases ?? 760;
  if (nCases < nPatients) throw new RangeError('Every demo patient has at least one case: cases must be >= patients.');
  const rng = createRandom(seed);

  const staff: DemoStaff[] = [...DEMO_USERS.map((u) => ({ email: u.email, name: u.name, roles: [...u.roles] }))];
  for (const c of DEMO_EXTRA_CLINICIANS) if (!staff.some((s) => s.email === c.email)) staff.push({ ...c, roles: [...c.roles] });
  const clinicians = staff.filter((s) => s.roles.includes('clinician')).map((s) => s.email).slice(0, 4);

  const referrers: DemoReferrer[] = Array.from({ length: 14 }, (_, i) => {
    const given = rng.pick(rng.chance(0.5) ? FEMALE_NAMES : MALE_NAMES);
    const family = familyName(rng);
    return {
      key: `ref-${String(i + 1).padStart(2, '0')}`,
      name: `Dr ${given} ${family}`,
      practiceName: REFERRING_PRACTICES[i % REFERRING_PRACTICES.length]!,
      email: `${ascii(given)}.${ascii(family)}@referrers.lamina-demo.invalid`,
    };
  });

  const people = Array.from({ length: nPatients }, (_, i) => makePerson(rng, i, today));
  const earliest = addMonthsClamped(today, -60);
  const span = daysBetween(earliest, addDaysTo(today, -7));

  // Which patient each case belongs to: everyone once, then a second (rarely a third) tooth for some,
  // so a patient has about 1.2 treated teeth (cohorts report about 1.1–1.3).
  const owners = people.map((_, i) => i);
  const count = people.map(() => 1);
  for (let i = nPatients; i < nCases; i++) {
    let owner = rng.int(0, nPatients - 1);
    while (count[owner]! >= 3) owner = (owner + 1) % nPatients;
    count[owner]!++;
    owners.push(owner);
  }
  const completions = owners.map(() => addDaysTo(earliest, rng.int(0, span)));
  // Each patient may stop coming to reviews some time after the first completed case: about 30% within four years.
  people.forEach((person, i) => {
    const first = completions.filter((_, k) => owners[k] === i).sort()[0]!;
    const years = -Math.log(1 - rng.next()) / LOSS_PER_YEAR;
    person.lostFrom = years < 10 ? addDaysTo(first, Math.round(years * 365.25)) : null;
  });

  const cases: DemoCase[] = [];
  owners.forEach((owner, i) => {
    const person = people[owner]!;
    cases.push(...makeCase(rng, `case-${String(i + 1).padStart(4, '0')}`, person, completions[i]!, today, clinicians, referrers));
  });
  cases.sort((a, b) => compareDates(a.data.completionDate, b.data.completionDate) || a.key.localeCompare(b.key));

  const patients: DemoPatient[] = people.map((p) => {
    const first = cases.filter((c) => c.patientKey === p.registryNumber).reduce((d, c) => (c.data.startDate < d ? c.data.startDate : d), today);
    const { usedTeeth: _u, ageToday: _a, adherence: _h, lostFrom: _l, ...patient } = p;
    return { ...patient, consentDate: first, key: p.registryNumber };
  });

  return {
    seed,
    today,
    practice: { slug: DEMO_PRACTICE.slug, name: DEMO_PRACTICE.name, town: DEMO_TOWN, toothNotation: 'fdi', recallPolicy: DEMO_RECALL_POLICY },
    staff,
    clinicians,
    referrers,
    patients,
    cases,
  };
}

// --- people -------------------------------------------------------------------------------------

/** Hazard of a patient leaving follow-up, per year: 1 − e^(−4λ) ≈ 0.3 within four years. */
const LOSS_PER_YEAR = -Math.log(0.7) / 4;

interface Person extends Omit<PatientCreate, 'consentDate'> {
  consentDate: CalendarDate;
  ageToday: number;
  usedTeeth: Set<number>;
  /** Likelihood of coming to reviews (patient-level), and the day they stop coming, if they do. */
  adherence: number;
  lostFrom: CalendarDate | null;
}

function familyName(rng: Random): string {
  return rng.pick(FAMILY_HEADS) + rng.pick(FAMILY_TAILS);
}

function ascii(s: string): string {
  return s.toLowerCase().replace(/[^a-z]/g, '');
}

function makePerson(rng: Random, i: number, today: CalendarDate): Person {
  const sex: Sex = rng.weighted<Sex>([
    ['female', 52],
    ['male', 45],
    ['other', 1],
    ['not_stated', 2],
  ]);
  const givenName = rng.pick(sex === 'female' ? FEMALE_NAMES : sex === 'male' ? MALE_NAMES : NEUTRAL_NAMES);
  const familyNameValue = familyName(rng);
  // Age today: mostly adults; about 3% teenagers (vital pulp therapy, regenerative procedures).
  const ageToday = rng.chance(0.03) ? rng.int(13, 19) : clamp(Math.round(rng.normal(52, 15)), 20, 89);
  const dateOfBirth = addDaysTo(today, -Math.round(ageToday * 365.25) - rng.int(0, 364));
  const recallContact = rng.chance(0.92);
  const recallChannel: RecallChannel = recallContact
    ? rng.weighted<RecallChannel>([
        ['email', 65],
        ['phone', 25],
        ['post', 10],
      ])
    : 'none';
  const n = String(i + 1).padStart(5, '0');
  return {
    registryNumber: `EB-${n}`,
    givenName,
    familyName: familyNameValue,
    dateOfBirth,
    sex,
    email: recallChannel === 'email' || rng.chance(0.5) ? `${ascii(givenName)}.${ascii(familyNameValue)}.${n}@patients.lamina-demo.invalid` : undefined,
    phone: `07700 900${String(i % 1000).padStart(3, '0')}`,
    postalCode: `ZZ${1 + (i % 9)} ${1 + (i % 7)}${String.fromCharCode(65 + (i % 23))}${String.fromCharCode(65 + ((i * 7) % 23))}`,
    recallContact,
    recallChannel,
    researchUse: rng.chance(0.8),
    consentDate: today,
    archived: false,
    ageToday,
    usedTeeth: new Set<number>(),
    adherence: clamp(rng.normal(1, 0.08), 0.8, 1.1),
    lostFrom: null,
  };
}

// --- one case -----------------------------------------------------------------------------------

/** Relative frequency of each permanent tooth in a specialist endodontic practice (approximate, for the demo). */
const TOOTH_WEIGHTS: readonly (readonly [number, number])[] = [
  ...[16, 26, 36, 46].map((t) => [t, 9] as const),
  ...[17, 27, 37, 47].map((t) => [t, 5.5] as const),
  ...[18, 28, 38, 48].map((t) => [t, 0.6] as const),
  ...[14, 15, 24, 25].map((t) => [t, 4] as const),
  ...[34, 35, 44, 45].map((t) => [t, 2.5] as const),
  ...[11, 12, 21, 22].map((t) => [t, 1.8] as const),
  ...[13, 23].map((t) => [t, 0.9] as const),
  ...[31, 32, 41, 42].map((t) => [t, 0.5] as const),
  ...[33, 43].map((t) => [t, 0.4] as const),
];

function pickTooth(rng: Random, kind: CaseKind, used: Set<number>): number {
  const factor = (t: number) => {
    const g = toothInfo(t).group;
    if (kind === 'regenerative_endodontics') return [11, 21, 12, 22, 35, 45].includes(t) ? 1 : 0;
    if (kind === 'apical_surgery') return g === 'molar' ? (t % 10 === 7 || t % 10 === 8 ? 0.1 : 0.5) : g === 'premolar' ? 1.5 : 4;
    if (kind === 'vital_pulp_therapy') return g === 'molar' ? 1.5 : g === 'premolar' ? 1 : 0.3;
    return 1;
  };
  const entries = TOOTH_WEIGHTS.filter(([t]) => !used.has(t)).map(([t, w]) => [t, w * factor(t)] as const).filter(([, w]) => w > 0);
  if (entries.length === 0) return rng.weighted(TOOTH_WEIGHTS.filter(([t]) => !used.has(t)));
  return rng.weighted(entries);
}

function pickKind(rng: Random, ageAtStart: number): CaseKind {
  const kind = rng.weighted<CaseKind>([
    ['primary_treatment', 67],
    ['nonsurgical_retreatment', 23.5],
    ['apical_surgery', 6],
    ['vital_pulp_therapy', 2.5],
    ['regenerative_endodontics', ageAtStart < 18 ? 12 : 0],
  ]);
  return kind;
}

function pickDiagnosis(rng: Random, kind: CaseKind): { pulpal: PulpalDiagnosis; apical: ApicalDiagnosis } {
  switch (kind) {
    case 'primary_treatment': {
      const pulpal = rng.weighted<PulpalDiagnosis>([
        ['symptomatic_irreversible_pulpitis', 24],
        ['asymptomatic_irreversible_pulpitis', 9],
        ['pulp_necrosis', 50],
        ['previously_initiated_therapy', 14],
        ['normal_pulp', 3],
      ]);
      const vital = pulpal !== 'pulp_necrosis' && pulpal !== 'previously_initiated_therapy';
      const apical = vital
        ? rng.weighted<ApicalDiagnosis>([
            ['normal_apical_tissues', 45],
            ['symptomatic_apical_periodontitis', 45],
            ['condensing_osteitis', 5],
            ['asymptomatic_apical_periodontitis', 5],
          ])
        : rng.weighted<ApicalDiagnosis>([
            ['asymptomatic_apical_periodontitis', 45],
            ['symptomatic_apical_periodontitis', 22],
            ['chronic_apical_abscess', 12],
            ['acute_apical_abscess', 6],
            ['normal_apical_tissues', 15],
          ]);
      return { pulpal, apical };
    }
    case 'nonsurgical_retreatment':
      return {
        pulpal: 'previously_treated',
        apical: rng.weighted<ApicalDiagnosis>([
          ['asymptomatic_apical_periodontitis', 55],
          ['symptomatic_apical_periodontitis', 18],
          ['chronic_apical_abscess', 13],
          ['acute_apical_abscess', 4],
          ['normal_apical_tissues', 10],
        ]),
      };
    case 'apical_surgery':
      return {
        pulpal: 'previously_treated',
        apical: rng.weighted<ApicalDiagnosis>([
          ['asymptomatic_apical_periodontitis', 70],
          ['chronic_apical_abscess', 15],
          ['symptomatic_apical_periodontitis', 10],
          ['normal_apical_tissues', 5],
        ]),
      };
    case 'vital_pulp_therapy':
      return {
        pulpal: rng.weighted<PulpalDiagnosis>([
          ['symptomatic_irreversible_pulpitis', 55],
          ['reversible_pulpitis', 25],
          ['asymptomatic_irreversible_pulpitis', 20],
        ]),
        apical: rng.weighted<ApicalDiagnosis>([
          ['normal_apical_tissues', 70],
          ['symptomatic_apical_periodontitis', 30],
        ]),
      };
    case 'regenerative_endodontics':
      return {
        pulpal: 'pulp_necrosis',
        apical: rng.weighted<ApicalDiagnosis>([
          ['asymptomatic_apical_periodontitis', 60],
          ['chronic_apical_abscess', 25],
          ['acute_apical_abscess', 15],
        ]),
      };
  }
}

/** The PAI a radiolucency of `mm` would usually score (Lamina's demo mapping, not a rule). */
function paiForLesion(mm: number): number {
  if (mm <= 0) return 2;
  if (mm <= 2.5) return 3;
  if (mm <= 7) return 4;
  return 5;
}

function lesionFor(rng: Random, pai: number): number {
  switch (pai) {
    case 1:
    case 2:
      return 0;
    case 3:
      return rng.chance(0.3) ? 0 : roundTo(rng.between(1, 2.5), 0.5);
    case 4:
      return roundTo(rng.between(2.5, 7), 0.5);
    default:
      return roundTo(clamp(rng.normal(9, 2.5), 7, 18), 0.5);
  }
}

function preop(rng: Random, pulpal: PulpalDiagnosis, apical: ApicalDiagnosis) {
  const pai = (() => {
    switch (apical) {
      case 'normal_apical_tissues':
        return rng.chance(0.6) ? 1 : 2;
      case 'symptomatic_apical_periodontitis':
        return rng.weighted([
          [2, 45],
          [3, 35],
          [4, 20],
        ]);
      case 'asymptomatic_apical_periodontitis':
        return rng.weighted([
          [3, 25],
          [4, 55],
          [5, 20],
        ]);
      case 'chronic_apical_abscess':
        return rng.chance(0.6) ? 4 : 5;
      case 'acute_apical_abscess':
        return rng.weighted([
          [3, 30],
          [4, 50],
          [5, 20],
        ]);
      case 'condensing_osteitis':
        return rng.chance(0.6) ? 2 : 3;
    }
  })();
  const lesion = apical === 'condensing_osteitis' ? 0 : lesionFor(rng, pai);
  const symptoms = new Set<PreopSymptom>();
  if (pulpal === 'symptomatic_irreversible_pulpitis') {
    if (rng.chance(0.6)) symptoms.add('spontaneous_pain');
    if (rng.chance(0.85)) symptoms.add('lingering_thermal_pain');
  }
  if (apical === 'symptomatic_apical_periodontitis') {
    if (rng.chance(0.8)) symptoms.add('pain_on_biting');
    if (rng.chance(0.9)) symptoms.add('tender_to_percussion');
  }
  if (apical === 'acute_apical_abscess') {
    symptoms.add('swelling');
    if (rng.chance(0.7)) symptoms.add('tender_to_palpation');
    if (rng.chance(0.8)) symptoms.add('tender_to_percussion');
    if (rng.chance(0.5)) symptoms.add('spontaneous_pain');
  }
  return {
    paiScore: pai,
    lesionDiameterMm: lesion,
    preopSymptoms: [...symptoms],
    sinusTract: apical === 'chronic_apical_abscess' ? rng.chance(0.9) : rng.chance(0.01),
    probingDepthMm: rng.weighted([
      [2, 35],
      [3, 45],
      [4, 12],
      [5, 5],
      [6, 2],
      [8, 1],
    ]),
  };
}

/** Canal names per tooth: the usual configurations with rough frequencies (approximate, for the demo). */
function canalNames(rng: Random, tooth: number): string[] {
  const { arch, position } = toothInfo(tooth);
  const upper = arch === 'upper';
  const one = ['C'];
  const bp = ['B', 'P'];
  const bl = ['B', 'L'];
  switch (position) {
    case 1:
    case 2:
      return upper ? one : rng.chance(0.3) ? bl : one;
    case 3:
      return upper ? one : rng.chance(0.15) ? bl : one;
    case 4:
      return upper ? rng.weighted([[bp, 80], [one, 12], [['MB', 'DB', 'P'], 8]] as const).slice() : rng.chance(0.25) ? bl : one;
    case 5:
      return upper ? (rng.chance(0.4) ? bp : one) : rng.chance(0.1) ? bl : one;
    case 6:
      return upper
        ? rng.chance(0.65)
          ? ['MB', 'MB2', 'DB', 'P']
          : ['MB', 'DB', 'P']
        : rng.weighted([
            [['MB', 'ML', 'D'], 65],
            [['MB', 'ML', 'DB', 'DL'], 30],
            [['MB', 'ML', 'MM', 'D'], 5],
          ] as const).slice();
    case 7:
      return upper
        ? rng.chance(0.3)
          ? ['MB', 'MB2', 'DB', 'P']
          : ['MB', 'DB', 'P']
        : rng.weighted([
            [['MB', 'ML', 'D'], 70],
            [['M', 'D'], 20],
            [['MB', 'ML', 'DB', 'DL'], 10],
          ] as const).slice();
    default:
      return upper ? (rng.chance(0.6) ? ['MB', 'DB', 'P'] : bp) : rng.chance(0.5) ? ['M', 'D'] : ['MB', 'ML', 'D'];
  }
}

/** Typical working length (mm) by tooth and canal: approximate root lengths, invented for the demo. */
function typicalLength(tooth: number, canal: string): number {
  const { arch, position } = toothInfo(tooth);
  const upper = arch === 'upper';
  if (position <= 3) return upper ? [22.5, 21.5, 26][position - 1]! : [20.5, 20.5, 24.5][position - 1]!;
  if (position <= 5) return upper ? 21 : 21.5;
  const base = position === 6 ? 20.5 : position === 7 ? 19.5 : 18;
  if (upper) return canal === 'P' ? base + 1 : base - 0.5;
  return canal.startsWith('D') ? base - 0.5 : base;
}

function apicalSizeFor(rng: Random, tooth: number, canal: string, retreatment: boolean): number {
  const { group } = toothInfo(tooth);
  let options: [number, number][];
  if (group === 'incisor' || group === 'canine') options = [[40, 30], [45, 20], [50, 25], [60, 15], [35, 10]];
  else if (group === 'premolar') options = [[30, 35], [35, 35], [40, 20], [25, 10]];
  else if (canal === 'P' || canal === 'D' || canal === 'M') options = [[35, 35], [40, 35], [45, 15], [30, 15]];
  else options = [[25, 40], [30, 40], [35, 20]];
  const size = rng.weighted(options);
  if (!retreatment) return size;
  const bumped = [6, 8, 10, 15, 20, 25, 30, 35, 40, 45, 50, 55, 60, 70, 80].find((s) => s > size) ?? size;
  return rng.chance(0.5) ? bumped : size;
}

type FillClass = 'within' | 'short' | 'beyond';

interface Course {
  heals: boolean;
  /** Months to full healing (healers with a lesion). */
  healMonths: number;
  /** A healer whose lesion still looks unchanged at an early review (uncertain, not disease). */
  earlyUnchanged: boolean;
  /** A healer tender to percussion at an early review that later settles. */
  transientSign: boolean;
  /** Months until a new lesion shows (non-healers without a lesion before treatment). */
  onsetMonths: number;
  symptomatic: boolean;
  /**
   * `on`: when the tooth is lost, re-treated or operated (elsewhere), or from when the practice
   * would act (at the practice: it acts after a recall visit that finds the failure, `doneOn`, so
   * events at the practice are seen through the same visits as the teeth without one).
   */
  event: { type: Exclude<ToothStatus, 'present'>; on: CalendarDate; atPractice: boolean; reason?: ExtractionReason; doneOn?: CalendarDate } | null;
}

function makeCase(
  rng: Random,
  key: string,
  person: Person,
  completionDate: CalendarDate,
  today: CalendarDate,
  clinicians: string[],
  referrers: DemoReferrer[],
  follows?: FollowOn,
): DemoCase[] {
  const ageAtStart = person.ageToday - daysBetween(completionDate, today) / 365.25;
  const kind = follows?.kind ?? pickKind(rng, ageAtStart);
  const tooth = follows?.tooth ?? pickTooth(rng, kind, person.usedTeeth);
  person.usedTeeth.add(tooth);
  const group = toothInfo(tooth).group;
  const posterior = group === 'molar' || group === 'premolar';

  // Clinician 2 does most apical surgery; the fourth, newest clinician has a few more short fills.
  const operatorIndex =
    kind === 'apical_surgery' && rng.chance(0.8)
      ? 1
      : rng.weighted([
          [0, 32],
          [1, 24],
          [2, 26],
          [3, 18],
        ]);
  const operatorEmail = clinicians[operatorIndex % clinicians.length]!;

  const singleVisit = follows !== undefined || kind === 'apical_surgery' || kind === 'vital_pulp_therapy' || rng.chance(0.4);
  const startDate = singleVisit ? completionDate : addDaysTo(completionDate, -(kind === 'regenerative_endodontics' ? rng.int(21, 42) : rng.int(5, 35)));
  const { pulpal, apical } = pickDiagnosis(rng, kind);
  const pre = preop(rng, pulpal, apical);
  const withCanals = kind === 'primary_treatment' || kind === 'nonsurgical_retreatment';
  const retreatment = kind === 'nonsurgical_retreatment';

  const data: CaseImport = {
    tooth,
    kind,
    startDate,
    completionDate,
    pulpalDiagnosis: pulpal,
    apicalDiagnosis: apical,
    ...pre,
  };

  let fillClass: FillClass = 'within';
  const complications: Complication[] = [];
  let voids = false;
  let patency = true;
  if (withCanals) {
    const junior = operatorIndex === 3;
    fillClass = rng.weighted<FillClass>(
      retreatment
        ? [
            ['within', 66],
            ['short', 23],
            ['beyond', 11],
          ]
        : junior
          ? [
              ['within', 68],
              ['short', 20],
              ['beyond', 12],
            ]
          : [
              ['within', 77],
              ['short', 13],
              ['beyond', 10],
            ],
    );
    const names = canalNames(rng, tooth);
    const offender = rng.int(0, names.length - 1);
    data.canals = names.map((name, i) => {
      let fill = roundTo(clamp(rng.normal(1, 0.5), 0, 2), 0.5);
      if (i === offender && fillClass === 'short') fill = roundTo(rng.between(2.5, 5.5), 0.5);
      if (i === offender && fillClass === 'beyond') fill = -roundTo(rng.between(0.5, 2.5), 0.5);
      return {
        name,
        workingLengthMm: roundTo(clamp(rng.normal(typicalLength(tooth, name), 1), 12, 33), 0.5),
        apicalSize: apicalSizeFor(rng, tooth, name, retreatment),
        fillToApexMm: fill,
      };
    });
    if (fillClass === 'beyond') complications.push('material_beyond_apex');
    if (rng.chance(retreatment ? 0.04 : 0.015)) complications.push('perforation');
    if (rng.chance((retreatment ? 0.05 : 0.025) * (group === 'molar' ? 1.4 : 0.6))) complications.push('separated_instrument');
    if (rng.chance(retreatment ? 0.06 : 0.03)) complications.push('ledge');
    const technique = rng.weighted<FillingTechnique>([
      ['continuous_wave', 35],
      ['warm_vertical_compaction', 12],
      ['single_cone', 25],
      ['cold_lateral_compaction', 20],
      ['carrier_based', 5],
      ['thermoplastic_injection', 3],
    ]);
    const sealer: SealerClass =
      technique === 'single_cone' && rng.chance(0.8)
        ? 'calcium_silicate'
        : rng.weighted<SealerClass>([
            ['epoxy_resin', 65],
            ['calcium_silicate', 15],
            ['zinc_oxide_eugenol', 15],
            ['methacrylate_resin', 3],
            ['silicone', 2],
          ]);
    voids = rng.chance(technique === 'cold_lateral_compaction' ? 0.18 : 0.1);
    patency = !complications.includes('ledge') && rng.chance(retreatment ? 0.8 : 0.9);
    data.fillingTechnique = technique;
    data.sealerClass = sealer;
    data.apicalPatency = patency;
    data.complications = complications;
    data.fillDensity = voids ? 'voids' : 'homogeneous';
  } else if (kind === 'apical_surgery') {
    data.rootEndFilling = rng.weighted([
      ['calcium_silicate', 85],
      ['reinforced_zinc_oxide_eugenol', 10],
      ['none', 5],
    ] as const);
  } else if (kind === 'vital_pulp_therapy') {
    data.pulpTherapyType = rng.weighted([
      ['full_pulpotomy', 55],
      ['partial_pulpotomy', 30],
      ['direct_pulp_cap', 15],
    ] as const);
    data.cappingMaterial = rng.chance(0.9) ? 'calcium_silicate' : 'calcium_hydroxide';
  } else {
    data.cappingMaterial = 'calcium_silicate';
  }

  // Restorations.
  const coronal: CompletionRestoration =
    retreatment && rng.chance(0.35)
      ? 'existing_indirect'
      : rng.weighted<CompletionRestoration>([
          ['temporary', 38],
          ['direct_composite', 45],
          ['glass_ionomer', 12],
          ['existing_indirect', 5],
        ]);
  data.coronalRestoration = coronal;
  if (rng.chance(0.92)) {
    let definitive: DefinitiveRestoration;
    let on = completionDate;
    if (coronal === 'existing_indirect') definitive = 'existing_indirect';
    else if (coronal === 'direct_composite' && rng.chance(0.6)) definitive = 'direct_composite';
    else {
      definitive = posterior
        ? rng.weighted<DefinitiveRestoration>([
            ['crown', 50],
            ['onlay', 20],
            ['direct_composite', 25],
            ['post_and_crown', 5],
          ])
        : rng.weighted<DefinitiveRestoration>([
            ['direct_composite', 70],
            ['crown', 20],
            ['post_and_crown', 10],
          ]);
      on = addDaysTo(completionDate, rng.int(14, 80));
    }
    if (compareDates(on, today) <= 0) {
      data.definitiveRestoration = definitive;
      data.definitiveRestorationDate = on;
    }
  }

  // The tooth's course (see the top of the file and tests/unit/demo/rates.test.ts).
  const lesion = data.paiScore >= 3;
  const heals = rng.chance(
    successProbability({ kind, lesion, diameterMm: data.lesionDiameterMm, fillClass, voids, complications, patency: !withCanals || patency, sinusTract: data.sinusTract === true }),
  );
  const months = (m: number) => addDaysTo(completionDate, Math.round(m * 30.44));
  const onsetMonths = rng.between(3, 24);
  let event: Course['event'] = null;
  if (!heals && rng.chance(0.6)) {
    // A failing tooth is extracted, re-treated or operated on some months after the disease shows.
    const type = rng.weighted<Exclude<ToothStatus, 'present'>>(
      kind === 'apical_surgery'
        ? [
            ['extracted', 70],
            ['retreated', 15],
            ['surgery', 15],
          ]
        : kind === 'vital_pulp_therapy' || kind === 'regenerative_endodontics'
          ? [
              ['retreated', 80],
              ['extracted', 20],
            ]
          : [
              ['extracted', 30],
              ['retreated', 45],
              ['surgery', 25],
            ],
    );
    const shows = lesion ? rng.between(6, 14) : onsetMonths;
    const atPractice = rng.chance(type === 'extracted' ? 0.35 : 0.8);
    event = { type, on: months(shows + rng.between(1, 18)), atPractice, reason: type === 'extracted' ? (rng.chance(0.85) ? 'endodontic' : 'fracture') : undefined };
  } else if (heals && rng.chance(0.02)) {
    // extracted for another reason, about 0.5% a year
    const reason = rng.weighted<ExtractionReason>([
      ['fracture', 55],
      ['periodontal', 30],
      ['other', 15],
    ]);
    event = { type: 'extracted', on: months(rng.between(2, 48)), atPractice: rng.chance(0.35), reason };
  }
  if (event && compareDates(event.on, addDaysTo(today, -1)) > 0) event = null;
  const course: Course = {
    heals,
    healMonths: 2 + 0.6 * data.lesionDiameterMm + -Math.log(1 - rng.next()) * 3,
    earlyUnchanged: heals && lesion && rng.chance(0.15),
    transientSign: heals && rng.chance(0.03),
    onsetMonths,
    symptomatic: !heals && rng.chance(0.4),
    event,
  };

  const referrer = follows ? null : rng.chance(0.88) ? rng.pick(referrers) : null;
  const assessor = () => (rng.chance(0.8) ? operatorEmail : rng.pick(clinicians));
  const unplannedReviews: DemoReview[] = [];
  const visits = simulateVisits(rng, data, person, course, today, assessor, unplannedReviews);
  const own: DemoCase = { key, patientKey: person.registryNumber, previousCaseKey: follows?.previousKey ?? null, operatorEmail, referrerKey: referrer?.key ?? null, data, visits, unplannedReviews };
  // A retreatment or surgery done here is the tooth's next case, linked to this one (at most two in a row).
  if (event?.atPractice && event.doneOn && event.type !== 'extracted' && (follows?.depth ?? 0) < 2) {
    const doneOn = event.doneOn;
    const completion = addDaysTo(doneOn, rng.int(0, 21));
    if (compareDates(completion, addDaysTo(today, -7)) <= 0) {
      const next = makeCase(rng, `${key}-${event.type === 'retreated' ? 'r' : 's'}`, person, completion, today, clinicians, referrers, {
        previousKey: key,
        kind: event.type === 'retreated' ? 'nonsurgical_retreatment' : 'apical_surgery',
        tooth,
        depth: (follows?.depth ?? 0) + 1,
      });
      next[0]!.data.startDate = doneOn;
      return [own, ...next];
    }
  }
  return [own];
}

interface FollowOn {
  previousKey: string;
  kind: CaseKind;
  tooth: number;
  depth: number;
}

/**
 * The chance that a case heals, by factor: set so the world's rates sit inside the literature's
 * ranges (tests/unit/demo/rates.test.ts names them). Not an estimate of anything.
 */
function successProbability(f: {
  kind: CaseKind;
  lesion: boolean;
  diameterMm: number;
  fillClass: FillClass;
  voids: boolean;
  complications: Complication[];
  patency: boolean;
  sinusTract: boolean;
}): number {
  let p: number;
  switch (f.kind) {
    case 'primary_treatment':
      p = f.lesion ? 0.95 - 0.012 * f.diameterMm : 0.95;
      break;
    case 'nonsurgical_retreatment':
      p = f.lesion ? 0.84 - 0.012 * f.diameterMm : 0.9;
      break;
    case 'apical_surgery':
      p = 0.86;
      break;
    case 'vital_pulp_therapy':
      p = 0.9;
      break;
    case 'regenerative_endodontics':
      p = 0.88;
      break;
  }
  if (f.fillClass === 'short') p *= 0.78;
  if (f.fillClass === 'beyond') p *= 0.88;
  if (f.voids) p *= 0.95;
  if (f.complications.includes('perforation')) p *= 0.75;
  if (f.complications.includes('ledge')) p *= 0.95;
  if (!f.patency) p *= 0.97;
  if (f.sinusTract) p *= 0.97;
  return clamp(p, 0.05, 0.98);
}

// --- the follow-up history ----------------------------------------------------------------------

/** Chance of attending a visit for a patient still in follow-up (leaving follow-up is `lostFrom`). */
const ATTEND_RATE: Record<number, number> = { 6: 0.88, 12: 0.86, 24: 0.8, 48: 0.76 };

function latest(...dates: CalendarDate[]): CalendarDate {
  return dates.reduce((a, b) => (compareDates(a, b) >= 0 ? a : b));
}
function earliestOf(...dates: CalendarDate[]): CalendarDate {
  return dates.reduce((a, b) => (compareDates(a, b) <= 0 ? a : b));
}

function simulateVisits(
  rng: Random,
  data: CaseImport,
  person: Person,
  course: Course,
  today: CalendarDate,
  assessor: () => string,
  unplanned: DemoReview[],
): DemoVisit[] {
  const completion = data.completionDate;
  let knownEventOn: CalendarDate | null = null;
  const event = course.event;
  /** The review at an attended visit; a failure found there may be extracted, re-treated or operated here that day. */
  const attend = (attendedOn: CalendarDate): DemoReview => {
    const review = reviewAt(rng, data, course, attendedOn, assessor());
    if (review.toothStatus !== 'present') knownEventOn ??= attendedOn;
    else if (event?.atPractice && !event.doneOn && compareDates(event.on, attendedOn) <= 0) {
      // Done at the practice the day the visit finds it (a later date would leave the teeth
      // censored at their own visit out of the comparison: the bias of issue 11).
      const on = attendedOn;
      {
        event.doneOn = on;
        knownEventOn ??= on;
        unplanned.push({
          reviewDate: on,
          assessorEmail: assessor(),
          toothStatus: event.type,
          ...(event.type === 'extracted' && event.reason ? { extractionReason: event.reason } : {}),
        });
      }
    }
    return review;
  };
  let closedOn: CalendarDate | null = null;
  const out: DemoVisit[] = [];

  for (const planned of planVisits(completion, DEMO_RECALL_POLICY)) {
    const history: DemoStatusStep[] = [{ status: 'planned', on: completion }];
    const step = (status: VisitStatus, on: CalendarDate) => history.push({ status, on });
    const finish = (status: VisitStatus, review?: DemoReview): DemoVisit => ({ ...planned, status, history, ...(review ? { review } : {}) });
    // "Invited" means a message went out: only patients who agreed to e-mail are invited; the others
    // are phoned (the desk's call queue) and appear planned until booked.
    const invitable = person.recallContact && person.recallChannel === 'email';
    const inviteOn = (upTo: CalendarDate) =>
      earliestOf(upTo, today, latest(completion, addDaysTo(planned.windowStart, -rng.int(7, 30))));

    // The practice already knows the tooth is gone or re-treated, or has closed the patient's follow-up.
    const stopOn = [knownEventOn, closedOn].filter((d): d is CalendarDate => d !== null && compareDates(d, today) <= 0).sort()[0];
    if (stopOn && compareDates(planned.windowEnd, stopOn) >= 0) {
      const stoppedBy: VisitStatus = knownEventOn && stopOn === knownEventOn ? 'cancelled' : 'closed';
      if (invitable && compareDates(addDaysTo(planned.windowStart, -30), stopOn) < 0) step('invited', inviteOn(stopOn));
      step(stoppedBy, stopOn);
      out.push(finish(stoppedBy));
      continue;
    }

    // Lost: the patient stopped coming after this case was completed (a later case means they came back).
    const lost =
      person.lostFrom !== null && compareDates(completion, person.lostFrom) < 0 && compareDates(person.lostFrom, planned.windowStart) <= 0;
    const windowEnded = compareDates(planned.windowEnd, today) < 0;
    const windowOpen = !windowEnded && compareDates(planned.windowStart, today) <= 0;

    if (windowEnded) {
      const attendP = lost ? 0 : person.recallContact ? clamp(ATTEND_RATE[planned.milestone]! * person.adherence, 0, 0.95) : 0.35;
      const missedOn = addDaysTo(planned.windowEnd, 1);
      if (rng.chance(attendP)) {
        const upper = earliestOf(planned.windowEnd, today);
        const attendedOn = clampDate(addDaysTo(planned.dueDate, Math.round(rng.normal(7, 20))), planned.windowStart, upper);
        if (invitable) {
          const invited = inviteOn(attendedOn);
          step('invited', invited);
          if (rng.chance(0.85)) step('confirmed', clampDate(addDaysTo(invited, rng.int(1, 14)), invited, attendedOn));
        }
        step('attended', attendedOn);
        out.push(finish('attended', attend(attendedOn)));
        continue;
      }
      if (invitable && !lost && rng.chance(0.3)) {
        const invited = inviteOn(planned.windowEnd);
        step('invited', invited);
        step('declined', clampDate(addDaysTo(invited, rng.int(2, 20)), invited, planned.windowEnd));
        out.push(finish('declined'));
        continue;
      }
      if (invitable) {
        const invited = inviteOn(planned.windowEnd);
        step('invited', invited);
        if (!lost && rng.chance(0.4)) step('confirmed', clampDate(addDaysTo(invited, rng.int(1, 14)), invited, planned.windowEnd));
      }
      step('missed', missedOn);
      if (lost && closedOn === null) closedOn = addDaysTo(missedOn, rng.int(20, 90));
      out.push(finish('missed'));
      continue;
    }

    if (windowOpen) {
      if (!invitable) {
        if (!lost && rng.chance(0.2)) {
          const attendedOn = clampDate(addDaysTo(planned.windowStart, rng.int(0, 60)), planned.windowStart, today);
          step('attended', attendedOn);
          out.push(finish('attended', attend(attendedOn)));
        } else out.push(finish('planned'));
        continue;
      }
      const status = lost
        ? rng.chance(0.7)
          ? 'invited'
          : 'planned'
        : rng.weighted<VisitStatus>([
            ['attended', 25],
            ['confirmed', 30],
            ['invited', 30],
            ['declined', 5],
            ['planned', 10],
          ]);
      if (status === 'planned') {
        out.push(finish('planned'));
        continue;
      }
      const invited = inviteOn(today);
      step('invited', invited);
      if (status === 'invited') {
        out.push(finish('invited'));
        continue;
      }
      if (status === 'declined') {
        step('declined', clampDate(addDaysTo(invited, rng.int(2, 20)), invited, today));
        out.push(finish('declined'));
        continue;
      }
      const confirmedOn = clampDate(addDaysTo(invited, rng.int(1, 14)), invited, today);
      step('confirmed', confirmedOn);
      if (status === 'confirmed') {
        out.push(finish('confirmed'));
        continue;
      }
      const attendedOn = clampDate(addDaysTo(confirmedOn, rng.int(3, 30)), latest(confirmedOn, planned.windowStart), today);
      step('attended', attendedOn);
      out.push(finish('attended', attend(attendedOn)));
      continue;
    }

    // Still ahead: invited when the window is close, otherwise planned.
    if (invitable && !lost && daysBetween(today, planned.windowStart) <= 30 && rng.chance(0.45)) {
      step('invited', inviteOn(today));
      out.push(finish('invited'));
    } else out.push(finish('planned'));
  }
  for (const v of out) assertHistory(v);
  return out;
}

function clampDate(date: CalendarDate, min: CalendarDate, max: CalendarDate): CalendarDate {
  if (compareDates(max, min) < 0) return max;
  return compareDates(date, min) < 0 ? min : compareDates(date, max) > 0 ? max : date;
}

/** A generated history must be a path through the transition table with dates that never go back. */
function assertHistory(v: DemoVisit): void {
  for (let i = 1; i < v.history.length; i++) {
    const a = v.history[i - 1]!;
    const b = v.history[i]!;
    if (!canTransition(a.status, b.status) || compareDates(a.on, b.on) > 0) {
      throw new Error(`Demo generator produced an impossible visit history: ${JSON.stringify(v.history)}`);
    }
  }
}

/** What the assessor finds at `date` for a case on `course`. */
function reviewAt(rng: Random, data: CaseImport, course: Course, date: CalendarDate, assessorEmail: string): DemoReview {
  const event = course.event;
  if (event && !event.atPractice && compareDates(event.on, date) <= 0) {
    // Found at this review. An event elsewhere often comes with its date (the patient or their dentist knows it).
    const dated = event.on !== date && rng.chance(0.6);
    return {
      reviewDate: date,
      assessorEmail,
      toothStatus: event.type,
      ...(dated ? { eventDate: event.on } : {}),
      ...(event.type === 'extracted' && event.reason ? { extractionReason: event.reason } : {}),
    };
  }
  const months = daysBetween(data.completionDate, date) / 30.44;
  const pai0 = data.paiScore;
  const lesion0 = data.lesionDiameterMm;
  const healthy = (): Pick<DemoReview, 'paiScore' | 'lesionDiameterMm'> => ({ paiScore: rng.chance(0.6) ? 1 : 2, lesionDiameterMm: 0 });
  let found: Pick<DemoReview, 'paiScore' | 'lesionDiameterMm'>;
  const signs: Partial<DemoReview> = {};
  if (course.heals) {
    if (pai0 <= 2 || lesion0 === 0 || months >= course.healMonths) found = healthy();
    else if (course.earlyUnchanged && months < 8) found = { lesionDiameterMm: lesion0, paiScore: pai0 };
    else {
      const mm = Math.max(0.5, roundTo(lesion0 * Math.pow(1 - months / course.healMonths, 0.8), 0.5));
      found = { lesionDiameterMm: mm, paiScore: clamp(paiForLesion(mm), 3, Math.max(3, pai0 - 1)) };
    }
    if (course.transientSign && months < 8) signs.tenderToPercussion = true;
  } else {
    if (pai0 <= 2 || lesion0 === 0) {
      if (months < course.onsetMonths) found = healthy();
      else {
        const mm = roundTo(rng.between(1.5, 5), 0.5);
        found = { lesionDiameterMm: mm, paiScore: Math.max(3, paiForLesion(mm)) };
      }
    } else {
      const mm = roundTo(lesion0 * rng.between(0.95, 1.4), 0.5);
      found = { lesionDiameterMm: Math.max(0.5, mm), paiScore: clamp(Math.max(pai0, paiForLesion(mm)), 3, 5) };
    }
    if (course.symptomatic && rng.chance(0.6)) {
      const sign = rng.weighted<keyof DemoReview>([
        ['painOnBiting', 40],
        ['tenderToPercussion', 25],
        ['sinusTract', 20],
        ['tenderToPalpation', 10],
        ['swelling', 5],
      ]);
      (signs as Record<string, boolean>)[sign] = true;
    }
  }
  return {
    reviewDate: date,
    assessorEmail,
    toothStatus: 'present',
    ...found,
    painOnBiting: signs.painOnBiting ?? false,
    tenderToPercussion: signs.tenderToPercussion ?? false,
    tenderToPalpation: signs.tenderToPalpation ?? false,
    spontaneousPain: false,
    swelling: signs.swelling ?? false,
    sinusTract: signs.sinusTract ?? false,
    mobility: rng.chance(course.heals ? 0.02 : 0.06),
  };
}
