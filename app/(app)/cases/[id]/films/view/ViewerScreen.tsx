'use client';
import { useState } from 'react';
import Link from 'next/link';
import { FilmViewer, type CalibrationRequest, type MeasurementRequest, type SaveResult, type ViewerFilm } from '@/components/films/FilmViewer';
import { submitJson } from '@/components/forms/submitJson';
import type { FilmView } from '@/lib/services/films';
import { toViewerFilm } from '@/components/films/viewer-film';

/**
 * The case's viewer: FilmViewer with saving through the film API, and — for a clinician — the
 * measured diameter carried into the review form of the film's visit.
 */
export function ViewerScreen({
  caseId,
  films,
  labels,
  visits,
  canMeasure,
}: {
  caseId: string;
  films: ViewerFilm[];
  /** Film id → caption (kept when a saved film comes back). */
  labels: Record<string, string>;
  /** Film id → its recall visit, when it has one. */
  visits: Record<string, string | null>;
  canMeasure: boolean;
}) {
  const [measured, setMeasured] = useState<ViewerFilm | null>(films.findLast((f) => f.measurement) ?? null);

  async function put(filmId: string, what: 'calibration' | 'measurement', body: unknown): Promise<SaveResult> {
    const r = await submitJson<{ film: FilmView }>(`/api/films/${filmId}/${what}`, 'PUT', body);
    if (!r.ok) return { ok: false, message: [r.message, ...Object.values(r.fieldErrors).flat()].filter(Boolean).join(' ') || 'Not saved: try again.' };
    return { ok: true, film: toViewerFilm(r.data.film, labels[filmId] ?? '') };
  }

  const review = measured?.measurement
    ? `/cases/${caseId}?review=${visits[measured.id] ?? 'unplanned'}&lesionMm=${measured.measurement.diameterMm.toFixed(1)}#record-review`
    : null;

  return (
    <div className="space-y-3">
      <FilmViewer
        films={films}
        onCalibrate={canMeasure ? (id, req: CalibrationRequest) => put(id, 'calibration', req) : undefined}
        onMeasure={canMeasure ? (id, req: MeasurementRequest) => put(id, 'measurement', req) : undefined}
        onMeasured={setMeasured}
      />
      {canMeasure && review && measured?.measurement && (
        <p className="text-sm">
          <Link href={review} className="btn-primary inline-block" data-testid="use-in-review">
            Record the review with {measured.measurement.diameterMm.toFixed(1)} mm
          </Link>{' '}
          <span className="text-ink-700">({measured.label}: the largest lesion diameter goes into the review form; you can still change it there.)</span>
        </p>
      )}
    </div>
  );
}
