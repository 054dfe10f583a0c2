'use client';
import { useCallback, useEffect, useId, useRef, useState } from 'react';
import { FILM_ROLES, FILM_ROLE_LABELS, type FilmRole } from '@/lib/films/roles';
import { THUMB_SIDE, fitInside } from '@/lib/films/sizes';
import type { FilmView } from '@/lib/services/films';
import { Select } from '@/components/ui/Select';
import { useFilesChosenEarly } from '@/components/ui/useFilesChosenEarly';
import { fmtDate } from '@/components/ui/format';

export interface FilmVisitOption {
  value: string;
  label: string;
}

type Status = 'waiting' | 'uploading' | 'processing' | 'done' | 'failed';

interface Upload {
  key: string;
  file: File;
  role: FilmRole;
  visitId: string;
  status: Status;
  /** 0–100 while the bytes go up. */
  progress: number;
  message?: string;
  /** Trying the same file again can help (a lost connection, a busy or restarting server), not a refused file. */
  retryable?: boolean;
  /** The server had this file already for this case and role (a retry): no copy kept. */
  repeated?: boolean;
}

/** At most two uploads at once: a phone on a practice's Wi-Fi is not a server. */
const PARALLEL = 2;

const STATUS_WORDS: Record<Status, string> = {
  waiting: 'Waiting',
  uploading: 'Uploading',
  processing: 'Reading the film',
  done: 'Uploaded',
  failed: 'Not uploaded',
};

const mb = (bytes: number) => `${(bytes / 1024 / 1024).toFixed(bytes < 1024 * 1024 ? 2 : 1)} MB`;

/**
 * The case page's films: the thumbnails (role, date, format, a warning when a DICOM file names
 * another patient) and, for those who may upload, several files at once with progress per file and
 * a retry after a failure (the server keeps one film per file, case and role, so a retry never
 * makes a copy). Thumbnails and renditions come only through /api/films/:id/… (audited).
 */
