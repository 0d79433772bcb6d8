// The ellipsoid outline on the screen against the analytic projection: surface points of the ellipsoid,
// projected one by one, must lie inside the computed ellipse and touch its boundary.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  ellipseLevel,
  ellipsoidRing,
  distinctAxis,
  projectEllipsoid,
  projectPoint,
  semiAxisMatrix,
  type View,
} from '../../src-renderer/components/structure/ellipsoid-projection.ts';
import { axisRotation, identity3, multiply3, orthonormalise3, symmetricEigen3, transpose3 } from '../../src-renderer/components/structure/linear3.ts';

const unit = fc
  .tuple(fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }))
  .filter((v) => Math.hypot(...v) > 0.1);
const rotation = fc.tuple(unit, fc.double({ min: -Math.PI, max: Math.PI, noNaN: true })).map(([a, t]) => axisRotation(a, t));
const semi = fc.tuple(fc.double({ min: 0.05, max: 5, noNaN: true }), fc.double({ min: 0.05, max: 5, noNaN: true }), fc.double({ min: 0.05, max: 5, noNaN: true }));

function view(R: ArrayLike<number>, scale = 40): View {
  return { R, scale, ox: 300, oy: 200, centre: [1, -2, 0.5] };
}

describe('projectEllipsoid', () => {
  it('axis-aligned by hand: semi-axes 3, 2, 1 Å seen along z at 10 px/Å give rx 30, ry 20, angle 0', () => {
    const A = Float64Array.of(3, 0, 0, 0, 2, 0, 0, 0, 1);
    const e = projectEllipsoid([1, -2, 0.5], A, view(identity3(), 10));
    expect(e.cx).toBeCloseTo(300, 12);
    expect(e.cy).toBeCloseTo(200, 12);
    expect(e.rx).toBeCloseTo(30, 12);
    expect(e.ry).toBeCloseTo(20, 12);
    expect(Math.abs(e.angle) % 180).toBeCloseTo(0, 12);
  });

  it('axis-aligned by hand: the same ellipsoid seen along x (rotated 90° about y) shows semi-axes 2 and 1', () => {
    const A = Float64Array.of(3, 0, 0, 0, 2, 0, 0, 0, 1);
    const R = axisRotation([0, 1, 0], Math.PI / 2); // x → −z, z → x
    const e = projectEllipsoid([0, 0, 0], A, { R, scale: 10, ox: 0, oy: 0, centre: [0, 0, 0] });
    expect(e.rx).toBeCloseTo(20, 10);
    expect(e.ry).toBeCloseTo(10, 10);
    expect(Math.abs(Math.abs(e.angle) - 90)).toBeCloseTo(0, 8); // the 2 Å axis (y) is vertical on the screen
  });

  it('a 45° tilt in the screen plane: semi-axes 2 and 1 along (1,1) and (−1,1) give angle −45° (screen y down)', () => {
    const s = Math.SQRT1_2;
    const V = Float64Array.of(s, -s, 0, s, s, 0, 0, 0, 1); // columns (1,1,0)/√2, (−1,1,0)/√2, z
    const e = projectEllipsoid([0, 0, 0], semiAxisMatrix(V, [2, 1, 0.5]), { R: identity3(), scale: 1, ox: 0, oy: 0, centre: [0, 0, 0] });
    expect(e.rx).toBeCloseTo(2, 12);
    expect(e.ry).toBeCloseTo(1, 12);
    expect(e.angle).toBeCloseTo(-45, 10);
  });

  it('every projected surface point lies inside the outline, and the outline is touched', () => {
    fc.assert(
      fc.property(rotation, rotation, semi, (V, R, s) => {
        const v = view(R);
        const centre = [0.3, 1.1, -0.7];
        const A = semiAxisMatrix(V, s);
        const e = projectEllipsoid(centre, A, v);
        let maxLevel = 0;
        for (let a = 0; a < 20; a++) {
          const th = (Math.PI * (a + 0.5)) / 20;
          for (let b = 0; b < 40; b++) {
            const ph = (2 * Math.PI * b) / 40;
            const u = [Math.sin(th) * Math.cos(ph), Math.sin(th) * Math.sin(ph), Math.cos(th)];
            const p = [0, 1, 2].map((r) => centre[r] + A[3 * r] * u[0] + A[3 * r + 1] * u[1] + A[3 * r + 2] * u[2]);
            const q = projectPoint(p, v);
            const level = ellipseLevel(e, q.x, q.y);
            expect(level).toBeLessThanOrEqual(1 + 1e-9);
            maxLevel = Math.max(maxLevel, level);
          }
        }
        // a 20×40 grid on the sphere (9° steps) comes within a few per cent of the silhouette
        expect(maxLevel).toBeGreaterThan(0.95);
      }),
      { numRuns: 25 },
    );
  });

  it('a sphere projects to a circle of radius scale·r whatever the rotation', () => {
    fc.assert(
      fc.property(rotation, fc.double({ min: 0.1, max: 3, noNaN: true }), (R, r) => {
        const e = projectEllipsoid([0, 0, 0], Float64Array.of(r, 0, 0, 0, r, 0, 0, 0, r), view(R, 25));
        expect(e.rx).toBeCloseTo(25 * r, 9);
        expect(e.ry).toBeCloseTo(25 * r, 9);
      }),
    );
  });
});

