'use client';
import { useRef, useState, type ReactNode } from 'react';

/**
 * A chart with "Download PNG" and "Download SVG" buttons (issue 12, item 8). Client-side only:
 * the chart's first <svg> is copied with the computed styles written onto each element (so it
 * looks the same opened on its own), on a white background with the title above it and the
 * chart's HTML legend (recharts draws it outside the svg) redrawn below; the PNG is that SVG
 * drawn on a canvas at twice the size.
 */
export function ChartDownloads({ filename, title, children }: { filename: string; title: string; children: ReactNode }) {
  const box = useRef<HTMLDivElement>(null);
  const [problem, setProblem] = useState<string | null>(null);

  const download = async (format: 'svg' | 'png') => {
    setProblem(null);
    const svg = box.current ? chartSvg(box.current) : null;
    if (!svg || !box.current) {
      setProblem('The chart is not drawn yet; try again in a moment.');
      return;
    }
    try {
      const { text, width, height } = standaloneSvg(svg, box.current, title);
      const blob = format === 'svg' ? new Blob([text], { type: 'image/svg+xml;charset=utf-8' }) : await rasterise(text, width, height, 2);
      save(blob, `${filename}.${format}`);
    } catch {
      setProblem('The chart could not be saved in this browser.');
    }
  };

  return (
    <div className="space-y-2">
      <div ref={box}>
        {children}
      </div>
      <div className="flex flex-wrap items-center gap-2 print:hidden">
        <button type="button" className="btn-secondary px-2 py-1 text-sm" onClick={() => void download('png')}>
          Download PNG
        </button>
        <button type="button" className="btn-secondary px-2 py-1 text-sm" onClick={() => void download('svg')}>
          Download SVG
        </button>
        {problem && (
          <span className="text-sm text-ink-700" role="status">
            {problem}
          </span>
        )}
      </div>
    </div>
  );
}

const SVG_NS = 'http://www.w3.org/2000/svg';
/** The presentation properties worth copying (enough for lines, text, areas and markers). */
const PROPS = [
  'fill',
  'fill-opacity',
  'stroke',
  'stroke-width',
  'stroke-opacity',
  'stroke-dasharray',
  'stroke-linecap',
  'stroke-linejoin',
  'opacity',
  'visibility',
  'display',
  'font-family',
  'font-size',
  'font-weight',
  'font-style',
  'text-anchor',
  'dominant-baseline',
  'letter-spacing',
];
const FALLBACK_FONTS = 'Inter, "Helvetica Neue", Arial, sans-serif';
const TITLE_HEIGHT = 36;
const LEGEND_ROW = 18;

/** The chart's first <svg>, legend icons left out (recharts may draw its HTML legend, with an svg per entry, before the chart). */
export function chartSvg(container: Element): SVGSVGElement | null {
  const all = Array.from(container.querySelectorAll('svg'));
  return all.find((s) => !s.closest('li, .recharts-legend-wrapper') && !s.parentElement?.closest('svg')) ?? all[0] ?? null;
}

