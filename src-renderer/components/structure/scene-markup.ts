// SVG markup of the projected, depth-sorted scene of the structure view, built as one string per redraw.
// A few thousand shapes change order on every rotation step; writing them as one string (set with {@html})
// is far cheaper than diffing that many keyed elements, and keeps the drag responsive.

export type SceneItem =
  | { kind: 'atom'; depth: number; x: number; y: number; r: number; sp: string; index: number; faded: boolean }
  | { kind: 'bond'; depth: number; x1: number; y1: number; x2: number; y2: number; sp: string; w: number; faded: boolean }
  | { kind: 'edge'; depth: number; x1: number; y1: number; x2: number; y2: number }
  /** A ring around an atom outside the training data, drawn in front of the atom and its ellipsoid. */
  | { kind: 'mark'; depth: number; x: number; y: number; r: number; index: number; faded: boolean }
  | {
      kind: 'ell';
      depth: number;
      cx: number;
      cy: number;
      rx: number;
      ry: number;
      angle: number;
      bin: number;
      negative: boolean;
      ringFront: string;
      ringBack: string;
      index: number;
      faded: boolean;
    };

export interface SceneStyle {
  /** Fill reference of an element's sphere, e.g. "url(#id)". */
  atomFill: (sp: string) => string;
  atomStroke: (sp: string) => string;
  bondColour: (sp: string) => string;
  ellFill: (bin: number) => string;
  ellStroke: (bin: number) => string;
  ringColour: (bin: number) => string;
  edge: string;
  warn: string;
  /** Background colour, for the halo under a ring. */
  halo: string;
}

/** A species name made safe for an id or attribute (letters and digits only). */
export function safeToken(s: string): string {
  return s.replace(/[^A-Za-z0-9]/g, '_');
}

const f = (v: number) => (Math.round(v * 10) / 10).toString();

/** Markup of the items in the given (already depth-sorted) order. */
export function sceneMarkup(items: readonly SceneItem[], style: SceneStyle): string {
  const out: string[] = [];
  for (const it of items) {
    if (it.kind === 'edge') {
      out.push(`<line x1="${f(it.x1)}" y1="${f(it.y1)}" x2="${f(it.x2)}" y2="${f(it.y2)}" stroke="${style.edge}" stroke-width="1.3" stroke-opacity="0.8"/>`);
    } else if (it.kind === 'bond') {
      out.push(
        `<line x1="${f(it.x1)}" y1="${f(it.y1)}" x2="${f(it.x2)}" y2="${f(it.y2)}" stroke="${style.bondColour(it.sp)}" stroke-width="${f(it.w)}" stroke-linecap="round"${it.faded ? ' opacity="0.3"' : ''}/>`,
      );
    } else if (it.kind === 'mark') {
      out.push(
        // a light halo under the ring keeps it readable over dark ellipsoids; solid, unlike the dashed outline of a negative principal value
        `<circle cx="${f(it.x)}" cy="${f(it.y)}" r="${f(it.r)}" fill="none" stroke="${style.halo}" stroke-width="4.4" stroke-opacity="0.85"${it.faded ? ' opacity="0.35"' : ''} pointer-events="none"/>` +
          `<circle cx="${f(it.x)}" cy="${f(it.y)}" r="${f(it.r)}" fill="none" stroke="${style.warn}" stroke-width="2.2"${it.faded ? ' opacity="0.35"' : ''} pointer-events="none" data-mark="outside:${it.index}"/>`,
      );
    } else if (it.kind === 'atom') {
      out.push(
        `<circle cx="${f(it.x)}" cy="${f(it.y)}" r="${f(it.r)}" fill="${style.atomFill(it.sp)}" stroke="${style.atomStroke(it.sp)}" stroke-width="0.7"${it.faded ? ' opacity="0.35"' : ''} data-item="a:${it.index}"/>`,
      );
    } else {
      const stroke = it.negative ? `stroke="${style.warn}" stroke-width="1.6" stroke-dasharray="4 3"` : `stroke="${style.ellStroke(it.bin)}" stroke-width="0.8"`;
      out.push(
        `<ellipse cx="0" cy="0" rx="${f(Math.max(it.rx, 0.5))}" ry="${f(Math.max(it.ry, 0.5))}" transform="translate(${f(it.cx)},${f(it.cy)}) rotate(${it.angle.toFixed(1)})" fill="${style.ellFill(it.bin)}" ${stroke}${it.faded ? ' opacity="0.35"' : ''} data-item="e:${it.index}"/>`,
      );
      const ring = style.ringColour(it.bin);
      if (it.ringBack) out.push(`<path d="${it.ringBack}" fill="none" stroke="${ring}" stroke-width="0.6" stroke-opacity="${it.faded ? 0.12 : 0.3}" pointer-events="none"/>`);
      if (it.ringFront) out.push(`<path d="${it.ringFront}" fill="none" stroke="${ring}" stroke-width="1" stroke-opacity="${it.faded ? 0.3 : 0.85}" pointer-events="none"/>`);
    }
  }
  return out.join('');
}

/**
 * The front-most atom or ellipsoid under screen point (x, y), from the depth-sorted items (far first), or null.
 * Used for hover and click on the canvas, where shapes carry no events of their own.
 */
export function hitTest(items: readonly SceneItem[], x: number, y: number): { kind: 'atom' | 'ell'; index: number } | null {
  for (let k = items.length - 1; k >= 0; k--) {
    const it = items[k];
    if (it.kind === 'atom') {
      if ((x - it.x) ** 2 + (y - it.y) ** 2 <= it.r * it.r) return { kind: 'atom', index: it.index };
    } else if (it.kind === 'ell') {
      const t = (it.angle * Math.PI) / 180;
      const dx = x - it.cx;
      const dy = y - it.cy;
      const u = dx * Math.cos(t) + dy * Math.sin(t);
      const v = -dx * Math.sin(t) + dy * Math.cos(t);
      const rx = Math.max(it.rx, 0.5);
      const ry = Math.max(it.ry, 0.5);
      if ((u / rx) ** 2 + (v / ry) ** 2 <= 1) return { kind: 'ell', index: it.index };
    }
  }
  return null;
}
