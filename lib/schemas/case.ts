/**
 * Treatment case: one tooth treated once. Shared by the case form, the API, the CSV import and
 * the demo seed. Three parts: before treatment (diagnosis), treatment, after treatment (the
 * completion film and the restoration).
 *
 * Kinds, and why these:
 * - primary_treatment — first root canal treatment of the tooth. Apexification of an immature
 *   tooth (an apical barrier of calcium-silicate cement, then filling) is recorded here with the
 *   filling technique 'apical_barrier' rather than as a kind of its own: it has canals and a fill.
 * - nonsurgical_retreatment — the tooth was root-filled before.
 * - apical_surgery — root-end resection (with or without a root-end filling); no canals or fill.
 * - vital_pulp_therapy — pulp capping and partial/full pulpotomy of permanent teeth: specialist
 *   practices do these as definitive treatments (ESE position statement on vital pulp therapy,
 *   2019) and they are followed up with the same periapical index.
 * - regenerative_endodontics — regenerative endodontic procedure for an immature necrotic tooth;
 *   followed up radiographically like the others.
 * Not kinds: pulpectomy of primary teeth (paediatric dentistry; see the primary-teeth rule in
 * lib/teeth) and intentional replantation (too rare to justify its own fields).
 *
 * Terms: pulpal and apical diagnoses are the AAE consensus diagnostic terminology (AAE Consensus
 * Conference on diagnostic terminology, J Endod 2009). The periapical index (PAI 1–5) is Ørstavik,
 * Kerekes & Eriksen 1986. Apical preparation sizes are the ISO 3630-1 instrument sizes.
 *
 * A field that does not apply to the kind (canals and fill for apical surgery, say) is dropped
 * before validation, so a form that hid it loses nothing and saves nothing for it; `fieldsFor(kind)`
 * tells the form which sections and fields to show. The tooth is stored in FDI notation (ISO 3950).
 */
import { z } from 'zod';
import { parseFdi } from '@/lib/teeth';
import { CASE_KINDS, type CaseKind } from '@/lib/registry/case-kinds';
import { Id, blankAsUndefined, calendarDate, capitalise, measure, oneOf, wholeNumber } from '@/lib/registry/fields';

// --- vocabularies -------------------------------------------------------------------------------

// The kinds of case live in lib/registry/case-kinds.ts (no zod), so lists can show them cheaply.
export { CASE_KINDS, CASE_KIND_LABELS, type CaseKind } from '@/lib/registry/case-kinds';

/** AAE consensus pulpal diagnoses (2009). */
export const PULPAL_DIAGNOSES = [
  'normal_pulp',
  'reversible_pulpitis',
  'symptomatic_irreversible_pulpitis',
  'asymptomatic_irreversible_pulpitis',
  'pulp_necrosis',
  'previously_treated',
  'previously_initiated_therapy',
] as const;
export type PulpalDiagnosis = (typeof PULPAL_DIAGNOSES)[number];
export const PULPAL_DIAGNOSIS_LABELS: Record<PulpalDiagnosis, string> = {
  normal_pulp: 'Normal pulp',
  reversible_pulpitis: 'Reversible pulpitis',
  symptomatic_irreversible_pulpitis: 'Symptomatic irreversible pulpitis',
  asymptomatic_irreversible_pulpitis: 'Asymptomatic irreversible pulpitis',
  pulp_necrosis: 'Pulp necrosis',
  previously_treated: 'Previously treated',
  previously_initiated_therapy: 'Previously initiated therapy',
};
/** Diagnoses with vital pulp tissue (AAE): the ones vital pulp therapy can start from. */
export const VITAL_PULPAL_DIAGNOSES: readonly PulpalDiagnosis[] = [
  'normal_pulp',
  'reversible_pulpitis',
  'symptomatic_irreversible_pulpitis',
  'asymptomatic_irreversible_pulpitis',
];

