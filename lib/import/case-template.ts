/**
 * The case import's template (lib/registry/csv.ts) as a template descriptor for the reading
 * layer: the same columns in the same order, their kinds, the codes each coded column allows, and
 * the other names and coded values practices' own spreadsheets commonly use (common practice, in
 * English; extend the synonyms here, never in the mapping code).
 */
import { CSV_COLUMNS } from '@/lib/registry/csv';
import {
  APICAL_DIAGNOSES,
  APICAL_DIAGNOSIS_LABELS,
  CAPPING_MATERIALS,
  CASE_KINDS,
  CASE_KIND_LABELS,
  COMPLETION_RESTORATIONS,
  COMPLETION_RESTORATION_LABELS,
  COMPLICATIONS,
  COMPLICATION_LABELS,
  DEFINITIVE_RESTORATIONS,
  DEFINITIVE_RESTORATION_LABELS,
  FILL_DENSITIES,
  FILLING_TECHNIQUES,
  FILLING_TECHNIQUE_LABELS,
  PREOP_SYMPTOMS,
  PREOP_SYMPTOM_LABELS,
  PULPAL_DIAGNOSES,
  PULPAL_DIAGNOSIS_LABELS,
  PULP_THERAPY_TYPES,
  ROOT_END_FILLINGS,
  SEALER_CLASSES,
  SEALER_CLASS_LABELS,
} from '@/lib/schemas/case';
import { RECALL_CHANNELS, SEXES } from '@/lib/schemas/patient';
import { YES_NO_CODES, type TemplateCode, type TemplateColumn, type TemplateDescriptor, type TemplateValueHint } from './template';

const words = (code: string) => code.charAt(0).toUpperCase() + code.slice(1).replace(/_/g, ' ');

function codes(list: readonly string[], labels?: Record<string, string>, synonyms: Record<string, readonly string[]> = {}): TemplateCode[] {
  return list.map((code) => ({ code, label: labels?.[code] ?? words(code), ...(synonyms[code] ? { synonyms: synonyms[code] } : {}) }));
}

const CODES: Record<string, readonly TemplateCode[]> = {
  sex: codes(SEXES, undefined, {
    female: ['f', 'w', 'woman', 'girl'],
    male: ['m', 'man', 'boy'],
    other: ['x', 'diverse'],
    not_stated: ['u', 'unknown', 'not known', 'prefer not to say', 'ns'],
  }),
  recall_channel: codes(RECALL_CHANNELS, { email: 'E-mail', phone: 'Phone', post: 'Post', none: 'None' }, {
    email: ['e mail', 'mail'],
    phone: ['telephone', 'tel', 'call', 'mobile'],
    post: ['letter', 'postal', 'mail by post'],
    none: ['no contact', 'do not contact'],
  }),
  kind: codes(CASE_KINDS, CASE_KIND_LABELS, {
    primary_treatment: ['rct', 'root canal treatment', 'root canal', 'primary', 'primary rct', 'initial treatment', 'initial rct'],
    nonsurgical_retreatment: ['retreatment', 're treatment', 'rerct', 're rct', 'retx', 'ortho retreatment', 'non surgical retreatment', 'nsrt'],
    apical_surgery: ['apicectomy', 'apicoectomy', 'root end surgery', 'periradicular surgery', 'endodontic surgery', 'surgery'],
    vital_pulp_therapy: ['vpt', 'pulpotomy', 'pulp capping', 'pulp cap', 'vital pulp'],
    regenerative_endodontics: ['regenerative', 'regeneration', 'revascularisation', 'revascularization', 'rep'],
  }),
  pulpal_diagnosis: codes(PULPAL_DIAGNOSES, PULPAL_DIAGNOSIS_LABELS, { pulp_necrosis: ['necrotic', 'necrosis', 'necrotic pulp'] }),
  apical_diagnosis: codes(APICAL_DIAGNOSES, APICAL_DIAGNOSIS_LABELS),
  preop_symptoms: codes(PREOP_SYMPTOMS, PREOP_SYMPTOM_LABELS),
  complications: codes(COMPLICATIONS, COMPLICATION_LABELS, { separated_instrument: ['fractured instrument', 'broken file', 'separated file'] }),
  filling_technique: codes(FILLING_TECHNIQUES, FILLING_TECHNIQUE_LABELS),
  sealer_class: codes(SEALER_CLASSES, SEALER_CLASS_LABELS),
  fill_density: codes(FILL_DENSITIES, undefined, { homogeneous: ['dense', 'good'], voids: ['void', 'voided'] }),
  root_end_filling: codes(ROOT_END_FILLINGS),
  pulp_therapy_type: codes(PULP_THERAPY_TYPES),
  capping_material: codes(CAPPING_MATERIALS),
  coronal_restoration: codes(COMPLETION_RESTORATIONS, COMPLETION_RESTORATION_LABELS, { direct_composite: ['composite'], direct_amalgam: ['amalgam'], glass_ionomer: ['gic'] }),
  definitive_restoration: codes(DEFINITIVE_RESTORATIONS, DEFINITIVE_RESTORATION_LABELS, { direct_composite: ['composite'], direct_amalgam: ['amalgam'] }),
};

