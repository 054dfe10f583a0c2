import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { listFilms, type FilmView } from '@/lib/services/films';
import { NotFoundError } from '@/lib/services/errors';
import { fmtDate } from '@/components/ui/format';
import { Caution } from '@/components/ui/Caution';
import { toViewerFilm } from '@/components/films/viewer-film';
import { ViewerScreen } from './ViewerScreen';

export const metadata: Metadata = { title: 'Film viewer' };

const labelOf = (f: FilmView) => `${f.roleLabel}, ${fmtDate(f.acquisitionDate ?? f.createdAt)}`;

/** The default pair: the latest baseline (post-fill, else pre-operative) and the latest follow-up. */
function defaultPair(films: FilmView[]): FilmView[] {
  const latest = (role: FilmView['role']) => films.find((f) => f.role === role);
  return [latest('post_fill') ?? latest('pre_operative'), latest('follow_up')].filter((f): f is FilmView => Boolean(f));
}

/**
 * /cases/:id/films/view?films=<baseline>,<follow-up>: the two films side by side (FilmViewer), to
 * compare, calibrate and measure. Anyone who reads the films may look; clinicians (review.write)
 * calibrate and measure.
 */
export default async function FilmViewerPage({ params, searchParams }: { params: Promise<{ id: string }>; searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { id } = await params;
  const query = await searchParams;
  const { em, actor } = await requireActor('film.read', `/cases/${id}/films/view`);
  const { films } = await listFilms(em, actor, id).catch((e) => {
    if (e instanceof NotFoundError) notFound();
    throw e;
  });
  // ?films=a,b (links) or ?pick=a&pick=b (the chooser below); unknown ids are left out.
  const picks = [query.pick].flat().filter((x): x is string => typeof x === 'string' && x !== '');
  const asked = picks.length ? picks.slice(0, 2) : typeof query.films === 'string' ? query.films.split(',').slice(0, 2) : [];
  const chosen = asked.length ? asked.map((x) => films.find((f) => f.id === x)).filter((f): f is FilmView => Boolean(f)) : defaultPair(films);
  const canMeasure = can(actor.roles, 'review.write');
  const options = films.map((f) => ({ value: f.id, label: labelOf(f) }));

  return (
    <div className="space-y-4">
      <p className="text-sm">
        <Link href={`/cases/${id}`}>← Case</Link>
      </p>
      <h1 className="text-3xl">Film viewer</h1>
      {films.length === 0 ? (
        <div className="rounded-md border border-dashed border-bone-300 px-4 py-6 text-sm text-ink-700">
          <p className="font-medium text-ink-900">No films on this case yet.</p>
          <p className="mt-1">
            Upload the post-fill baseline and the follow-up films on the <Link href={`/cases/${id}`}>case page</Link>; they open here side by side.
          </p>
        </div>
      ) : (
        <>
          <form method="get" className="flex flex-wrap items-end gap-3 text-sm" aria-label="Choose the films">
            {[0, 1].map((i) => (
              <label key={i} className="flex flex-col">
                <span className="field-label">{i === 0 ? 'Left (baseline)' : 'Right (follow-up)'}</span>
                <select name="pick" defaultValue={chosen[i]?.id ?? ''} className="field-input">
                  <option value="">None</option>
                  {options.map((o) => (
                    <option key={o.value} value={o.value}>
                      {o.label}
                    </option>
                  ))}
                </select>
              </label>
            ))}
            <button type="submit" className="btn-secondary">
              Show
            </button>
          </form>
          {chosen.length === 0 ? (
            <p className="text-sm text-ink-700">Choose one or two films above.</p>
          ) : (
            <ViewerScreen
              key={chosen.map((f) => f.id).join(',')}
              caseId={id}
              films={chosen.map((f) => toViewerFilm(f, labelOf(f)))}
              labels={Object.fromEntries(chosen.map((f) => [f.id, labelOf(f)]))}
              visits={Object.fromEntries(chosen.map((f) => [f.id, f.visitId]))}
              canMeasure={canMeasure}
            />
          )}
          <Caution text="Measurements are only as good as the calibration and the film: they support your judgement and do not replace it. Lamina does not diagnose." />
        </>
      )}
    </div>
  );
}