/** AAE consensus apical diagnoses (2009). */
export const APICAL_DIAGNOSES = [
  'normal_apical_tissues',
  'symptomatic_apical_periodontitis',
  'asymptomatic_apical_periodontitis',
  'chronic_apical_abscess',
  'acute_apical_abscess',
  'condensing_osteitis',
] as const;
export type ApicalDiagnosis = (typeof APICAL_DIAGNOSES)[number];
export const APICAL_DIAGNOSIS_LABELS: Record<ApicalDiagnosis, string> = {
  normal_apical_tissues: 'Normal apical tissues',
  symptomatic_apical_periodontitis: 'Symptomatic apical periodontitis',
  asymptomatic_apical_periodontitis: 'Asymptomatic apical periodontitis',
  chronic_apical_abscess: 'Chronic apical abscess',
  acute_apical_abscess: 'Acute apical abscess',
  condensing_osteitis: 'Condensing osteitis',
};

/** Symptoms before treatment (none ticked = asymptomatic). The sinus tract is its own field. */
export const PREOP_SYMPTOMS = [
  'spontaneous_pain',
  'lingering_thermal_pain',
  'pain_on_biting',
  'tender_to_percussion',
  'tender_to_palpation',
  'swelling',
] as const;
export type PreopSymptom = (typeof PREOP_SYMPTOMS)[number];
export const PREOP_SYMPTOM_LABELS: Record<PreopSymptom, string> = {
  spontaneous_pain: 'Spontaneous pain',
  lingering_thermal_pain: 'Lingering pain to cold or heat',
  pain_on_biting: 'Pain on biting',
  tender_to_percussion: 'Tender to percussion',
  tender_to_palpation: 'Tender to palpation',
  swelling: 'Swelling',
};

export const COMPLICATIONS = ['perforation', 'separated_instrument', 'ledge', 'material_beyond_apex'] as const;
export type Complication = (typeof COMPLICATIONS)[number];
export const COMPLICATION_LABELS: Record<Complication, string> = {
  perforation: 'Perforation',
  separated_instrument: 'Separated instrument',
  ledge: 'Ledge',
  material_beyond_apex: 'Material beyond the apex',
};

export const FILLING_TECHNIQUES = [
  'cold_lateral_compaction',
  'warm_vertical_compaction',
  'continuous_wave',
  'carrier_based',
  'single_cone',
  'thermoplastic_injection',
  'apical_barrier',
  'other',
] as const;
export type FillingTechnique = (typeof FILLING_TECHNIQUES)[number];
export const FILLING_TECHNIQUE_LABELS: Record<FillingTechnique, string> = {
  cold_lateral_compaction: 'Cold lateral compaction',
  warm_vertical_compaction: 'Warm vertical compaction',
  continuous_wave: 'Continuous wave',
  carrier_based: 'Carrier-based',
  single_cone: 'Single cone',
  thermoplastic_injection: 'Thermoplastic injection',
  apical_barrier: 'Apical barrier (calcium-silicate plug)',
  other: 'Other',
};

/** Sealer by chemical class (no product names). */
export const SEALER_CLASSES = [
  'zinc_oxide_eugenol',
  'epoxy_resin',
  'calcium_silicate',
  'calcium_hydroxide',
  'methacrylate_resin',
  'silicone',
  'glass_ionomer',
  'other',
] as const;
export type SealerClass = (typeof SEALER_CLASSES)[number];
export const SEALER_CLASS_LABELS: Record<SealerClass, string> = {
  zinc_oxide_eugenol: 'Zinc oxide–eugenol',
  epoxy_resin: 'Epoxy resin',
  calcium_silicate: 'Calcium silicate (bioceramic)',
  calcium_hydroxide: 'Calcium hydroxide',
  methacrylate_resin: 'Methacrylate resin',
  silicone: 'Silicone',
  glass_ionomer: 'Glass ionomer',
  other: 'Other',
};

export const FILL_DENSITIES = ['homogeneous', 'voids'] as const;
export type FillDensity = (typeof FILL_DENSITIES)[number];
export const FILL_DENSITY_LABELS: Record<FillDensity, string> = {
  homogeneous: 'Homogeneous (no voids)',
  voids: 'Voids seen',
};

