/**
 * k-anonymity of a research export on its quasi-identifiers (Sweeney L. k-anonymity: a model for
 * protecting privacy. Int J Uncertain Fuzziness Knowl-Based Syst 2002;10(5):557–570): every row
 * released shares its quasi-identifiers (age band, sex, completion year, tooth group, practice —
 * those of them the export releases) with at least k − 1 others.
 *
 * Two passes over the rows, memory bounded by the number of classes, not of rows:
 *  1. `add` counts each row's class at the fine level (five-year age band, calendar year, ZIP
 *     prefix) and, beside it, the class it falls in when generalised (ten-year band, five-year
 *     period, no ZIP prefix), with the outcomes seen in each (for l);
 *  2. `plan()` decides per fine class: kept when it holds ≥ k rows; otherwise its rows are
 *     generalised, and kept when their generalised class (the generalised rows of every small fine
 *     class that falls in it) holds ≥ k; otherwise suppressed (left out of the export). Generalising
 *     only the small classes is local recoding (Sweeney 2002, section 4: a released row's class is
 *     the rows with the same released values, which never mix the two levels' codes).
 *
 * l-diversity (Machanavajjhala A et al. ℓ-diversity: privacy beyond k-anonymity. ACM TKDD 2007;1(1):3)
 * is reported, not enforced: the smallest number of distinct outcomes (the sensitive attribute) in
 * any released class ("distinct l-diversity").
 */

export type KDecision = 'keep' | 'generalise' | 'suppress';

interface FineClass {
  n: number;
  generalisedKey: string;
  outcomes: Set<string>;
}

export interface KPlan {
  k: number;
  decide(fineKey: string): KDecision;
  /** rows generalised and kept, rows suppressed */
  generalised: number;
  suppressed: number;
  /** released classes (both levels) and the smallest of them (0 when none) */
  classes: number;
  smallestClass: number;
  /** the smallest number of distinct outcomes in a released class (0 when nothing is released) */
  minL: number;
}

export class KAnonymityCounter {
  private readonly fine = new Map<string, FineClass>();

  constructor(readonly k: number) {
    if (!Number.isInteger(k) || k < 1) throw new RangeError(`k must be a whole number of at least 1 (got ${k})`);
  }

  /** Pass 1: one row's class at the fine level, its class when generalised, and its outcome. */
  add(fineKey: string, generalisedKey: string, outcome: string): void {
    let c = this.fine.get(fineKey);
    if (!c) {
      c = { n: 0, generalisedKey, outcomes: new Set() };
      this.fine.set(fineKey, c);
    }
    c.n += 1;
    c.outcomes.add(outcome);
  }

  plan(): KPlan {
    const k = this.k;
    const coarse = new Map<string, { n: number; outcomes: Set<string> }>();
    for (const c of this.fine.values()) {
      if (c.n >= k) continue;
      const g = coarse.get(c.generalisedKey) ?? { n: 0, outcomes: new Set<string>() };
      g.n += c.n;
      for (const o of c.outcomes) g.outcomes.add(o);
      coarse.set(c.generalisedKey, g);
    }
    const decisions = new Map<string, KDecision>();
    let generalised = 0;
    let suppressed = 0;
    let classes = 0;
    let smallestClass = Infinity;
    let minL = Infinity;
    for (const [key, c] of this.fine) {
      if (c.n >= k) {
        decisions.set(key, 'keep');
        classes += 1;
        smallestClass = Math.min(smallestClass, c.n);
        minL = Math.min(minL, c.outcomes.size);
      } else if (coarse.get(c.generalisedKey)!.n >= k) {
        decisions.set(key, 'generalise');
        generalised += c.n;
      } else {
        decisions.set(key, 'suppress');
        suppressed += c.n;
      }
    }
    for (const g of coarse.values()) {
      if (g.n < k) continue;
      classes += 1;
      smallestClass = Math.min(smallestClass, g.n);
      minL = Math.min(minL, g.outcomes.size);
    }
    return {
      k,
      decide: (fineKey) => decisions.get(fineKey) ?? 'suppress',
      generalised,
      suppressed,
      classes,
      smallestClass: classes ? smallestClass : 0,
      minL: classes ? minL : 0,
    };
  }
}

/** A class key from quasi-identifier values (a separator no value holds). */
export function classKey(values: readonly (string | null)[]): string {
  return values.map((v) => v ?? '').join('\u0001');
}
