import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { outcomesOverview } from '@/lib/services/outcomes';
import { Notice } from '@/components/ui/Notice';
import { filtersOf, OutcomesHeader } from './_components/parts';
import { OverviewFigures } from './_components/OverviewFigures';
import { viewData } from './_components/viewData';

export const metadata: Metadata = { title: 'Outcomes' };

export default async function OutcomesOverviewPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { em, actor } = await requireActor('outcomes.read', '/outcomes');
  const filters = filtersOf(await searchParams);
  delete filters.factor;
  const { data, problems, own } = await viewData(actor, () => outcomesOverview(em, actor, filters));
  return (
    <div className="space-y-8">
      <OutcomesHeader current="/outcomes" asOf={data?.asOf} filters={filters} clinicians={data?.clinicians ?? []} own={own} problems={problems} csvView="overview" referrers={data?.referrers} />
      {!data && <Notice tone="alert">Some filters need attention; nothing is shown until they are corrected.</Notice>}
      {data && <OverviewFigures o={data.overview} idPrefix="selection" title={data.own ? 'Your cases' : 'The cases chosen'} />}
      {data?.practice && <OverviewFigures o={data.practice} idPrefix="practice" title="The practice overall" />}
    </div>
  );
}