/** The coronal restoration placed at completion. */
export const COMPLETION_RESTORATIONS = ['none', 'temporary', 'direct_composite', 'direct_amalgam', 'glass_ionomer', 'existing_indirect'] as const;
export type CompletionRestoration = (typeof COMPLETION_RESTORATIONS)[number];
export const COMPLETION_RESTORATION_LABELS: Record<CompletionRestoration, string> = {
  none: 'None',
  temporary: 'Temporary',
  direct_composite: 'Direct composite',
  direct_amalgam: 'Direct amalgam',
  glass_ionomer: 'Glass ionomer',
  existing_indirect: 'Existing crown or onlay kept',
};

/** The definitive restoration and when it was placed. */
export const DEFINITIVE_RESTORATIONS = ['direct_composite', 'direct_amalgam', 'onlay', 'crown', 'post_and_crown', 'existing_indirect'] as const;
export type DefinitiveRestoration = (typeof DEFINITIVE_RESTORATIONS)[number];
export const DEFINITIVE_RESTORATION_LABELS: Record<DefinitiveRestoration, string> = {
  direct_composite: 'Direct composite',
  direct_amalgam: 'Direct amalgam',
  onlay: 'Onlay',
  crown: 'Crown',
  post_and_crown: 'Post and crown',
  existing_indirect: 'Existing crown or onlay kept',
};

export const ROOT_END_FILLINGS = ['calcium_silicate', 'reinforced_zinc_oxide_eugenol', 'composite', 'glass_ionomer', 'none', 'other'] as const;
export type RootEndFilling = (typeof ROOT_END_FILLINGS)[number];

export const PULP_THERAPY_TYPES = ['indirect_pulp_cap', 'direct_pulp_cap', 'partial_pulpotomy', 'full_pulpotomy'] as const;
export type PulpTherapyType = (typeof PULP_THERAPY_TYPES)[number];

/** Material over the pulp (vital pulp therapy) or over the blood clot (regenerative procedure). */
export const CAPPING_MATERIALS = ['calcium_silicate', 'calcium_hydroxide', 'glass_ionomer', 'other'] as const;
export type CappingMaterial = (typeof CAPPING_MATERIALS)[number];

/** ISO 3630-1 instrument sizes: 06, 08, 10, then 15–60 in steps of 5, then 70–140 in steps of 10. */
export const ISO_APICAL_SIZES: readonly number[] = [
  6, 8, 10, 15, 20, 25, 30, 35, 40, 45, 50, 55, 60, 70, 80, 90, 100, 110, 120, 130, 140,
];

export const MAX_CANALS = 6;

// --- plausible ranges (units in the names) ------------------------------------------------------
// Ranges are plausibility limits, not clinical norms: wide enough for real teeth, narrow enough
// to catch a misplaced decimal point or a value typed into the wrong field.
export const RANGES = {
  /** Working length, mm: the shortest incisors are ~15 mm, the longest canines ~33 mm. */
  workingLengthMm: { min: 8, max: 35, step: 0.1 },
  /** End of the root filling to the radiographic apex, mm; negative is beyond the apex. */
  fillToApexMm: { min: -5, max: 10, step: 0.1 },
  /** Largest diameter of the periapical radiolucency, mm; 0 = none. */
  lesionDiameterMm: { min: 0, max: 40, step: 0.1 },
  /** Deepest probing depth, whole mm (probes are graduated in mm). */
  probingDepthMm: { min: 1, max: 15 },
} as const;

export const PaiScore = wholeNumber('the periapical index (PAI)', 1, 5);
export const LesionDiameterMm = measure('the lesion diameter', 'mm', RANGES.lesionDiameterMm.min, RANGES.lesionDiameterMm.max, RANGES.lesionDiameterMm.step);

// --- which fields apply to which kind -----------------------------------------------------------

export const CASE_SECTIONS = ['case', 'diagnosis', 'canals', 'obturation', 'complications', 'surgery', 'pulpTherapy', 'afterTreatment', 'restoration'] as const;
export type CaseSection = (typeof CASE_SECTIONS)[number];
export const CASE_SECTION_LABELS: Record<CaseSection, string> = {
  case: 'Case',
  diagnosis: 'Before treatment',
  canals: 'Canals',
  obturation: 'Root filling',
  complications: 'Complications',
  surgery: 'Surgery',
  pulpTherapy: 'Pulp therapy',
  afterTreatment: 'Completion film',
  restoration: 'Restoration',
};

