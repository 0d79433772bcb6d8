// Canvas 2D drawing of the projected, depth-sorted scene (browser-only): the same shapes as scene-markup.ts,
// for large frames where thousands of SVG nodes would make rotation sluggish. Spheres and ellipsoids are drawn
// in unit coordinates (translate, rotate, scale) so one cached radial gradient per element or anisotropy bin
// serves every shape; outlines are stroked afterwards in screen coordinates to keep line widths even.
import type { SceneItem } from './scene-markup.ts';

export interface CanvasStyle {
  /** Base colours: sphere fill stops per species, ellipsoid fill stops per anisotropy bin. */
  atomStops: (sp: string) => [string, string, string];
  atomStroke: (sp: string) => string;
  bondColour: (sp: string) => string;
  ellStops: (bin: number) => [string, string, string];
  ellStroke: (bin: number) => string;
  ringColour: (bin: number) => string;
  edge: string;
  warn: string;
  /** Background colour, for the halo under a ring. */
  halo: string;
}

function unitGradient(ctx: CanvasRenderingContext2D, stops: [string, string, string], alpha: [number, number, number]): CanvasGradient {
  // highlight up and to the left, as in the SVG gradients (cx 0.36, cy 0.32 of the bounding box)
  const g = ctx.createRadialGradient(-0.28, -0.36, 0, 0, 0, 1.15);
  g.addColorStop(0, withAlpha(stops[0], alpha[0]));
  g.addColorStop(0.55, withAlpha(stops[1], alpha[1]));
  g.addColorStop(1, withAlpha(stops[2], alpha[2]));
  return g;
}

/** '#rrggbb' with an alpha in 0…1 as an rgba() colour. */
export function withAlpha(hex: string, alpha: number): string {
  if (!/^#[0-9a-f]{6}$/i.test(hex)) return hex;
  const v = parseInt(hex.slice(1), 16);
  return `rgba(${(v >> 16) & 255},${(v >> 8) & 255},${v & 255},${alpha})`;
}

export function drawScene(ctx: CanvasRenderingContext2D, items: readonly SceneItem[], style: CanvasStyle, width: number, height: number): void {
  ctx.clearRect(0, 0, width, height);
  const atomGrad = new Map<string, CanvasGradient>();
  const ellGrad = new Map<number, CanvasGradient>();
  ctx.lineCap = 'round';
  for (const it of items) {
    if (it.kind === 'edge') {
      ctx.globalAlpha = 0.8;
      ctx.strokeStyle = style.edge;
      ctx.lineWidth = 1.3;
      ctx.beginPath();
      ctx.moveTo(it.x1, it.y1);
      ctx.lineTo(it.x2, it.y2);
      ctx.stroke();
    } else if (it.kind === 'bond') {
      ctx.globalAlpha = it.faded ? 0.3 : 1;
      ctx.strokeStyle = style.bondColour(it.sp);
      ctx.lineWidth = it.w;
      ctx.beginPath();
      ctx.moveTo(it.x1, it.y1);
      ctx.lineTo(it.x2, it.y2);
      ctx.stroke();
    } else if (it.kind === 'mark') {
      ctx.globalAlpha = it.faded ? 0.3 : 0.85;
      ctx.strokeStyle = style.halo;
      ctx.lineWidth = 4.4;
      ctx.beginPath();
      ctx.arc(it.x, it.y, it.r, 0, 2 * Math.PI);
      ctx.stroke();
      ctx.globalAlpha = it.faded ? 0.35 : 1;
      ctx.strokeStyle = style.warn;
      ctx.lineWidth = 2.2;
      ctx.stroke();
    } else if (it.kind === 'atom') {
      let g = atomGrad.get(it.sp);
      if (!g) {
        g = unitGradient(ctx, style.atomStops(it.sp), [1, 1, 1]);
        atomGrad.set(it.sp, g);
      }
      ctx.globalAlpha = it.faded ? 0.35 : 1;
      ctx.save();
      ctx.translate(it.x, it.y);
      ctx.scale(it.r, it.r);
      ctx.fillStyle = g;
      ctx.beginPath();
      ctx.arc(0, 0, 1, 0, 2 * Math.PI);
      ctx.fill();
      ctx.restore();
      ctx.strokeStyle = style.atomStroke(it.sp);
      ctx.lineWidth = 0.7;
      ctx.stroke();
    } else {
      let g = ellGrad.get(it.bin);
      if (!g) {
        g = unitGradient(ctx, style.ellStops(it.bin), [0.75, 0.6, 0.75]);
        ellGrad.set(it.bin, g);
      }
      const rx = Math.max(it.rx, 0.5);
      const ry = Math.max(it.ry, 0.5);
      const angle = (it.angle * Math.PI) / 180;
      ctx.globalAlpha = it.faded ? 0.35 : 1;
      ctx.save();
      ctx.translate(it.cx, it.cy);
      ctx.rotate(angle);
      ctx.scale(rx, ry);
      ctx.fillStyle = g;
      ctx.beginPath();
      ctx.arc(0, 0, 1, 0, 2 * Math.PI);
      ctx.fill();
      ctx.restore();
      ctx.beginPath();
      ctx.ellipse(it.cx, it.cy, rx, ry, angle, 0, 2 * Math.PI);
      if (it.negative) {
        ctx.setLineDash([4, 3]);
        ctx.strokeStyle = style.warn;
        ctx.lineWidth = 1.6;
      } else {
        ctx.strokeStyle = style.ellStroke(it.bin);
        ctx.lineWidth = 0.8;
      }
      ctx.stroke();
      ctx.setLineDash([]);
      const ring = style.ringColour(it.bin);
      ctx.strokeStyle = ring;
      if (it.ringBack) {
        ctx.globalAlpha = it.faded ? 0.12 : 0.3;
        ctx.lineWidth = 0.6;
        ctx.stroke(new Path2D(it.ringBack));
      }
      if (it.ringFront) {
        ctx.globalAlpha = it.faded ? 0.3 : 0.85;
        ctx.lineWidth = 1;
        ctx.stroke(new Path2D(it.ringFront));
      }
    }
  }
  ctx.globalAlpha = 1;
}
