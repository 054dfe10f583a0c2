'use client';
import { useCallback, useEffect, useRef, useState } from 'react';
import {
  CALIBRATION_SOURCE_LABELS,
  MIN_REFERENCE_PX,
  originalToRendition,
  pixelAspect,
  renditionToOriginal,
  scaleFromDrawnLength,
  type DrawnReference,
  type FilmCalibration,
  type FilmPoint,
} from '@/lib/films/calibration';
import { lesionFigures } from '@/lib/films/measure';

/**
 * One film as the viewer needs it: film data only — never a patient, a case factor or an earlier
 * score — so the blinded reading screen can embed this component as it is.
 */
export interface ViewerFilm {
  id: string;
  /** A neutral caption, e.g. "Post-fill baseline" or "Follow-up, 5 Mar 2024". */
  label: string;
  /** The web rendition (an authorised, audited route). */
  imageUrl: string;
  /** The original's size (points are stored in its pixels) and the rendition's. */
  width: number;
  height: number;
  webWidth: number;
  webHeight: number;
  /** DICOM [row, column] spacing in mm, when the file gives one. */
  pixelSpacingMm: [number, number] | null;
  calibration: FilmCalibration | null;
  measurement: ViewerMeasurement | null;
}

export interface ViewerMeasurement {
  diameter: { a: FilmPoint; b: FilmPoint };
  outline: FilmPoint[] | null;
  diameterMm: number;
  areaMm2: number | null;
}

export type CalibrationRequest = { source: 'dicom' } | ({ source: 'drawn' } & DrawnReference);
export type MeasurementRequest = { diameter: { a: FilmPoint; b: FilmPoint }; outline: FilmPoint[] | null };
/** What a save callback answers: the film as stored, or a message to show. */
export type SaveResult = { ok: true; film: ViewerFilm } | { ok: false; message: string };

export interface FilmViewerProps {
  /** One or two films (baseline first): shown side by side, stacked on a phone. */
  films: ViewerFilm[];
  /** Calibrating and measuring are offered only with both callbacks. */
  onCalibrate?: (filmId: string, request: CalibrationRequest) => Promise<SaveResult>;
  onMeasure?: (filmId: string, request: MeasurementRequest) => Promise<SaveResult>;
  /** Called after a measurement is saved (e.g. to offer "use in the review"). */
  onMeasured?: (film: ViewerFilm) => void;
}

type Tool = 'pan' | 'calibrate' | 'diameter' | 'outline';
const TOOL_WORDS: Record<Tool, string> = { pan: 'Move', calibrate: 'Known length', diameter: 'Diameter', outline: 'Outline' };

/** The shared view of every pane: centre (0–1 of each film) and zoom. */
interface View {
  u: number;
  v: number;
  zoom: number;
}
const HOME: View = { u: 0.5, v: 0.5, zoom: 1 };
const clamp = (x: number, lo: number, hi: number) => Math.min(hi, Math.max(lo, x));

export const VIEWER_SHORTCUTS: [string, string][] = [
  ['+ / −', 'zoom in / out (both films)'],
  ['arrows', 'move (both films)'],
  ['0', 'fit the films'],
  ['b / B', 'brighter / darker'],
  ['c / C', 'more / less contrast'],
  ['i', 'invert'],
  ['m', 'move tool'],
  ['k', 'known length (calibrate)'],
  ['d', 'lesion diameter'],
  ['o', 'outline (Enter closes it)'],
  ['Esc', 'drop the points being drawn'],
];

/**
 * Baseline and follow-up side by side with one zoom and pan for both, brightness, contrast and
 * invert, keyboard shortcuts, calibration (DICOM pixel spacing or a known length drawn on the film)
 * and the lesion's largest diameter and outline. The maths is lib/films (pure); saving goes through
 * the callbacks, so the page decides where it is stored.
 */