/** The chart's svg as a standalone document: styles inlined, white background, title, legend. */
export function standaloneSvg(svg: SVGSVGElement, container: Element, title: string): { text: string; width: number; height: number } {
  const rect = svg.getBoundingClientRect();
  const width = Math.max(1, Math.round(rect.width || Number(svg.getAttribute('width')) || 600));
  const chartHeight = Math.max(1, Math.round(rect.height || Number(svg.getAttribute('height')) || 300));
  const clone = svg.cloneNode(true) as SVGSVGElement;
  const from = [svg, ...Array.from(svg.querySelectorAll('*'))];
  const to = [clone, ...Array.from(clone.querySelectorAll('*'))];
  from.forEach((el, i) => {
    const cs = getComputedStyle(el);
    const style = PROPS.map((p) => {
      let v = cs.getPropertyValue(p);
      if (p === 'font-family' && v) v = `${v}, ${FALLBACK_FONTS}`;
      return v ? `${p}:${v}` : '';
    })
      .filter(Boolean)
      .join(';');
    to[i]!.setAttribute('style', style);
    to[i]!.removeAttribute('class');
  });
  const legend = legendItems(container, svg);
  const perRow = Math.max(1, Math.floor(width / 220));
  const legendHeight = legend.length ? Math.ceil(legend.length / perRow) * LEGEND_ROW + 8 : 0;
  const height = TITLE_HEIGHT + chartHeight + legendHeight;

  const doc = document.createElementNS(SVG_NS, 'svg');
  doc.setAttribute('xmlns', SVG_NS);
  doc.setAttribute('width', String(width));
  doc.setAttribute('height', String(height));
  doc.setAttribute('viewBox', `0 0 ${width} ${height}`);
  const el = (name: string, attrs: Record<string, string | number>, text?: string) => {
    const e = document.createElementNS(SVG_NS, name);
    for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, String(v));
    if (text !== undefined) e.textContent = text;
    return e;
  };
  doc.appendChild(el('title', {}, title));
  doc.appendChild(el('rect', { x: 0, y: 0, width, height, fill: '#ffffff' }));
  doc.appendChild(el('text', { x: 12, y: 24, 'font-family': FALLBACK_FONTS, 'font-size': 15, 'font-weight': 600, fill: '#1d2225' }, title));
  clone.setAttribute('x', '0');
  clone.setAttribute('y', String(TITLE_HEIGHT));
  clone.setAttribute('width', String(width));
  clone.setAttribute('height', String(chartHeight));
  if (!clone.getAttribute('viewBox')) clone.setAttribute('viewBox', `0 0 ${width} ${chartHeight}`);
  doc.appendChild(clone);
  legend.forEach((item, i) => {
    const x = 12 + (i % perRow) * Math.floor((width - 12) / perRow);
    const y = TITLE_HEIGHT + chartHeight + 4 + Math.floor(i / perRow) * LEGEND_ROW;
    doc.appendChild(el('line', { x1: x, y1: y + 9, x2: x + 18, y2: y + 9, stroke: item.color, 'stroke-width': 2, ...(item.dash ? { 'stroke-dasharray': item.dash } : {}) }));
    doc.appendChild(el('text', { x: x + 24, y: y + 13, 'font-family': FALLBACK_FONTS, 'font-size': 11, fill: '#1d2225' }, item.text));
  });
  return { text: `<?xml version="1.0" encoding="UTF-8"?>\n${new XMLSerializer().serializeToString(doc)}`, width, height };
}

/** The legend drawn in HTML beside the svg (recharts' list items): text, colour and dash of each entry. */
function legendItems(container: Element, chart: SVGSVGElement): { text: string; color: string; dash: string }[] {
  return Array.from(container.querySelectorAll('li'))
    .filter((li) => !chart.contains(li))
    .map((li) => {
      const mark = li.querySelector('path, line');
      const color = (mark && (mark.getAttribute('stroke') || mark.getAttribute('fill'))) || '#1d2225';
      const dash = mark?.getAttribute('stroke-dasharray') ?? '';
      return { text: (li.textContent ?? '').trim(), color: color === 'none' ? '#1d2225' : color, dash };
    })
    .filter((i) => i.text !== '');
}

/** The SVG drawn on a canvas at `scale` times its size, as a PNG. */
async function rasterise(svgText: string, width: number, height: number, scale: number): Promise<Blob> {
  const url = URL.createObjectURL(new Blob([svgText], { type: 'image/svg+xml;charset=utf-8' }));
  try {
    const img = new Image();
    img.width = width;
    img.height = height;
    await new Promise<void>((resolve, reject) => {
      img.onload = () => resolve();
      img.onerror = () => reject(new Error('svg image'));
      img.src = url;
    });
    const canvas = document.createElement('canvas');
    canvas.width = width * scale;
    canvas.height = height * scale;
    const ctx = canvas.getContext('2d');
    if (!ctx) throw new Error('no canvas');
    ctx.fillStyle = '#ffffff';
    ctx.fillRect(0, 0, canvas.width, canvas.height);
    ctx.scale(scale, scale);
    ctx.drawImage(img, 0, 0, width, height);
    return await new Promise<Blob>((resolve, reject) => canvas.toBlob((b) => (b ? resolve(b) : reject(new Error('png'))), 'image/png'));
  } finally {
    URL.revokeObjectURL(url);
  }
}

function save(blob: Blob, name: string) {
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}
