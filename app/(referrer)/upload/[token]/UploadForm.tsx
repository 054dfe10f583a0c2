'use client';
import { useRef, useState } from 'react';
import { Notice } from '@/components/ui/Notice';
import { useFilesChosenEarly } from '@/components/ui/useFilesChosenEarly';

/** One upload of one or several films through the referrer's link (POST /api/upload/:token). */
export function UploadForm({ token, maxFiles, maxMb }: { token: string; maxFiles: number; maxMb: number }) {
  const [files, setFiles] = useState<File[]>([]);
  const fileInput = useRef<HTMLInputElement>(null);
  const take = (list: FileList | null) => setFiles(Array.from(list ?? []).slice(0, maxFiles));
  useFilesChosenEarly(fileInput, take);
  const [busy, setBusy] = useState(false);
  const [result, setResult] = useState<{ ok: boolean; message: string } | null>(null);
  const send = async (e: React.FormEvent) => {
    e.preventDefault();
    if (!files.length) {
      setResult({ ok: false, message: 'Choose at least one film (PNG, JPEG or DICOM).' });
      return;
    }
    setBusy(true);
    setResult(null);
    const form = new FormData();
    for (const f of files) form.append('file', f, f.name);
    try {
      const res = await fetch(`/api/upload/${encodeURIComponent(token)}`, { method: 'POST', body: form });
      const body = (await res.json().catch(() => ({}))) as { message?: string };
      setResult({ ok: res.ok, message: body.message ?? (res.ok ? 'Thank you: the practice received the films.' : 'The upload did not go through. Try again.') });
    } catch {
      setResult({ ok: false, message: 'The upload did not reach the practice (no connection). Nothing was kept; try again.' });
    } finally {
      setBusy(false);
    }
  };
  if (result?.ok) return <Notice tone="ok">{result.message}</Notice>;
  return (
    <form onSubmit={send} className="space-y-3">
      <div>
        <label htmlFor="films" className="field-label">
          Films (PNG, JPEG or DICOM; up to {maxFiles} files, {maxMb} MB each)
        </label>
        <input
          ref={fileInput}
          id="films"
          name="file"
          type="file"
          multiple
          accept=".png,.jpg,.jpeg,.dcm,image/png,image/jpeg,application/dicom"
          className="field-input"
          onChange={(e) => take(e.target.files)}
        />
        {files.length > 0 && (
          <p className="mt-1 text-xs text-ink-500">
            {files.length} file{files.length === 1 ? '' : 's'} chosen
          </p>
        )}
      </div>
      {result && <Notice tone="alert">{result.message}</Notice>}
      <button type="submit" className="btn-primary w-full" disabled={busy}>
        {busy ? 'Sending…' : 'Send to the practice'}
      </button>
      <p className="text-xs text-ink-500">The link takes one upload: send every film of this tooth together.</p>
    </form>
  );
}
