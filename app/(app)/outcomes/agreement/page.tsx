import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { readingAgreement } from '@/lib/services/readings';
import type { KappaInterval } from '@/lib/stats';
import { Caution } from '@/components/ui/Caution';
import { EmptyState } from '@/components/ui/EmptyState';
import { fmtDate } from '@/components/ui/format';
import { OutcomesTabs } from '../_components/parts';
import { ReferenceButton } from './ReferenceButton';

export const metadata: Metadata = { title: 'Reader agreement' };

// A zero standard error (e.g. perfect agreement on two films) gives no usable interval: say so.
const k = (v: KappaInterval | null) =>
  !v ? '—' : v.se > 0 ? `${v.kappa.toFixed(2)} (${v.lower.toFixed(2)} to ${v.upper.toFixed(2)})` : `${v.kappa.toFixed(2)} (no interval: too few films)`;
const films = (n: number) => `${n} ${n === 1 ? 'film' : 'films'}`;

export default async function AgreementPage() {
  const { em, actor } = await requireActor('reading.lead', '/outcomes/agreement');
  const data = await readingAgreement(em, actor);
  return (
    <div className="space-y-8">
      <div className="space-y-4">
        <div>
          <h1 className="text-3xl">Outcomes</h1>
          <p className="mt-1 max-w-3xl text-ink-700">How closely the practice’s clinicians agree when they score the same films.</p>
        </div>
        <OutcomesTabs current="/outcomes/agreement" lead />
      </div>
      <section aria-labelledby="pairs-title" className="space-y-3">
        <h2 id="pairs-title" className="text-2xl">
          Reader agreement
        </h2>
        <p className="text-sm text-ink-700">
          {films(data.counts.agreed)} agreed, {films(data.counts['awaiting-second'])} awaiting a second reading,{' '}
          {films(data.counts['awaiting-adjudication'])} awaiting adjudication. Second-reading share: {data.secondReadingPercent}% of films, plus every film whose first reading means disease.{' '}
          <Link href="/reading?scope=practice">The practice’s reading queue</Link>
        </p>
        <Caution text={data.caution} />
        {data.pairs.length === 0 ? (
          <EmptyState title="No film has two readings yet" action={{ href: '/reading?scope=practice', label: 'Open the reading queue' }}>
            Agreement appears once clinicians have read the same films: a first reading and a blinded second reading of each.
          </EmptyState>
        ) : (
          <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
            <table className="table-dense table-stack w-full" aria-label="Weighted kappa per pair of readers">
              <thead>
                <tr>
                  <th scope="col">Readers</th>
                  <th scope="col">Films</th>
                  <th scope="col">Linear weighted kappa (95% CI)</th>
                  <th scope="col">Quadratic weighted kappa (95% CI)</th>
                </tr>
              </thead>
              <tbody>
                {data.pairs.map((p) => (
                  <tr key={p.readers.join()} className={p.n < 10 ? 'text-ink-500' : undefined}>
                    <td data-label="Readers">
                      {p.names[0]} and {p.names[1]}
                    </td>
                    <td data-label="Films">
                      {p.n}
                      {p.n < 10 && ' (few films)'}
                    </td>
                    <td data-label="Linear kappa" data-testid="kappa-linear">
                      {k(p.linear)}
                    </td>
                    <td data-label="Quadratic kappa">
                      {k(p.quadratic)}
                      {p.note && <span className="block text-xs">{p.note}</span>}
                    </td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}
        <p className="text-xs text-ink-500">{data.method}</p>
      </section>

      <section aria-labelledby="calibration-title" className="space-y-3">
        <h2 id="calibration-title" className="text-2xl">
          Calibration exercise
        </h2>
        <p className="max-w-3xl text-sm text-ink-700">
          Each clinician scores the practice’s reference films blinded, once a year; their scores are compared with the reference score you set.
        </p>
        <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
          <table className="table-dense table-stack w-full" aria-label="Calibration against the reference set">
            <thead>
              <tr>
                <th scope="col">Clinician</th>
                <th scope="col">Reference films read</th>
                <th scope="col">Linear weighted kappa (95% CI)</th>
                <th scope="col">Last exercise</th>
              </tr>
            </thead>
            <tbody>
              {data.calibration.map((c) => (
                <tr key={c.readerId}>
                  <td data-label="Clinician">{c.name}</td>
                  <td data-label="Films read">{c.n}</td>
                  <td data-label="Linear kappa">{k(c.linear)}</td>
                  <td data-label="Last exercise">
                    {c.lastExercise ? fmtDate(c.lastExercise) : 'Never'}
                    {c.due && <span className="ml-2 rounded bg-state-watchBg px-1 text-xs text-state-watch">⏰ due: over a year ago or never</span>}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
        <h3 className="text-lg">Reference set ({data.reference.length} films)</h3>
        {data.reference.length === 0 ? (
          <p className="text-sm text-ink-700">No reference film yet: add agreed films below, with their agreed score as the reference.</p>
        ) : (
          <ul className="flex flex-wrap gap-3">
            {data.reference.map((r) => (
              <li key={r.filmId} className="space-y-1 text-sm">
                {/* eslint-disable-next-line @next/next/no-img-element -- authorised, uncached film route */}
                <img src={r.thumbnailUrl} alt={`Reference film, PAI ${r.pai}`} width={96} height={72} className="h-18 w-24 rounded object-cover" />
                <div>PAI {r.pai}</div>
                <ReferenceButton filmId={r.filmId} pai={null} label="Remove" />
              </li>
            ))}
          </ul>
        )}
        {data.candidates.length > 0 && (
          <>
            <h3 className="text-lg">Agreed films you could add</h3>
            <ul className="flex flex-wrap gap-3">
              {data.candidates.map((c) => (
                <li key={c.filmId} className="space-y-1 text-sm">
                  {/* eslint-disable-next-line @next/next/no-img-element -- authorised, uncached film route */}
                  <img src={c.thumbnailUrl} alt={`Agreed film, PAI ${c.agreedPai}`} width={96} height={72} className="h-18 w-24 rounded object-cover" />
                  <ReferenceButton filmId={c.filmId} pai={c.agreedPai} label={`Add as PAI ${c.agreedPai}`} />
                </li>
              ))}
            </ul>
          </>
        )}
      </section>
    </div>
  );
}
