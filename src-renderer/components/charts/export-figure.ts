// Figure export shared by every chart and the structure view: the live SVG serialised with its computed styles
// written inline (so the file looks the same outside the app, where our CSS and theme variables are absent),
// and a PNG drawn from that SVG on an offscreen canvas. Browser-only (needs the DOM).

/** Style properties copied inline; enough for lines, shapes, gradients and text. */
export const inlinedProperties: readonly string[] = [
  'fill',
  'fill-opacity',
  'stroke',
  'stroke-width',
  'stroke-opacity',
  'stroke-dasharray',
  'stroke-linecap',
  'stroke-linejoin',
  'opacity',
  'font-family',
  'font-size',
  'font-weight',
  'font-style',
  'text-anchor',
  'dominant-baseline',
  'visibility',
  'display',
  'stop-color',
  'stop-opacity',
];

/** A name safe for a file: letters, digits, dot, dash and underscore only. */
export function safeFileName(name: string, extension: string): string {
  const stem = name.trim().replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '') || 'figure';
  return `${stem}.${extension}`;
}

/**
 * The SVG as a standalone document string. Elements marked `data-export="skip"` (buttons, hover tooltips)
 * are left out. `background` paints a full-size rectangle first (PNG viewers show transparency oddly).
 */
export function svgToString(svg: SVGSVGElement, background: string | null = null): string {
  const clone = svg.cloneNode(true) as SVGSVGElement;
  const source = [svg, ...Array.from(svg.querySelectorAll('*'))];
  const target = [clone, ...Array.from(clone.querySelectorAll('*'))];
  for (let i = 0; i < source.length; i++) {
    const s = source[i] as Element;
    const t = target[i] as SVGElement;
    const cs = getComputedStyle(s);
    const parts: string[] = [];
    for (const p of inlinedProperties) {
      const v = cs.getPropertyValue(p);
      if (v) parts.push(`${p}:${v}`);
    }
    t.setAttribute('style', parts.join(';'));
    t.removeAttribute('class');
    // theme variables mean nothing outside the app: the computed values are now inline
    for (const attr of Array.from(t.attributes)) if (attr.value.includes('var(')) t.removeAttribute(attr.name);
  }
  for (const el of Array.from(clone.querySelectorAll('[data-export="skip"]'))) el.remove();
  const { width, height } = svgSize(svg);
  clone.setAttribute('xmlns', 'http://www.w3.org/2000/svg');
  clone.setAttribute('width', String(width));
  clone.setAttribute('height', String(height));
  if (!clone.getAttribute('viewBox')) clone.setAttribute('viewBox', `0 0 ${width} ${height}`);
  if (background) {
    const rect = document.createElementNS('http://www.w3.org/2000/svg', 'rect');
    rect.setAttribute('x', '0');
    rect.setAttribute('y', '0');
    rect.setAttribute('width', '100%');
    rect.setAttribute('height', '100%');
    rect.setAttribute('style', `fill:${background}`);
    clone.insertBefore(rect, clone.firstChild);
  }
  return '<?xml version="1.0" encoding="UTF-8"?>\n' + new XMLSerializer().serializeToString(clone);
}

function svgSize(svg: SVGSVGElement): { width: number; height: number } {
  const box = svg.getBoundingClientRect();
  const w = box.width || Number(svg.getAttribute('width')) || 600;
  const h = box.height || Number(svg.getAttribute('height')) || 400;
  return { width: Math.round(w), height: Math.round(h) };
}

/** The SVG drawn to a PNG at `scale` × its on-screen size (2 gives print-friendly resolution). */
export async function svgToPng(svg: SVGSVGElement, scale = 2, background = '#ffffff'): Promise<Blob> {
  const text = svgToString(svg, background);
  const { width, height } = svgSize(svg);
  return svgTextToPng(text, width, height, scale);
}

/** A serialised standalone SVG document drawn to a PNG of (width × height) × scale pixels. */
export async function svgTextToPng(text: string, width: number, height: number, scale = 2): Promise<Blob> {
  const url = URL.createObjectURL(new Blob([text], { type: 'image/svg+xml;charset=utf-8' }));
  try {
    const img = new Image();
    img.decoding = 'sync';
    await new Promise<void>((resolve, reject) => {
      img.onload = () => resolve();
      img.onerror = () => reject(new Error('figure export: the browser could not draw the serialised SVG'));
      img.src = url;
    });
    const w = Math.max(1, Math.round(width * scale));
    const h = Math.max(1, Math.round(height * scale));
    const canvas: OffscreenCanvas | HTMLCanvasElement =
      typeof OffscreenCanvas !== 'undefined' ? new OffscreenCanvas(w, h) : Object.assign(document.createElement('canvas'), { width: w, height: h });
    const ctx = canvas.getContext('2d') as CanvasRenderingContext2D | OffscreenCanvasRenderingContext2D | null;
    if (!ctx) throw new Error('figure export: no 2D canvas available for the PNG');
    ctx.drawImage(img, 0, 0, w, h);
    if (canvas instanceof HTMLCanvasElement) {
      return await new Promise<Blob>((resolve, reject) =>
        canvas.toBlob((b) => (b ? resolve(b) : reject(new Error('figure export: PNG encoding failed'))), 'image/png'),
      );
    }
    return await canvas.convertToBlob({ type: 'image/png' });
  } finally {
    URL.revokeObjectURL(url);
  }
}

/** What a chart hands to its `onexport` callback or the export buttons. */
export interface FigureExport {
  /** Suggested file stem, e.g. "parity-iso". */
  name: string;
  svg: () => string;
  png: (scale?: number) => Promise<Blob>;
}

/** Export handle for an SVG serialised now (for views that add content to the SVG only while exporting). */
export function figureFromSvg(name: string, svg: SVGSVGElement, background = '#ffffff'): FigureExport {
  const text = svgToString(svg, background);
  const { width, height } = svgSize(svg);
  return { name, svg: () => text, png: (scale = 2) => svgTextToPng(text, width, height, scale) };
}

/** Export handle for a live SVG element. */
export function figureExport(name: string, svg: SVGSVGElement, background = '#ffffff'): FigureExport {
  return { name, svg: () => svgToString(svg, background), png: (scale = 2) => svgToPng(svg, scale, background) };
}

/** Let the browser save a blob or text (the default when a view gives no save callback of its own). */
export function downloadBlob(data: Blob | string, fileName: string, type = 'image/svg+xml'): void {
  const blob = typeof data === 'string' ? new Blob([data], { type }) : data;
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = fileName;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

/**
 * What an export button does: hand the figure to the view's `onexport` when it gives one (the desktop shell saves
 * through its dialog), else let the browser save `<name>.svg` or `<name>.png`.
 */
export function saveFigure(
  fig: FigureExport,
  format: 'svg' | 'png',
  onexport?: (figure: FigureExport, format: 'svg' | 'png') => void,
): void {
  if (onexport) onexport(fig, format);
  else if (format === 'svg') downloadBlob(fig.svg(), safeFileName(fig.name, 'svg'));
  else void fig.png().then((b) => downloadBlob(b, safeFileName(fig.name, 'png')));
}
