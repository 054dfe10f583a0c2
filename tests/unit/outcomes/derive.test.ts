import { describe, expect, it } from 'vitest';
import { byFactor, curves, deriveCaseFacts, overview, type OutcomeCase } from '@/lib/outcomes';
import { worklistEntries } from '@/lib/outcomes/worklist';
import { at, outcomeCase, present, review } from '../../support/outcome-cases';

/**
 * deriveCaseFacts (what the web server derives per case at start, lib/services/outcomes-warm.ts) only
 * memoises: every figure computed on rows whose facts were derived — even first for another minimum
 * observation time — equals the same figure on fresh copies of the rows (no memo at all).
 */
function rows(): OutcomeCase[] {
  return [
    outcomeCase({ id: 'heal', reviews: [present(360, 2), present(730, 1)] }),
    outcomeCase({ id: 'dis', operatorId: 'u2', reviews: [present(380, 5, { sinusTract: true })] }),
    outcomeCase({ id: 'slow', baselinePai: 3, reviews: [present(200, 3), present(1500, 2)] }),
    outcomeCase({ id: 'lost', reviews: [] }),
    outcomeCase({ id: 'ext', operatorId: 'u2', reviews: [present(365, 4), { ...review(800, 'extracted'), eventDate: at(790) }] }),
    // a tooth retreated after its first case: the chain is followed for tooth loss
    outcomeCase({ id: 'first', patientId: 'q', reviews: [present(365, 5), review(500, 'retreated')] }),
    outcomeCase({ id: 'again', patientId: 'q', kind: 'nonsurgical_retreatment', previousCaseId: 'first', completionDate: at(520), reviews: [review(900, 'present', { paiScore: 1 }), review(1700, 'extracted')] }),
  ];
}

describe('deriveCaseFacts', () => {
  it('changes no figure of the overview, a factor, the curves or the worklist (whatever minimum observation time was derived first)', () => {
    const today = at(2000);
    for (const minObs of [365, 180]) {
      const derived = rows();
      for (const c of derived) deriveCaseFacts(c, derived, minObs === 365 ? 180 : 365); // another minimum first
      for (const c of derived) deriveCaseFacts(c, derived, minObs);
      const plain = rows();
      const figures = (all: OutcomeCase[]) => ({
        overview: overview(all, all, today, minObs),
        factor: byFactor(all, 'clinician', minObs),
        healing: curves(all, all, { endpoint: 'healing', method: 'km', factor: null, minObs }),
        tooth: curves(all, all, { endpoint: 'tooth', method: 'turnbull', factor: 'kind', minObs }),
        worklist: worklistEntries(all, all, today, minObs),
      });
      const a = figures(derived);
      expect(a).toEqual(figures(plain));
      // the rows are not trivial: something is listed, lost, lost teeth
      expect(a.worklist.map((e) => e.caseId)).toContain('dis');
      expect(a.overview.toothLossEvents).toBeGreaterThan(0);
    }
  });
});