const ALL = CASE_KINDS;
const WITH_CANALS: readonly CaseKind[] = ['primary_treatment', 'nonsurgical_retreatment'];

/** Every field the case form can show, with its section and the kinds it applies to. */
export const CASE_FIELDS = {
  patientId: { section: 'case', kinds: ALL },
  tooth: { section: 'case', kinds: ALL },
  kind: { section: 'case', kinds: ALL },
  operatorId: { section: 'case', kinds: ALL },
  referrerId: { section: 'case', kinds: ALL },
  previousCaseId: { section: 'case', kinds: ALL },
  startDate: { section: 'case', kinds: ALL },
  completionDate: { section: 'case', kinds: ALL },
  pulpalDiagnosis: { section: 'diagnosis', kinds: ALL },
  apicalDiagnosis: { section: 'diagnosis', kinds: ALL },
  paiScore: { section: 'diagnosis', kinds: ALL },
  lesionDiameterMm: { section: 'diagnosis', kinds: ALL },
  preopSymptoms: { section: 'diagnosis', kinds: ALL },
  sinusTract: { section: 'diagnosis', kinds: ALL },
  probingDepthMm: { section: 'diagnosis', kinds: ALL },
  canals: { section: 'canals', kinds: WITH_CANALS },
  'canals.name': { section: 'canals', kinds: WITH_CANALS },
  'canals.workingLengthMm': { section: 'canals', kinds: WITH_CANALS },
  'canals.apicalSize': { section: 'canals', kinds: WITH_CANALS },
  fillingTechnique: { section: 'obturation', kinds: WITH_CANALS },
  sealerClass: { section: 'obturation', kinds: WITH_CANALS },
  apicalPatency: { section: 'obturation', kinds: WITH_CANALS },
  complications: { section: 'complications', kinds: WITH_CANALS },
  rootEndFilling: { section: 'surgery', kinds: ['apical_surgery'] },
  pulpTherapyType: { section: 'pulpTherapy', kinds: ['vital_pulp_therapy'] },
  cappingMaterial: { section: 'pulpTherapy', kinds: ['vital_pulp_therapy', 'regenerative_endodontics'] },
  'canals.fillToApexMm': { section: 'afterTreatment', kinds: WITH_CANALS },
  fillDensity: { section: 'afterTreatment', kinds: WITH_CANALS },
  coronalRestoration: { section: 'restoration', kinds: ALL },
  definitiveRestoration: { section: 'restoration', kinds: ALL },
  definitiveRestorationDate: { section: 'restoration', kinds: ALL },
} as const satisfies Record<string, { section: CaseSection; kinds: readonly CaseKind[] }>;
export type CaseField = keyof typeof CASE_FIELDS;

export interface CaseFieldsForKind {
  kind: CaseKind;
  /** Sections to show, in form order. */
  sections: CaseSection[];
  /** Fields to show; canal sub-fields as 'canals.name' etc. */
  fields: CaseField[];
}

/** Which sections and fields the form shows for `kind` (plain data, safe to pass to a client component). */
export function fieldsFor(kind: CaseKind): CaseFieldsForKind {
  const fields = (Object.keys(CASE_FIELDS) as CaseField[]).filter((f) => fieldApplies(kind, f));
  const sections = CASE_SECTIONS.filter((s) => fields.some((f) => CASE_FIELDS[f].section === s));
  return { kind, sections, fields };
}

export function fieldApplies(kind: CaseKind, field: CaseField): boolean {
  return (CASE_FIELDS[field].kinds as readonly CaseKind[]).includes(kind);
}

/** Drops the fields that do not apply to the input's kind (before validation). */
export function dropInapplicable(input: unknown): unknown {
  if (!input || typeof input !== 'object' || Array.isArray(input)) return input;
  const raw = input as Record<string, unknown>;
  const kind = raw.kind;
  if (typeof kind !== 'string' || !(CASE_KINDS as readonly string[]).includes(kind)) return input;
  const out: Record<string, unknown> = {};
  for (const [key, value] of Object.entries(raw)) {
    if (key in CASE_FIELDS && !fieldApplies(kind as CaseKind, key as CaseField)) continue;
    out[key] = value;
  }
  return out;
}

