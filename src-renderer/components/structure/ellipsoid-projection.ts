// Orthographic projection of points and ellipsoids onto the screen. An ellipsoid x = c + A u (|u| = 1, the
// columns of A are its semi-axis vectors, A = V diag(s)) projects under the linear screen map S (2×3) onto the
// ellipse {S A u}, whose boundary is yᵀ (S A Aᵀ Sᵀ)⁻¹ y = 1: its semi-axes are the square roots of the
// eigenvalues of the 2×2 shape matrix S A Aᵀ Sᵀ and its major axis lies along the leading eigenvector.
import { apply3, type V3 } from './linear3.ts';

/**
 * A view: world point p goes to q = R (p − centre); the screen point is (ox + scale q₀, oy − scale q₁) with
 * screen y pointing down, and q₂ is the depth (larger = nearer the viewer, who looks along −q₂).
 */
export interface View {
  /** Rotation, row-major. */
  R: ArrayLike<number>;
  /** Pixels per Å. */
  scale: number;
  /** Screen position of the world point `centre`. */
  ox: number;
  oy: number;
  centre: V3;
}

export interface ScreenPoint {
  x: number;
  y: number;
  depth: number;
}

export function projectPoint(p: ArrayLike<number>, view: View): ScreenPoint {
  const q = apply3(view.R, [p[0] - view.centre[0], p[1] - view.centre[1], p[2] - view.centre[2]]);
  return { x: view.ox + view.scale * q[0], y: view.oy - view.scale * q[1], depth: q[2] };
}

export interface ScreenEllipse {
  /** Centre (px). */
  cx: number;
  cy: number;
  /** Semi-axes (px), rx ≥ ry ≥ 0. */
  rx: number;
  ry: number;
  /** Angle of the rx axis from the screen x axis, degrees, clockwise on screen (SVG `rotate`). */
  angle: number;
  /** Depth of the centre. */
  depth: number;
}

/** The 2×2 shape matrix S A Aᵀ Sᵀ (px²) as [m00, m01, m11]. */
export function shapeMatrix(A: ArrayLike<number>, view: View): [number, number, number] {
  // rows of S: scale·R₀ and −scale·R₁ (screen y down)
  const R = view.R;
  const s = view.scale;
  let m00 = 0;
  let m01 = 0;
  let m11 = 0;
  for (let k = 0; k < 3; k++) {
    // column k of A, mapped to the screen
    const ax = A[k];
    const ay = A[3 + k];
    const az = A[6 + k];
    const u = s * (R[0] * ax + R[1] * ay + R[2] * az);
    const v = -s * (R[3] * ax + R[4] * ay + R[5] * az);
    m00 += u * u;
    m01 += u * v;
    m11 += v * v;
  }
  return [m00, m01, m11];
}

/** Outline of the ellipsoid c + A u on the screen. */
export function projectEllipsoid(centre: ArrayLike<number>, A: ArrayLike<number>, view: View): ScreenEllipse {
  const c = projectPoint(centre, view);
  const [m00, m01, m11] = shapeMatrix(A, view);
  const mean = 0.5 * (m00 + m11);
  const d = Math.hypot(0.5 * (m00 - m11), m01);
  const l1 = mean + d;
  const l2 = Math.max(mean - d, 0);
  const angle = d === 0 ? 0 : (0.5 * Math.atan2(2 * m01, m00 - m11) * 180) / Math.PI;
  return { cx: c.x, cy: c.y, rx: Math.sqrt(Math.max(l1, 0)), ry: Math.sqrt(l2), angle, depth: c.depth };
}

/** Semi-axis matrix A = V diag(s) from eigenvectors (columns of V, row-major) and semi-axis lengths. */
export function semiAxisMatrix(vectors: ArrayLike<number>, s: ArrayLike<number>): Float64Array {
  const A = new Float64Array(9);
  for (let i = 0; i < 3; i++) for (let k = 0; k < 3; k++) A[3 * i + k] = vectors[3 * i + k] * s[k];
  return A;
}

