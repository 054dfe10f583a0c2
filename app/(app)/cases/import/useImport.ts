'use client';
import { useRef, useState } from 'react';
import { useFilesChosenEarly } from '@/components/ui/useFilesChosenEarly';
import type { ImportProgress } from '@/lib/services/import';
import type { ImportPreview } from '@/lib/services/import-file';
import { failure, initialChoices, readPreview, type Choices } from './MappingStep';

/**
 * What both import panels (cases and past reviews) share: the file, its preview and the mapping
 * choices, the run of a check or an import with its NDJSON progress, and the rejected rows' download.
 */
export type ImportMode = 'dry-run' | 'commit' | 'commit-valid';
export type ImportPhase<R> =
  | { kind: 'idle' }
  | { kind: 'running'; mode: ImportMode; progress?: ImportProgress }
  | { kind: 'done'; result: R }
  | { kind: 'failed'; message: string };

/** POSTs the file with the choices as `options` to `url` and reads its NDJSON progress stream until the result line. */
async function runImport<R>(url: string, file: File, choices: Choices, onProgress: (p: ImportProgress) => void): Promise<R> {
  const form = new FormData();
  form.set('file', file);
  form.set('options', JSON.stringify(choices));
  const res = await fetch(url, { method: 'POST', body: form, headers: { Accept: 'application/x-ndjson' } });
  if (!res.ok || !res.body) throw await failure(res, 'The file could not be sent.');
  const reader = res.body.pipeThrough(new TextDecoderStream()).getReader();
  let buffer = '';
  for (;;) {
    const { value, done } = await reader.read();
    if (value) buffer += value;
    let nl: number;
    while ((nl = buffer.indexOf('\n')) >= 0) {
      const line = JSON.parse(buffer.slice(0, nl)) as { type: string } & Record<string, unknown>;
      buffer = buffer.slice(nl + 1);
      if (line.type === 'progress') onProgress(line as unknown as ImportProgress);
      else if (line.type === 'result') return line as unknown as R;
      else if (line.type === 'error') throw new Error(String(line.message ?? 'The import failed. Nothing was imported.'));
    }
    if (done) throw new Error('The connection ended before the import finished. Nothing was imported.');
  }
}

export function downloadCsv(text: string, name: string) {
  const url = URL.createObjectURL(new Blob([text], { type: 'text/csv;charset=utf-8' }));
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  a.click();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

/**
 * The state of one import panel. `readUrl` answers the mapping step's preview; `importUrl(mode)`
 * is the import route with its query (the stream asked for).
 */
export function useImport<R>(readUrl: string, importUrl: (mode: ImportMode) => string) {
  const [file, setFile] = useState<File | null>(null);
  const [preview, setPreview] = useState<ImportPreview | null>(null);
  const [choices, setChoices] = useState<Choices | null>(null);
  const [reading, setReading] = useState(false);
  const [phase, setPhase] = useState<ImportPhase<R>>({ kind: 'idle' });
  /** The panel's file input (`ref={fileInput}`): a file chosen before the page was live is read too. */
  const fileInput = useRef<HTMLInputElement>(null);

  /** Reads the file's preview (for `sheet`, or the first) and proposes the choices. */
  const load = async (f: File, sheet: string | null) => {
    setReading(true);
    setPhase({ kind: 'idle' });
    try {
      const p = await readPreview(readUrl, f, sheet);
      setPreview(p);
      setChoices(initialChoices(p));
    } catch (e) {
      setPreview(null);
      setChoices(null);
      setPhase({ kind: 'failed', message: (e as Error).message });
    } finally {
      setReading(false);
    }
  };

  /** A file chosen (or the choice cleared). */
  const pick = (f: File | null) => {
    setFile(f);
    setPreview(null);
    setChoices(null);
    if (f) void load(f, null);
  };

  useFilesChosenEarly(fileInput, (files) => pick(files[0] ?? null));

  /** A mapping choice changed: the last check no longer holds. */
  const change = (next: Partial<Choices>) => {
    setChoices((c) => (c ? { ...c, ...next } : c));
    setPhase({ kind: 'idle' });
  };

  const start = async (mode: ImportMode) => {
    if (!file || !choices) return;
    setPhase({ kind: 'running', mode });
    try {
      const result = await runImport<R>(importUrl(mode), file, choices, (progress) => setPhase({ kind: 'running', mode, progress }));
      setPhase({ kind: 'done', result });
    } catch (e) {
      setPhase({ kind: 'failed', message: (e as Error).message });
    }
  };

  return { fileInput, file, preview, choices, reading, phase, setPhase, load, pick, change, start };
}