// --- schemas ------------------------------------------------------------------------------------

const isoSizeMessage = 'Use an ISO 3630-1 size: 06, 08, 10, 15 to 60 in steps of 5, or 70 to 140 in steps of 10.';

export const CanalSchema = z.object({
  name: z
    .string({ error: 'Name the canal, e.g. MB, MB2, DB, P, D, ML, DL, M, B, L.' })
    .trim()
    .toUpperCase()
    .min(1, 'Name the canal, e.g. MB, MB2, DB, P, D, ML, DL, M, B, L.')
    .max(6, 'A canal name has at most 6 characters, e.g. MB2.')
    .regex(/^[A-Z0-9]+$/, 'Use letters and digits in a canal name, e.g. MB2.'),
  workingLengthMm: measure('the working length', 'mm', RANGES.workingLengthMm.min, RANGES.workingLengthMm.max, RANGES.workingLengthMm.step).optional(),
  apicalSize: z
    .number({ error: isoSizeMessage })
    .refine((v) => ISO_APICAL_SIZES.includes(v), isoSizeMessage)
    .optional(),
  /** After treatment: end of the filling to the radiographic apex, mm (negative = beyond). */
  fillToApexMm: measure('the distance from the end of the filling to the apex', 'mm', RANGES.fillToApexMm.min, RANGES.fillToApexMm.max, RANGES.fillToApexMm.step).optional(),
});
export type Canal = z.output<typeof CanalSchema>;

function uniqueList<const T extends readonly [string, ...string[]]>(values: T, label: string) {
  return z.array(oneOf(values, label)).refine((list) => new Set(list).size === list.length, `Each ${label} once only.`);
}

export interface CaseSchemaOptions {
  /** Accept primary teeth 51–85 (practice setting; see lib/teeth). Default false. */
  allowPrimaryTeeth?: boolean;
}

function toothField(allowPrimary: boolean) {
  return z.union([z.number(), z.string()], { error: 'Enter the tooth in FDI notation, e.g. 36.' }).transform((value, ctx) => {
    const r = parseFdi(value, { allowPrimary });
    if (!r.ok) {
      ctx.addIssue({ code: 'custom', message: r.reason });
      return z.NEVER;
    }
    return r.tooth.fdi;
  });
}

function caseObject(options: CaseSchemaOptions) {
  return z.object({
    id: Id,
    patientId: Id,
    tooth: toothField(Boolean(options.allowPrimaryTeeth)),
    kind: oneOf(CASE_KINDS, 'the kind of treatment'),
    /** The clinician who treated the tooth. */
    operatorId: Id,
    referrerId: blankAsUndefined(Id),
    startDate: calendarDate('the start date'),
    /** Canal filling (or the day the procedure was completed); empty while the case is in progress. */
    completionDate: blankAsUndefined(calendarDate('the completion date')),

    pulpalDiagnosis: oneOf(PULPAL_DIAGNOSES, 'the pulpal diagnosis'),
    apicalDiagnosis: oneOf(APICAL_DIAGNOSES, 'the apical diagnosis'),
    paiScore: PaiScore,
    lesionDiameterMm: LesionDiameterMm,
    preopSymptoms: uniqueList(PREOP_SYMPTOMS, 'symptom').optional(),
    sinusTract: z.boolean().optional(),
    probingDepthMm: wholeNumber('the deepest probing depth', RANGES.probingDepthMm.min, RANGES.probingDepthMm.max, 'mm').optional(),

    canals: z.array(CanalSchema).max(MAX_CANALS, `At most ${MAX_CANALS} canals.`).optional(),
    fillingTechnique: oneOf(FILLING_TECHNIQUES, 'the filling technique').optional(),
    sealerClass: oneOf(SEALER_CLASSES, 'the sealer class').optional(),
    apicalPatency: z.boolean().optional(),
    complications: uniqueList(COMPLICATIONS, 'complication').optional(),

    rootEndFilling: oneOf(ROOT_END_FILLINGS, 'the root-end filling').optional(),
    pulpTherapyType: oneOf(PULP_THERAPY_TYPES, 'the type of pulp therapy').optional(),
    cappingMaterial: oneOf(CAPPING_MATERIALS, 'the capping material').optional(),

    fillDensity: oneOf(FILL_DENSITIES, 'the fill density').optional(),
    coronalRestoration: oneOf(COMPLETION_RESTORATIONS, 'the coronal restoration at completion').optional(),
    definitiveRestoration: oneOf(DEFINITIVE_RESTORATIONS, 'the definitive restoration').optional(),
    definitiveRestorationDate: blankAsUndefined(calendarDate('the date of the definitive restoration')),
    /**
     * The same tooth's earlier case when this one retreats or operates on it (the tooth stays
     * followed for tooth loss across the chain). The service checks practice, patient, tooth and dates.
     */
    previousCaseId: blankAsUndefined(Id),
  });
}