/** Whether screen point (x, y) lies inside (value < 1), on (= 1) or outside (> 1) the screen ellipse. */
export function ellipseLevel(e: ScreenEllipse, x: number, y: number): number {
  const t = (e.angle * Math.PI) / 180;
  const dx = x - e.cx;
  const dy = y - e.cy;
  const u = dx * Math.cos(t) + dy * Math.sin(t);
  const v = -dx * Math.sin(t) + dy * Math.cos(t);
  return (u / e.rx) ** 2 + (v / e.ry) ** 2;
}

/** Polylines of a ring on the ellipsoid, split into the half facing the viewer and the half behind. */
export interface RingPaths {
  front: [number, number][][];
  back: [number, number][][];
}

/**
 * The principal section through semi-axes i and j (the ring around axis k): points c + A(cos t eᵢ + sin t eⱼ).
 * Its screen image is c' + cos t·a' + sin t·b' (a', b' the screen images of the two semi-axis vectors) and its
 * depth relative to the centre is cos t·a_z + sin t·b_z, so the half facing the viewer is the interval of t
 * of length π starting where that depth crosses zero upwards. Each half is sampled with `samples`/2 segments.
 * Drawn solid (front) and faint (back) it shows how the ellipsoid is tilted.
 */
export function ellipsoidRing(centre: ArrayLike<number>, A: ArrayLike<number>, k: 0 | 1 | 2, view: View, samples = 48): RingPaths {
  const i = (k + 1) % 3;
  const j = (k + 2) % 3;
  const R = view.R;
  const s = view.scale;
  const c = projectPoint(centre, view);
  const screen = (col: number): [number, number, number] => {
    const x = A[col];
    const y = A[3 + col];
    const z = A[6 + col];
    return [
      s * (R[0] * x + R[1] * y + R[2] * z),
      -s * (R[3] * x + R[4] * y + R[5] * z),
      R[6] * x + R[7] * y + R[8] * z,
    ];
  };
  const a = screen(i);
  const b = screen(j);
  // depth(t) = a_z cos t + b_z sin t = ρ cos(t − φ): front for t ∈ [φ − π/2, φ + π/2]
  const phi = Math.atan2(b[2], a[2]);
  const half = Math.max(2, Math.round(samples / 2));
  const arc = (t0: number): [number, number][] => {
    const pts: [number, number][] = new Array(half + 1);
    for (let n = 0; n <= half; n++) {
      const t = t0 + (Math.PI * n) / half;
      const ct = Math.cos(t);
      const st = Math.sin(t);
      pts[n] = [c.x + ct * a[0] + st * b[0], c.y + ct * a[1] + st * b[1]];
    }
    return pts;
  };
  return { front: [arc(phi - Math.PI / 2)], back: [arc(phi + Math.PI / 2)] };
}

/** SVG path data of polylines. */
export function polylinePath(lines: [number, number][][]): string {
  let d = '';
  for (const l of lines)
    for (let n = 0; n < l.length; n++) d += (n === 0 ? 'M' : 'L') + Math.round(l[n][0] * 10) / 10 + ',' + Math.round(l[n][1] * 10) / 10;
  return d;
}

/**
 * The axis whose eigenvalue stands apart from the other two (largest distance to their mean): the symmetry
 * axis of a near-prolate or near-oblate ellipsoid, around which the ring is drawn.
 */
export function distinctAxis(values: ArrayLike<number>): 0 | 1 | 2 {
  let best: 0 | 1 | 2 = 0;
  let dist = -1;
  for (const k of [0, 1, 2] as const) {
    const others = [0, 1, 2].filter((m) => m !== k).map((m) => values[m]);
    const d = Math.abs(values[k] - 0.5 * (others[0] + others[1]));
    if (d > dist) {
      dist = d;
      best = k;
    }
  }
  return best;
}