export function FilmsSection({
  caseId,
  initialFilms,
  canUpload,
  visits,
  maxBytes,
}: {
  caseId: string;
  initialFilms: FilmView[];
  canUpload: boolean;
  visits: FilmVisitOption[];
  maxBytes: number;
}) {
  const [films, setFilms] = useState(initialFilms);
  const [uploads, setUploads] = useState<Upload[]>([]);
  const [role, setRole] = useState<FilmRole>('follow_up');
  const [visitId, setVisitId] = useState('');
  const fileInput = useRef<HTMLInputElement>(null);
  const running = useRef(new Set<string>());
  const inputId = useId();

  const update = useCallback((key: string, change: Partial<Upload>) => {
    setUploads((list) => list.map((u) => (u.key === key ? { ...u, ...change } : u)));
  }, []);

  const send = useCallback(
    (u: Upload) => {
      running.current.add(u.key);
      update(u.key, { status: 'uploading', progress: 0, message: undefined });
      const form = new FormData();
      form.set('file', u.file);
      form.set('role', u.role);
      if (u.visitId) form.set('visitId', u.visitId);
      const xhr = new XMLHttpRequest();
      xhr.open('POST', `/api/cases/${caseId}/films`);
      xhr.setRequestHeader('Accept', 'application/json');
      xhr.upload.onprogress = (e) => {
        if (e.lengthComputable) update(u.key, { progress: Math.round((e.loaded / e.total) * 100) });
      };
      xhr.upload.onload = () => update(u.key, { status: 'processing', progress: 100 });
      const finish = (change: Partial<Upload>) => {
        running.current.delete(u.key);
        update(u.key, change);
      };
      xhr.onload = () => {
        let body: { film?: FilmView; created?: boolean; message?: string } = {};
        try {
          body = JSON.parse(xhr.responseText) as typeof body;
        } catch {
          // not JSON: a proxy's error page
        }
        if ((xhr.status === 200 || xhr.status === 201) && body.film) {
          const film = body.film;
          setFilms((list) => [film, ...list.filter((f) => f.id !== film.id)]);
          finish({ status: 'done', repeated: body.created === false });
        } else {
          // 4xx: this file was refused (type, size, content): the same file again would be refused again.
          const retryable = xhr.status === 0 || xhr.status === 408 || xhr.status === 429 || xhr.status >= 500;
          finish({ status: 'failed', retryable, message: body.message ?? `The upload failed (status ${xhr.status}). Nothing was kept${retryable ? '; try again' : ''}.` });
        }
      };
      xhr.onerror = () => finish({ status: 'failed', retryable: true, message: 'The connection was lost during the upload. Nothing was kept; try again.' });
      xhr.onabort = xhr.onerror;
      xhr.send(form);
    },
    [caseId, update],
  );

  // Start waiting uploads, PARALLEL at a time.
  useEffect(() => {
    const free = PARALLEL - running.current.size;
    if (free <= 0) return;
    uploads
      .filter((u) => u.status === 'waiting' && !running.current.has(u.key))
      .slice(0, free)
      .forEach(send);
  }, [uploads, send]);

  function choose(files: FileList | null) {
    if (!files?.length) return;
    const added: Upload[] = [...files].map((file, i) => {
      const tooLarge = file.size > maxBytes;
      return {
        key: `${Date.now()}-${i}-${file.name}`,
        file,
        role,
        visitId,
        status: tooLarge ? 'failed' : 'waiting',
        progress: 0,
        message: tooLarge ? `The file is ${mb(file.size)}: larger than ${mb(maxBytes)}, the largest film Lamina takes.` : undefined,
      };
    });
    setUploads((list) => [...added, ...list]);
    if (fileInput.current) fileInput.current.value = '';
  }

  useFilesChosenEarly(fileInput, choose);

  const retry = (u: Upload) => update(u.key, { status: 'waiting', progress: 0, message: undefined, retryable: undefined });

  return (
    <section aria-labelledby="films" className="card space-y-4">
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <h2 id="films" className="text-xl">
          Films
        </h2>
        {films.length > 0 && (
          <a href={`/cases/${caseId}/films/view`} className="text-sm" data-testid="open-viewer">
            Compare and measure in the viewer
          </a>
        )}
      </div>

      {canUpload && (
        <div className="space-y-3 rounded-md border border-bone-300 p-3">
          <div className="grid gap-3 sm:grid-cols-3">
            <Select
              label="The films show"
              value={role}
              onChange={(e) => setRole(e.target.value as FilmRole)}
              options={FILM_ROLES.map((r) => ({ value: r, label: FILM_ROLE_LABELS[r] }))}
            />
            <Select label="Taken at" value={visitId} onChange={(e) => setVisitId(e.target.value)} placeholder="No recall visit" options={visits} />
            <div>
              <label htmlFor={inputId} className="field-label">
                Upload films
              </label>
              <input
                ref={fileInput}
                id={inputId}
                type="file"
                multiple
                accept=".png,.jpg,.jpeg,.dcm,.dicom,image/png,image/jpeg,application/dicom"
                className="field-input"
                onChange={(e) => choose(e.target.files)}
              />
            </div>
          </div>
          <p className="text-xs text-ink-500">
            PNG, JPEG or DICOM (uncompressed or JPEG Lossless), up to {mb(maxBytes)} each; several at once. Lamina checks each file by its content and keeps
            no camera or patient details of a PNG or JPEG.
          </p>
          {uploads.length > 0 && (
            <ul aria-label="Uploads" className="space-y-2">
              {uploads.map((u) => (
                <li key={u.key} className="rounded-md bg-bone-100 px-3 py-2 text-sm" data-testid="film-upload">
                  <div className="flex flex-wrap items-center justify-between gap-2">
                    <span className="min-w-0 break-all font-medium">{u.file.name}</span>
                    <span className={u.status === 'failed' ? 'font-medium text-state-alert' : u.status === 'done' ? 'text-state-ok' : 'text-ink-700'}>
                      <span aria-hidden="true">{u.status === 'failed' ? '! ' : u.status === 'done' ? '✓ ' : ''}</span>
                      {STATUS_WORDS[u.status]}
                      {u.status === 'uploading' ? ` ${u.progress}%` : ''}
                      {u.repeated ? ' (already stored: no copy kept)' : ''}
                    </span>
                  </div>
                  {(u.status === 'uploading' || u.status === 'processing') && (
                    <progress className="mt-1 h-2 w-full" max={100} value={u.status === 'processing' ? undefined : u.progress} aria-label={`Upload of ${u.file.name}`} />
                  )}
                  {u.status === 'failed' && (
                    <div className="mt-1 flex flex-wrap items-center gap-2">
                      <span className="text-state-alert">{u.message}</span>
                      {u.retryable && u.file.size <= maxBytes && (
                        <button type="button" className="btn-secondary min-h-0 py-1 text-sm" onClick={() => retry(u)}>
                          Retry
                        </button>
                      )}
                    </div>
                  )}
                </li>
              ))}
            </ul>
          )}
        </div>
      )}

      {films.length === 0 ? (
        <div className="rounded-md border border-dashed border-bone-300 px-4 py-6 text-sm text-ink-700">
          <p className="font-medium text-ink-900">No films yet.</p>
          <p className="mt-1">
            {canUpload
              ? 'Upload the pre-operative film, the post-fill baseline and each follow-up film here: the review is scored against them.'
              : 'Clinicians and coordinators upload the pre-operative, post-fill and follow-up films here.'}
          </p>
        </div>
      ) : (
        <ul aria-label="Films of this case" className="grid grid-cols-2 gap-3 sm:grid-cols-3 lg:grid-cols-4">
          {films.map((f) => (
            <li key={f.id} className="space-y-1" data-testid="film">
              <a href={f.urls.web} target="_blank" rel="noopener" className="block overflow-hidden rounded-md border border-bone-300 bg-ink-900">
                {/* eslint-disable-next-line @next/next/no-img-element -- an authorised, audited route; next/image would cache it */}
                <img
                  src={f.urls.thumbnail}
                  alt={`${f.roleLabel} film, ${fmtDate(f.acquisitionDate ?? f.createdAt)}`}
                  {...fitInside(f.width, f.height, THUMB_SIDE)}
                  loading="lazy"
                  className="mx-auto block h-32 w-auto max-w-full object-contain"
                />
              </a>
              <div className="text-sm font-medium">{f.roleLabel}</div>
              {f.fromReferrer && (
                <div className="text-xs font-medium text-dura-700" data-testid="film-from-referrer">
                  ↘ From the referring dentist
                </div>
              )}
              <div className="text-xs text-ink-700">
                {fmtDate(f.acquisitionDate ?? f.createdAt)} · {f.format}
                {f.pixelSpacingMm ? ` · ${f.pixelSpacingMm[0]} × ${f.pixelSpacingMm[1]} mm per pixel` : ''}
                {f.measurement ? ` · lesion ${f.measurement.diameterMm.toFixed(1)} mm` : ''}
              </div>
              <a href={`/cases/${caseId}/films/view?films=${f.id}`} className="text-xs">
                Open in the viewer
              </a>
              {f.patientMismatch && (
                <p role="note" className="rounded-md border border-state-alert/30 bg-state-alertBg px-2 py-1 text-xs text-state-alert" data-testid="film-mismatch">
                  <span aria-hidden="true" className="font-bold">
                    !{' '}
                  </span>
                  The patient named in this DICOM file is not this case’s patient. Check that the film belongs here.
                </p>
              )}
            </li>
          ))}
        </ul>
      )}
    </section>
  );
}
