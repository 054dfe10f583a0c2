import 'server-only';
/** The mapping between a validated case and its stored columns (shared with the import and the seed). */
import { type TreatmentCase } from '@/entities';
import { type CaseCreate } from '@/lib/schemas/case';
import { toothInfo } from '@/lib/teeth';
import { caseFillLengthClass } from './registry-common';


// --- helpers shared with the import and the seed ---------------------------------------------------

/** The stored columns of a validated case (derived tooth group, arch, canal count, fill-length class). */
export function caseColumns(input: Omit<CaseCreate, 'patientId' | 'operatorId' | 'referrerId'> & { patientId?: string; operatorId?: string; referrerId?: string }) {
  const tooth = toothInfo(input.tooth);
  const canals = input.kind === 'primary_treatment' || input.kind === 'nonsurgical_retreatment' ? (input.canals ?? []) : [];
  return {
    ...(input.patientId ? { patient: input.patientId } : {}),
    ...(input.operatorId ? { operator: input.operatorId } : {}),
    referrer: input.referrerId ?? null,
    tooth: tooth.fdi,
    toothGroup: tooth.group,
    toothArch: tooth.arch,
    kind: input.kind,
    startDate: input.startDate,
    completionDate: input.completionDate ?? null,
    pulpalDiagnosis: input.pulpalDiagnosis,
    apicalDiagnosis: input.apicalDiagnosis,
    paiScore: input.paiScore,
    lesionDiameterMm: input.lesionDiameterMm,
    preopSymptoms: input.preopSymptoms ?? [],
    sinusTract: input.sinusTract ?? null,
    probingDepthMm: input.probingDepthMm ?? null,
    canals,
    canalCount: canals.length,
    fillingTechnique: input.fillingTechnique ?? null,
    sealerClass: input.sealerClass ?? null,
    apicalPatency: input.apicalPatency ?? null,
    complications: input.complications ?? [],
    rootEndFilling: input.rootEndFilling ?? null,
    pulpTherapyType: input.pulpTherapyType ?? null,
    cappingMaterial: input.cappingMaterial ?? null,
    fillDensity: input.fillDensity ?? null,
    fillLengthClass: caseFillLengthClass(canals),
    coronalRestoration: input.coronalRestoration ?? null,
    definitiveRestoration: input.definitiveRestoration ?? null,
    definitiveRestorationDate: input.definitiveRestorationDate ?? null,
    previousCase: input.previousCaseId ?? null,
  };
}

/**
 * The fields of a case that its page and its form read: an entity, or the case page's plain read
 * (case-page.ts readCase). The references are only their ids here.
 */
export type CaseFields = Pick<
  TreatmentCase,
  | 'id'
  | 'tooth'
  | 'toothGroup'
  | 'toothArch'
  | 'kind'
  | 'startDate'
  | 'completionDate'
  | 'pulpalDiagnosis'
  | 'apicalDiagnosis'
  | 'paiScore'
  | 'lesionDiameterMm'
  | 'preopSymptoms'
  | 'sinusTract'
  | 'probingDepthMm'
  | 'canals'
  | 'fillingTechnique'
  | 'sealerClass'
  | 'apicalPatency'
  | 'complications'
  | 'rootEndFilling'
  | 'pulpTherapyType'
  | 'cappingMaterial'
  | 'fillDensity'
  | 'fillLengthClass'
  | 'coronalRestoration'
  | 'definitiveRestoration'
  | 'definitiveRestorationDate'
  | 'source'
  | 'archivedAt'
  | 'createdAt'
  | 'updatedAt'
> & {
  practice: { id: string };
  patient: { id: string };
  operator: { id: string };
  referrer?: { id: string } | null;
  previousCase?: { id: string } | null;
};

/** The stored case as CaseCreateSchema input (nulls left out). */
export function caseValues(c: CaseFields): CaseCreate {
  const v: Record<string, unknown> = {
    patientId: c.patient.id,
    tooth: c.tooth,
    kind: c.kind,
    operatorId: c.operator.id,
    referrerId: c.referrer?.id,
    startDate: c.startDate,
    completionDate: c.completionDate,
    pulpalDiagnosis: c.pulpalDiagnosis,
    apicalDiagnosis: c.apicalDiagnosis,
    paiScore: c.paiScore,
    lesionDiameterMm: Number(c.lesionDiameterMm),
    preopSymptoms: c.preopSymptoms,
    sinusTract: c.sinusTract,
    probingDepthMm: c.probingDepthMm,
    canals: c.canals,
    fillingTechnique: c.fillingTechnique,
    sealerClass: c.sealerClass,
    apicalPatency: c.apicalPatency,
    complications: c.complications,
    rootEndFilling: c.rootEndFilling,
    pulpTherapyType: c.pulpTherapyType,
    cappingMaterial: c.cappingMaterial,
    fillDensity: c.fillDensity,
    coronalRestoration: c.coronalRestoration,
    definitiveRestoration: c.definitiveRestoration,
    definitiveRestorationDate: c.definitiveRestorationDate,
    previousCaseId: c.previousCase?.id,
  };
  for (const k of Object.keys(v)) if (v[k] === null || v[k] === undefined) delete v[k];
  return v as CaseCreate;
}