/** Other header names for the template's columns (normalised when compared). */
const SYNONYMS: Record<string, readonly string[]> = {
  registry_number: ['patient number', 'patient no', 'patient id', 'pt no', 'record number', 'chart number', 'file number', 'registry no', 'patient ref'],
  given_name: ['first name', 'forename', 'given', 'firstname'],
  family_name: ['surname', 'last name', 'lastname', 'family'],
  date_of_birth: ['dob', 'birth date', 'birthdate', 'born', 'd o b'],
  sex: ['gender'],
  email: ['patient email', 'e mail', 'email address', 'patient e mail'],
  phone: ['telephone', 'mobile', 'tel', 'phone number', 'patient phone'],
  postal_code: ['postcode', 'post code', 'zip', 'zip code'],
  recall_contact: ['recall consent', 'contact consent', 'may contact', 'consent to recall', 'recall ok'],
  recall_channel: ['contact by', 'recall by', 'preferred contact', 'contact method'],
  research_use: ['research consent', 'consent research', 'research'],
  consent_date: ['date of consent', 'consented on', 'consent'],
  operator_email: ['clinician email', 'dentist email', 'operator', 'treating clinician email', 'clinician'],
  referrer_name: ['referring dentist', 'referred by', 'referrer', 'gdp'],
  referrer_practice: ['referring practice', 'referrer surgery', 'gdp practice'],
  referrer_email: ['referring dentist email', 'gdp email'],
  tooth_fdi: ['tooth', 'tooth number', 'tooth no', 'fdi', 'fdi tooth', 'tooth fdi number', 'tooth nr'],
  kind: ['treatment', 'treatment type', 'procedure', 'case type', 'type of treatment'],
  start_date: ['date started', 'first visit', 'treatment start', 'start', 'date of first visit'],
  completion_date: ['date completed', 'completed', 'completion', 'obturation date', 'date of obturation', 'finished', 'date of treatment', 'treatment date'],
  pulpal_diagnosis: ['pulp diagnosis', 'pulpal dx', 'pulp dx'],
  apical_diagnosis: ['periapical diagnosis', 'apical dx', 'periapical dx'],
  pai: ['periapical index', 'pai score', 'pai before', 'pre op pai', 'preop pai'],
  lesion_mm: ['lesion size', 'lesion diameter', 'lesion size mm', 'lesion', 'radiolucency size'],
  preop_symptoms: ['symptoms', 'pre op symptoms', 'presenting symptoms'],
  sinus_tract: ['sinus', 'fistula'],
  probing_depth_mm: ['probing depth', 'probing', 'pocket depth', 'ppd'],
  filling_technique: ['obturation technique', 'obturation', 'fill technique'],
  sealer_class: ['sealer', 'sealer type'],
  apical_patency: ['patency'],
  complications: ['complication', 'incidents'],
  fill_density: ['density', 'obturation quality'],
  root_end_filling: ['retrograde filling', 'root end material'],
  pulp_therapy_type: ['vpt type', 'pulp therapy'],
  capping_material: ['pulp capping material', 'cap material'],
  coronal_restoration: ['restoration at completion', 'core', 'access restoration'],
  definitive_restoration: ['final restoration', 'definitive resto'],
  definitive_restoration_date: ['final restoration date', 'date restored', 'restored on'],
};

const HINTS: Record<string, TemplateValueHint> = {
  registry_number: 'identifier',
  given_name: 'person_name',
  family_name: 'person_name',
  email: 'email',
  operator_email: 'email',
  referrer_email: 'email',
  phone: 'phone',
  postal_code: 'postal_code',
  tooth_fdi: 'fdi_tooth',
};

const RANGES: Record<string, [number, number]> = {
  pai: [1, 5],
  lesion_mm: [0, 30],
  probing_depth_mm: [1, 15],
  working_length_mm: [8, 35],
  apical_size: [6, 140],
  fill_to_apex_mm: [-5, 10],
};

const LABELS: Record<string, string> = {
  registry_number: 'Registry number',
  tooth_fdi: 'Tooth (FDI)',
  kind: 'Kind of treatment',
  pai: 'Periapical index (PAI) before treatment',
  lesion_mm: 'Lesion diameter before treatment (mm)',
  operator_email: 'Clinician’s e-mail',
  email: 'Patient e-mail',
  phone: 'Patient phone',
};

function describe(c: (typeof CSV_COLUMNS)[number]): TemplateColumn {
  const canal = /^canal(\d)_(.+)$/.exec(c.name);
  const range = RANGES[canal ? canal[2]! : c.name];
  const kind = c.kind === 'bool' || c.kind === 'codes' ? 'code' : c.kind;
  const allowed = c.kind === 'bool' ? YES_NO_CODES : CODES[c.name];
  return {
    key: c.name,
    label: LABELS[c.name] ?? (canal ? `Canal ${canal[1]}: ${words(canal[2]!).replace(/ mm$/, ' (mm)')}` : words(c.name).replace(/ mm$/, ' (mm)')),
    kind,
    ...(c.required ? { required: true } : {}),
    ...(allowed ? { codes: allowed } : {}),
    ...(c.kind === 'codes' ? { multiple: true } : {}),
    ...(SYNONYMS[c.name] ? { synonyms: SYNONYMS[c.name] } : {}),
    ...(HINTS[c.name] ? { hint: HINTS[c.name] } : {}),
    ...(range ? { min: range[0], max: range[1] } : {}),
    description: c.description,
  };
}

export const CASE_TEMPLATE: TemplateDescriptor = {
  id: 'cases',
  label: 'Past cases',
  columns: CSV_COLUMNS.map(describe),
};