describe('ellipsoidRing', () => {
  it('splits the equator of a sphere seen edge-on into a front and a back half on the outline', () => {
    // sphere radius 1 at the origin; ring around x (through y and z) seen along z: a vertical line segment
    const A = identity3();
    const R = axisRotation([1, 0, 0], 0.3); // tilt so the ring is an ellipse, with a front and a back
    const v: View = { R, scale: 10, ox: 0, oy: 0, centre: [0, 0, 0] };
    const ring = ellipsoidRing([0, 0, 0], A, 0, v, 64);
    expect(ring.front.length).toBeGreaterThan(0);
    expect(ring.back.length).toBeGreaterThan(0);
    const all = [...ring.front, ...ring.back].flat();
    for (const [x, y] of all) expect(Math.hypot(x, y)).toBeLessThanOrEqual(10 + 1e-9);
  });

  it('ring points lie on the ellipsoid, and the front half is the one nearer the viewer', () => {
    fc.assert(
      fc.property(rotation, rotation, semi, fc.constantFrom<0 | 1 | 2>(0, 1, 2), (V, R, s, k) => {
        const v = view(R, 30);
        const centre = [0.5, -1, 2];
        const A = semiAxisMatrix(V, s);
        const ring = ellipsoidRing(centre, A, k, v, 32);
        const outline = projectEllipsoid(centre, A, v);
        // every ring point projects inside the ellipsoid's outline
        for (const [x, y] of [...ring.front, ...ring.back].flat()) expect(ellipseLevel(outline, x, y)).toBeLessThanOrEqual(1 + 1e-9);
        // brute force: the ring's sample nearest the viewer (largest depth) lies on the front half
        const i = (k + 1) % 3;
        const j = (k + 2) % 3;
        let best = -Infinity;
        let worst = Infinity;
        let bestPt: [number, number] = [0, 0];
        for (let n = 0; n < 720; n++) {
          const t = (2 * Math.PI * n) / 720;
          const p = [0, 1, 2].map((r) => centre[r] + A[3 * r + i] * Math.cos(t) + A[3 * r + j] * Math.sin(t));
          const q = projectPoint(p, v);
          worst = Math.min(worst, q.depth);
          if (q.depth > best) {
            best = q.depth;
            bestPt = [q.x, q.y];
          }
        }
        fc.pre(best - worst > 0.05 * Math.max(...s)); // a ring seen face-on has no front or back
        const dist = (pts: [number, number][]) => Math.min(...pts.map(([x, y]) => Math.hypot(x - bestPt[0], y - bestPt[1])));
        expect(dist(ring.front[0])).toBeLessThanOrEqual(dist(ring.back[0]) + 1e-9);
      }),
      { numRuns: 30 },
    );
  });

  it('distinctAxis picks the eigenvalue farthest from the mean of the other two', () => {
    expect(distinctAxis([1, 1, 5])).toBe(2); // prolate
    expect(distinctAxis([0.2, 3, 3.1])).toBe(0); // oblate
  });
});

describe('symmetricEigen3', () => {
  it('recovers V diag(λ) Vᵀ with ascending values and orthonormal vectors', () => {
    fc.assert(
      fc.property(rotation, fc.tuple(fc.double({ min: -5, max: 5, noNaN: true }), fc.double({ min: -5, max: 5, noNaN: true }), fc.double({ min: -5, max: 5, noNaN: true })), (Q, l) => {
        const T = multiply3(multiply3(Q, Float64Array.of(l[0], 0, 0, 0, l[1], 0, 0, 0, l[2])), transpose3(Q));
        const { values, vectors } = symmetricEigen3(T);
        const sorted = [...l].sort((a, b) => a - b);
        for (let k = 0; k < 3; k++) expect(values[k]).toBeCloseTo(sorted[k], 9);
        const back = multiply3(multiply3(vectors, Float64Array.of(values[0], 0, 0, 0, values[1], 0, 0, 0, values[2])), transpose3(vectors));
        for (let k = 0; k < 9; k++) expect(back[k]).toBeCloseTo(T[k], 9);
        const VtV = multiply3(transpose3(vectors), vectors);
        for (let k = 0; k < 9; k++) expect(VtV[k]).toBeCloseTo(k % 4 === 0 ? 1 : 0, 9);
      }),
    );
  });

  it('hand example: [[2,1,0],[1,2,0],[0,0,5]] has eigenvalues 1, 3, 5', () => {
    const { values } = symmetricEigen3([2, 1, 0, 1, 2, 0, 0, 0, 5]);
    expect(values[0]).toBeCloseTo(1, 12);
    expect(values[1]).toBeCloseTo(3, 12);
    expect(values[2]).toBeCloseTo(5, 12);
  });

  it('orthonormalise3 turns a drifted rotation back into a rotation', () => {
    const R = Array.from(axisRotation([1, 2, 3], 0.7), (x) => x * 1.01 + 0.001);
    const Q = orthonormalise3(R);
    const QtQ = multiply3(transpose3(Q), Q);
    for (let k = 0; k < 9; k++) expect(QtQ[k]).toBeCloseTo(k % 4 === 0 ? 1 : 0, 12);
  });
});