export function FilmViewer({ films: initial, onCalibrate, onMeasure, onMeasured }: FilmViewerProps) {
  const [films, setFilms] = useState(initial);
  const rootRef = useRef<HTMLDivElement>(null);
  const [view, setView] = useState<View>(HOME);
  const [brightness, setBrightness] = useState(1);
  const [contrast, setContrast] = useState(1);
  const [invert, setInvert] = useState(false);
  const [tool, setTool] = useState<Tool>('pan');
  const [activeId, setActiveId] = useState(initial[initial.length - 1]?.id ?? '');
  /** Points being drawn on the active film, in rendition pixels. */
  const [draft, setDraft] = useState<FilmPoint[]>([]);
  /** The diameter and outline being prepared on the active film (rendition pixels), before saving. */
  const [diameter, setDiameter] = useState<FilmPoint[] | null>(null);
  const [outline, setOutline] = useState<FilmPoint[] | null>(null);
  const [knownMm, setKnownMm] = useState('');
  const [message, setMessage] = useState<{ tone: 'ok' | 'alert'; text: string } | null>(null);
  const [saving, setSaving] = useState(false);
  const canEdit = Boolean(onCalibrate && onMeasure);
  const active = films.find((f) => f.id === activeId) ?? films[0];

  const chooseTool = useCallback((t: Tool) => {
    setTool(t);
    setDraft([]);
    setMessage(null);
  }, []);

  const zoomBy = useCallback((k: number) => setView((w) => ({ ...w, zoom: clamp(w.zoom * k, 1, 16) })), []);
  const panBy = useCallback((du: number, dv: number) => setView((w) => ({ ...w, u: clamp(w.u + du / w.zoom, 0, 1), v: clamp(w.v + dv / w.zoom, 0, 1) })), []);

  useEffect(() => {
    function onKey(e: KeyboardEvent) {
      const t = e.target as HTMLElement | null;
      if (t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT' || t.isContentEditable)) return;
      if (e.ctrlKey || e.metaKey || e.altKey) return;
      const keys: Record<string, () => void> = {
        '+': () => zoomBy(1.25),
        '=': () => zoomBy(1.25),
        '-': () => zoomBy(0.8),
        '0': () => setView(HOME),
        ArrowLeft: () => panBy(-0.05, 0),
        ArrowRight: () => panBy(0.05, 0),
        ArrowUp: () => panBy(0, -0.05),
        ArrowDown: () => panBy(0, 0.05),
        b: () => setBrightness((x) => clamp(x + 0.1, 0.2, 3)),
        B: () => setBrightness((x) => clamp(x - 0.1, 0.2, 3)),
        c: () => setContrast((x) => clamp(x + 0.1, 0.2, 3)),
        C: () => setContrast((x) => clamp(x - 0.1, 0.2, 3)),
        i: () => setInvert((x) => !x),
        m: () => chooseTool('pan'),
        Escape: () => setDraft([]),
        ...(canEdit
          ? {
              k: () => chooseTool('calibrate'),
              d: () => chooseTool('diameter'),
              o: () => chooseTool('outline'),
              Enter: () => closeOutline(),
            }
          : {}),
      };
      const f = keys[e.key];
      if (f) {
        e.preventDefault();
        f();
      }
    }
    window.addEventListener('keydown', onKey);
    // Says when the shortcuts listen (the page takes keys only once hydrated): data-keys on the viewer.
    rootRef.current?.setAttribute('data-keys', 'listening');
    return () => window.removeEventListener('keydown', onKey);
  });

  function closeOutline() {
    if (tool === 'outline' && draft.length >= 3) {
      setOutline(draft);
      setDraft([]);
    }
  }

  function place(film: ViewerFilm, p: FilmPoint) {
    if (film.id !== activeId) {
      setActiveId(film.id);
      setDiameter(null);
      setOutline(null);
      setDraft(tool === 'pan' ? [] : [p]);
      return;
    }
    if (tool === 'calibrate') setDraft((d) => (d.length >= 2 ? [p] : [...d, p]));
    else if (tool === 'diameter') {
      const next = draft.length >= 2 ? [p] : [...draft, p];
      setDraft(next);
      if (next.length === 2) setDiameter(next);
    } else if (tool === 'outline') setDraft((d) => [...d, p]);
  }

  const scaleOf = (f: ViewerFilm) => f.calibration;
  const toOriginal = (f: ViewerFilm, p: FilmPoint) => renditionToOriginal(p, f);

  /** Live figures of the diameter and outline being prepared (or the stored ones). */
  function figures(f: ViewerFilm) {
    const scale = scaleOf(f);
    if (!scale) return null;
    if (f.id === activeId && diameter?.length === 2) {
      return lesionFigures({ a: toOriginal(f, diameter[0]!), b: toOriginal(f, diameter[1]!) }, outline ? outline.map((p) => toOriginal(f, p)) : null, scale);
    }
    return f.measurement ? { diameterMm: f.measurement.diameterMm, areaMm2: f.measurement.areaMm2 } : null;
  }

  async function save(run: () => Promise<SaveResult>, done: string, after?: (film: ViewerFilm) => void) {
    setSaving(true);
    setMessage(null);
    try {
      const r = await run();
      if (!r.ok) {
        setMessage({ tone: 'alert', text: r.message });
        return;
      }
      setFilms((list) => list.map((x) => (x.id === r.film.id ? r.film : x)));
      setMessage({ tone: 'ok', text: done });
      after?.(r.film);
    } finally {
      setSaving(false);
    }
  }

  const knownLength = Number(knownMm.replace(',', '.'));
  const drawnPx = tool === 'calibrate' && draft.length === 2 ? Math.hypot(draft[1]!.x - draft[0]!.x, draft[1]!.y - draft[0]!.y) : 0;

  function saveCalibration(source: 'dicom' | 'drawn') {
    if (!active || !onCalibrate) return;
    const f = active;
    if (source === 'dicom') return save(() => onCalibrate(f.id, { source: 'dicom' }), 'Calibrated from the DICOM pixel spacing.');
    const a = toOriginal(f, draft[0]!);
    const b = toOriginal(f, draft[1]!);
    return save(() => onCalibrate(f.id, { source: 'drawn', a, b, mm: knownLength }), `Calibrated: ${knownLength} mm drawn.`, () => {
      setDraft([]);
      setTool('diameter');
    });
  }

  function saveMeasurement() {
    if (!active || !onMeasure || diameter?.length !== 2) return;
    const f = active;
    const request: MeasurementRequest = {
      diameter: { a: toOriginal(f, diameter[0]!), b: toOriginal(f, diameter[1]!) },
      outline: outline ? outline.map((p) => toOriginal(f, p)) : null,
    };
    return save(() => onMeasure(f.id, request), 'Measurement saved.', (film) => {
      setDiameter(null);
      setOutline(null);
      setDraft([]);
      onMeasured?.(film);
    });
  }

  const filter = `brightness(${brightness.toFixed(1)}) contrast(${contrast.toFixed(1)}) invert(${invert ? 1 : 0})`;
  const activeFigures = active ? figures(active) : null;
  let drawnScale: string | null = null;
  if (active && draft.length === 2 && tool === 'calibrate' && knownLength > 0 && drawnPx >= MIN_REFERENCE_PX) {
    try {
      const s = scaleFromDrawnLength(toOriginal(active, draft[0]!), toOriginal(active, draft[1]!), knownLength, pixelAspect(active.pixelSpacingMm));
      drawnScale = `${(s.mmPerPxX * 1000).toFixed(1)} µm per pixel`;
    } catch {
      drawnScale = null;
    }
  }

  return (
    <div className="space-y-3 rounded-lg bg-ink-900 p-3 text-bone-100" data-testid="film-viewer" ref={rootRef}>
      <div className="flex flex-wrap items-center gap-2 text-sm" role="toolbar" aria-label="Viewer tools">
        {(['pan', ...(canEdit ? (['calibrate', 'diameter', 'outline'] as const) : [])] as Tool[]).map((t) => (
          <button
            key={t}
            type="button"
            aria-pressed={tool === t}
            onClick={() => chooseTool(t)}
            className={`rounded-md border px-3 py-1 ${tool === t ? 'border-dura-300 bg-dura-700 text-white' : 'border-ink-500 text-bone-100 hover:bg-ink-700'}`}
          >
            {TOOL_WORDS[t]}
          </button>
        ))}
        <span className="mx-1 h-5 w-px bg-ink-500" aria-hidden="true" />
        <button type="button" className="rounded-md border border-ink-500 px-2 py-1" onClick={() => zoomBy(1.25)} aria-label="Zoom in">
          +
        </button>
        <button type="button" className="rounded-md border border-ink-500 px-2 py-1" onClick={() => zoomBy(0.8)} aria-label="Zoom out">
          −
        </button>
        <button type="button" className="rounded-md border border-ink-500 px-2 py-1" onClick={() => setView(HOME)}>
          Fit
        </button>
        <label className="flex items-center gap-1">
          Brightness
          <input type="range" min={0.2} max={3} step={0.1} value={brightness} onChange={(e) => setBrightness(Number(e.target.value))} className="w-20" />
        </label>
        <label className="flex items-center gap-1">
          Contrast
          <input type="range" min={0.2} max={3} step={0.1} value={contrast} onChange={(e) => setContrast(Number(e.target.value))} className="w-20" />
        </label>
        <label className="flex items-center gap-1">
          <input type="checkbox" checked={invert} onChange={(e) => setInvert(e.target.checked)} /> Invert
        </label>
        <span className="text-xs text-bone-300" aria-live="polite">
          Zoom {view.zoom.toFixed(1)}×
        </span>
      </div>

      <div className={`grid gap-3 ${films.length > 1 ? 'md:grid-cols-2' : ''}`}>
        {films.map((f) => (
          <Pane
            key={f.id}
            film={f}
            view={view}
            setView={setView}
            filter={filter}
            tool={tool}
            active={f.id === active?.id}
            draft={f.id === activeId ? draft : []}
            diameter={f.id === activeId ? diameter : null}
            outline={f.id === activeId ? outline : null}
            figures={figures(f)}
            onPoint={(p) => place(f, p)}
            onActivate={() => setActiveId(f.id)}
          />
        ))}
      </div>

      {canEdit && active && (
        <div className="space-y-2 rounded-md border border-ink-700 p-3 text-sm" aria-label="Calibration and measurement" role="group">
          <p>
            <span className="font-medium">{active.label}</span>:{' '}
            {active.calibration ? (
              <span data-testid="calibration">
                {CALIBRATION_SOURCE_LABELS[active.calibration.source]} — {(active.calibration.mmPerPxX * 1000).toFixed(1)} × {(active.calibration.mmPerPxY * 1000).toFixed(1)} µm per
                pixel
              </span>
            ) : (
              <span data-testid="calibration">not calibrated: measurements need a scale.</span>
            )}
          </p>
          {active.pixelSpacingMm && (
            <button type="button" className="rounded-md border border-ink-500 px-3 py-1" disabled={saving} onClick={() => saveCalibration('dicom')}>
              Use the DICOM pixel spacing ({active.pixelSpacingMm[0]} × {active.pixelSpacingMm[1]} mm)
            </button>
          )}
          {tool === 'calibrate' && (
            <div className="flex flex-wrap items-end gap-2">
              <p className="w-full text-bone-300">
                Click both ends of an object of known length on the film (a file, the working length), then enter its length.{' '}
                {draft.length === 2 ? `Drawn: ${drawnPx.toFixed(0)} pixels.` : `${draft.length} of 2 points.`}
              </p>
              <label className="flex flex-col text-xs">
                Known length (mm)
                <input
                  inputMode="decimal"
                  value={knownMm}
                  onChange={(e) => setKnownMm(e.target.value)}
                  className="mt-1 w-28 rounded-md border border-ink-500 bg-ink-900 px-2 py-1 text-sm text-bone-100"
                  aria-label="Known length (mm)"
                />
              </label>
              <button
                type="button"
                className="rounded-md bg-dura-500 px-3 py-1 font-medium text-white disabled:opacity-50"
                disabled={saving || draft.length !== 2 || !(knownLength > 0) || drawnPx < MIN_REFERENCE_PX}
                onClick={() => saveCalibration('drawn')}
              >
                Save calibration
              </button>
              {drawnScale && <span className="text-xs text-bone-300">{drawnScale}</span>}
              {draft.length === 2 && drawnPx < MIN_REFERENCE_PX && <span className="text-xs text-state-warnBg">Draw over at least {MIN_REFERENCE_PX} pixels.</span>}
            </div>
          )}
          {(tool === 'diameter' || tool === 'outline') && (
            <div className="flex flex-wrap items-center gap-3">
              <p className="w-full text-bone-300">
                {tool === 'diameter'
                  ? 'Click both ends of the lesion’s largest diameter.'
                  : `Click around the lesion’s edge; press Enter (or Close outline) to close it. ${draft.length} points.`}
              </p>
              {tool === 'outline' && (
                <button type="button" className="rounded-md border border-ink-500 px-3 py-1" disabled={draft.length < 3} onClick={closeOutline}>
                  Close outline
                </button>
              )}
              <button
                type="button"
                className="rounded-md bg-dura-500 px-3 py-1 font-medium text-white disabled:opacity-50"
                disabled={saving || diameter?.length !== 2 || !active.calibration}
                onClick={saveMeasurement}
              >
                Save measurement
              </button>
            </div>
          )}
          {activeFigures && (
            <p className="text-base" data-testid="figures">
              Largest diameter <strong data-testid="diameter-mm">{activeFigures.diameterMm.toFixed(1)} mm</strong>
              {activeFigures.areaMm2 != null && (
                <>
                  {' '}
                  · outline area <strong>{activeFigures.areaMm2.toFixed(1)} mm²</strong>
                </>
              )}
            </p>
          )}
          {message && (
            <p role="status" className={message.tone === 'alert' ? 'font-medium text-red-300' : 'text-green-300'}>
              <span aria-hidden="true">{message.tone === 'alert' ? '! ' : '✓ '}</span>
              {message.text}
            </p>
          )}
        </div>
      )}

      <details className="text-xs text-bone-300" open>
        <summary className="cursor-pointer">Keyboard shortcuts</summary>
        <dl className="mt-2 grid grid-cols-[auto_1fr] gap-x-3 gap-y-1" aria-label="Keyboard shortcuts">
          {VIEWER_SHORTCUTS.filter(([k]) => canEdit || !['k', 'd', 'o'].includes(k)).map(([k, w]) => (
            <div key={k} className="contents">
              <dt>
                <kbd className="rounded border border-ink-500 px-1">{k}</kbd>
              </dt>
              <dd>{w}</dd>
            </div>
          ))}
        </dl>
      </details>
    </div>
  );
}

function Pane({
  film,
  view,
  setView,
  filter,
  tool,
  active,
  draft,
  diameter,
  outline,
  figures,
  onPoint,
  onActivate,
}: {
  film: ViewerFilm;
  view: View;
  setView: (f: (v: View) => View) => void;
  filter: string;
  tool: Tool;
  active: boolean;
  draft: FilmPoint[];
  diameter: FilmPoint[] | null;
  outline: FilmPoint[] | null;
  figures: { diameterMm: number; areaMm2: number | null } | null;
  onPoint: (p: FilmPoint) => void;
  onActivate: () => void;
}) {
  const svg = useRef<SVGSVGElement>(null);
  const drag = useRef<{ x: number; y: number; moved: boolean } | null>(null);
  const W = film.webWidth;
  const H = film.webHeight;
  const w = W / view.zoom;
  const h = H / view.zoom;
  const x0 = clamp(view.u * W - w / 2, 0, W - w);
  const y0 = clamp(view.v * H - h / 2, 0, H - h);
  // Stroke widths in rendition pixels that stay about 2 screen pixels at any zoom.
  const unit = Math.max(W, H) / 600 / view.zoom;

  function toImage(e: React.PointerEvent): FilmPoint | null {
    const m = svg.current?.getScreenCTM();
    if (!m) return null;
    const p = new DOMPoint(e.clientX, e.clientY).matrixTransform(m.inverse());
    return { x: clamp(p.x, 0, W), y: clamp(p.y, 0, H) };
  }

  // Stored measurement (original pixels) drawn when nothing is being prepared on this film.
  const stored = film.measurement && !diameter ? film.measurement : null;
  const shownDiameter = diameter ?? (stored ? [originalToRendition(stored.diameter.a, film), originalToRendition(stored.diameter.b, film)] : null);
  const shownOutline = outline ?? (stored?.outline ? stored.outline.map((p) => originalToRendition(p, film)) : null);
  const reference = film.calibration?.reference ? [originalToRendition(film.calibration.reference.a, film), originalToRendition(film.calibration.reference.b, film)] : null;
  const line = (pts: FilmPoint[], colour: string, testId: string, dashed = false) =>
    pts.length === 2 ? (
      <g data-testid={testId}>
        <line x1={pts[0]!.x} y1={pts[0]!.y} x2={pts[1]!.x} y2={pts[1]!.y} stroke={colour} strokeWidth={unit} strokeDasharray={dashed ? `${unit * 4} ${unit * 3}` : undefined} />
        {pts.map((p, i) => (
          <circle key={i} cx={p.x} cy={p.y} r={unit * 2.5} fill="none" stroke={colour} strokeWidth={unit} />
        ))}
      </g>
    ) : null;

  return (
    <figure className={`space-y-1 rounded-md border ${active ? 'border-dura-300' : 'border-ink-700'}`}>
      <figcaption className="flex items-center justify-between px-2 pt-1 text-sm">
        <button type="button" onClick={onActivate} className="font-medium underline-offset-2 hover:underline" aria-pressed={active}>
          {film.label}
        </button>
        <span className="text-xs text-bone-300">{film.calibration ? (figures ? `${figures.diameterMm.toFixed(1)} mm` : 'calibrated') : 'not calibrated'}</span>
      </figcaption>
      <svg
        ref={svg}
        viewBox={`${x0} ${y0} ${w} ${h}`}
        preserveAspectRatio="xMidYMid meet"
        className={`block h-[45vh] w-full touch-none select-none bg-black md:h-[62vh] ${tool === 'pan' ? 'cursor-grab' : 'cursor-crosshair'}`}
        role="img"
        aria-label={`${film.label}: film`}
        data-testid={`pane-${film.id}`}
        onWheel={(e) => {
          const k = e.deltaY < 0 ? 1.15 : 1 / 1.15;
          setView((v) => ({ ...v, zoom: clamp(v.zoom * k, 1, 16) }));
        }}
        onPointerDown={(e) => {
          drag.current = { x: e.clientX, y: e.clientY, moved: false };
          (e.target as Element).setPointerCapture?.(e.pointerId);
        }}
        onPointerMove={(e) => {
          const d = drag.current;
          if (!d || tool !== 'pan') return;
          const rect = svg.current!.getBoundingClientRect();
          const dx = e.clientX - d.x;
          const dy = e.clientY - d.y;
          if (Math.abs(dx) + Math.abs(dy) > 2) d.moved = true;
          d.x = e.clientX;
          d.y = e.clientY;
          const shown = Math.min(rect.width / w, rect.height / h); // screen px per rendition px
          setView((v) => ({ ...v, u: clamp(v.u - dx / shown / W, 0, 1), v: clamp(v.v - dy / shown / H, 0, 1) }));
        }}
        onPointerUp={(e) => {
          const d = drag.current;
          drag.current = null;
          if (tool === 'pan' || d?.moved) return;
          const p = toImage(e);
          if (p) onPoint(p);
        }}
      >
        <image href={film.imageUrl} x={0} y={0} width={W} height={H} style={{ filter }} preserveAspectRatio="none" />
        {reference && line(reference, '#9c95d6', 'reference', true)}
        {draft.length > 0 && tool === 'calibrate' && (draft.length === 2 ? line(draft, '#facc15', 'draft-reference') : <circle cx={draft[0]!.x} cy={draft[0]!.y} r={unit * 2.5} fill="#facc15" />)}
        {draft.length > 0 && tool === 'diameter' && draft.length === 1 && <circle cx={draft[0]!.x} cy={draft[0]!.y} r={unit * 2.5} fill="#4ade80" />}
        {tool === 'outline' && draft.length > 0 && (
          <polyline points={draft.map((p) => `${p.x},${p.y}`).join(' ')} fill="none" stroke="#38bdf8" strokeWidth={unit} />
        )}
        {shownOutline && <polygon points={shownOutline.map((p) => `${p.x},${p.y}`).join(' ')} fill="rgba(56,189,248,0.15)" stroke="#38bdf8" strokeWidth={unit} data-testid="outline" />}
        {shownDiameter && line(shownDiameter, '#4ade80', 'diameter')}
      </svg>
    </figure>
  );
}