type CaseShape = Partial<z.output<ReturnType<typeof caseObject>>>;

/**
 * PAI and lesion size that contradict each other: PAI 1 is "normal periapical structures", and
 * PAI 4 and 5 describe a radiolucent area (Ørstavik, Kerekes & Eriksen 1986). PAI 2–3 may have
 * no measurable lesion. Shared with the review schema.
 */
export function paiLesionMismatch(pai: number | undefined, lesionMm: number | undefined): string | undefined {
  if (pai === undefined || lesionMm === undefined) return undefined;
  if (pai === 1 && lesionMm > 0) return `PAI 1 means normal periapical structures, yet a ${lesionMm} mm lesion is entered.`;
  if (pai >= 4 && lesionMm === 0) return `PAI ${pai} describes a radiolucent area: enter its largest diameter in mm.`;
  return undefined;
}

const issue = (ctx: z.RefinementCtx, path: (string | number)[], message: string) => ctx.addIssue({ code: 'custom', path, message });

/**
 * Rules across fields. On a whole case (`partial` false) a missing optional field counts as
 * empty; on a patch only the fields the patch carries are checked.
 */
export const caseRules =
  (partial: boolean) =>
  (c: CaseShape, ctx: z.RefinementCtx): void => {
    /** The value is known: present in a patch, or always on a whole case. */
    const known = (key: keyof CaseShape) => !partial || key in c;

    if (c.startDate && c.completionDate && c.completionDate < c.startDate) {
      issue(ctx, ['completionDate'], 'The completion date is before the start date.');
    }
    if (c.definitiveRestorationDate) {
      if (known('definitiveRestoration') && !c.definitiveRestoration) {
        issue(ctx, ['definitiveRestoration'], 'Say which definitive restoration was placed on that date.');
      }
      const after = c.completionDate ?? c.startDate;
      if (after && c.definitiveRestorationDate < after) {
        issue(ctx, ['definitiveRestorationDate'], 'The definitive restoration date is before the treatment was completed.');
      }
    }

    switch (c.kind) {
      case 'nonsurgical_retreatment':
        if (c.pulpalDiagnosis && c.pulpalDiagnosis !== 'previously_treated') {
          issue(ctx, ['pulpalDiagnosis'], 'A retreatment is of a previously treated tooth: the pulpal diagnosis is “previously treated”.');
        }
        break;
      case 'primary_treatment':
        if (c.pulpalDiagnosis === 'previously_treated') {
          issue(ctx, ['pulpalDiagnosis'], 'A previously treated tooth gets a retreatment or apical surgery, not a primary treatment.');
        }
        break;
      case 'vital_pulp_therapy':
        if (c.pulpalDiagnosis && !VITAL_PULPAL_DIAGNOSES.includes(c.pulpalDiagnosis)) {
          issue(ctx, ['pulpalDiagnosis'], 'Vital pulp therapy needs a vital pulp: normal pulp, reversible or irreversible pulpitis.');
        }
        break;
      case 'regenerative_endodontics':
        if (c.pulpalDiagnosis && c.pulpalDiagnosis !== 'pulp_necrosis' && c.pulpalDiagnosis !== 'previously_initiated_therapy') {
          issue(ctx, ['pulpalDiagnosis'], 'A regenerative procedure is for a necrotic pulp (or previously initiated therapy).');
        }
        break;
    }

    const mismatch = paiLesionMismatch(c.paiScore, c.lesionDiameterMm);
    if (mismatch) issue(ctx, ['lesionDiameterMm'], mismatch);

    const canals = c.canals ?? [];
    if (c.kind && WITH_CANALS.includes(c.kind) && c.completionDate && known('canals') && canals.length === 0) {
      issue(ctx, ['canals'], 'Add at least one canal: the case is completed.');
    }
    const seen = new Map<string, number>();
    canals.forEach((canal, i) => {
      const first = seen.get(canal.name);
      if (first !== undefined) issue(ctx, ['canals', i, 'name'], `Canal ${canal.name} is listed twice (canals ${first + 1} and ${i + 1}).`);
      else seen.set(canal.name, i);
      if (canal.fillToApexMm !== undefined && known('completionDate') && !c.completionDate) {
        issue(ctx, ['canals', i, 'fillToApexMm'], 'The fill length is read on the completion film: enter the completion date first.');
      }
    });
    const beyond = canals.find((canal) => canal.fillToApexMm !== undefined && canal.fillToApexMm < 0);
    if (beyond && known('complications') && !(c.complications ?? []).includes('material_beyond_apex')) {
      issue(
        ctx,
        ['complications'],
        `Canal ${beyond.name} is filled ${Math.abs(beyond.fillToApexMm!)} mm beyond the apex: tick “material beyond the apex”.`,
      );
    }
  };

/**
 * Builds the case schemas; the default exports below use `allowPrimaryTeeth: false`. A practice
 * that accepts primary teeth builds its own with `buildCaseSchemas({ allowPrimaryTeeth: true })`.
 */
export function buildCaseSchemas(options: CaseSchemaOptions = {}) {
  const object = caseObject(options);
  const createObject = object.omit({ id: true });
  const wrap = <T extends z.ZodType>(schema: T) => z.preprocess(dropInapplicable, schema);
  return {
    /** The object itself, without cross-field rules (for .pick in forms). */
    CaseObject: object,
    /** A stored case. */
    CaseSchema: wrap(object.superRefine(caseRules(false))),
    /** A new case from the form or the API; the practice comes from the session. */
    CaseCreateSchema: wrap(createObject.superRefine(caseRules(false))),
    /** A change to some fields; the service re-checks the merged case with CaseCreateSchema. */
    CaseUpdateSchema: wrap(createObject.partial().superRefine(caseRules(true))),
    /**
     * A past, completed case from the CSV import: patient, operator and referrer are given by
     * registry number, e-mail and name instead of ids, and the completion date is required. A file
     * cannot name an earlier case (it has no case ids): link retreatments on the case's form.
     */
    CaseImportSchema: wrap(
      createObject
        .omit({ patientId: true, operatorId: true, referrerId: true, previousCaseId: true })
        .extend({ completionDate: calendarDate('the completion date') })
        .superRefine(caseRules(false)),
    ),
  };
}

const defaults = buildCaseSchemas();
export const CaseObject = defaults.CaseObject;
export const CaseSchema = defaults.CaseSchema;
export const CaseCreateSchema = defaults.CaseCreateSchema;
export const CaseUpdateSchema = defaults.CaseUpdateSchema;
export const CaseImportSchema = defaults.CaseImportSchema;

export type Case = z.output<typeof CaseSchema>;
export type CaseCreate = z.output<typeof CaseCreateSchema>;
export type CaseUpdate = z.output<typeof CaseUpdateSchema>;
export type CaseImport = z.output<typeof CaseImportSchema>;
/** What the case form holds (the schemas take `unknown` because of the kind-dependent drop). */
export type CaseFormValues = z.input<ReturnType<typeof caseObject>>;

/** Capitalised label for a vocabulary code without its own table ('calcium_silicate' → 'Calcium silicate'). */
export function codeLabel(code: string): string {
  return capitalise(code.replace(/_/g, ' '));
}
