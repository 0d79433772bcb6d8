// World-space content of the structure view: molecule grouping and unwrapping, ellipsoid principal axes and
// anisotropy, the common length scale, periodic images, and the element table against a reference library.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import {
  buildScene,
  cellEdges,
  ellipsoidLengthScale,
  fractionalAnisotropy,
  minimumImage,
  nearbyImages,
  rawSemiAxes,
} from '../../src-renderer/components/structure/structure-scene.ts';
import { covalentRadius, elementColour } from '../../src-renderer/components/structure/element-style.ts';
import { inverse3 } from '../../src-renderer/components/structure/linear3.ts';

const iso = (a: number) => [a, 0, 0, 0, a, 0, 0, 0, a];

describe('elements', () => {
  it('covalent radii equal the published table as tabulated by python3-ase (test/fixtures/renderer/covalent-radii.py)', () => {
    const ref = JSON.parse(readFileSync(join(import.meta.dirname, '../fixtures/renderer/covalent-radii.json'), 'utf8')) as Record<string, number>;
    expect(Object.keys(covalentRadius).sort()).toEqual(Object.keys(ref).sort());
    for (const [el, r] of Object.entries(ref)) expect(covalentRadius[el], el).toBeCloseTo(r, 3);
  });
  it('gives the common organic elements distinct colours', () => {
    const c = ['H', 'C', 'N', 'O', 'S', 'P', 'F', 'Cl'].map(elementColour);
    expect(new Set(c).size).toBe(c.length);
  });
});

describe('fractionalAnisotropy', () => {
  it('is 0 for a sphere, 1 for a line, and 1/√2 for a flat disc (λ = 1, 1, 0), by hand', () => {
    expect(fractionalAnisotropy([2, 2, 2])).toBeCloseTo(0, 15);
    expect(fractionalAnisotropy([0, 0, 3])).toBeCloseTo(1, 15);
    // mean 2/3, deviations (1/3, 1/3, −2/3): ‖dev‖ = √(6)/3, ‖λ‖ = √2 → √(3/2)·√6/(3√2) = 1/√2
    expect(fractionalAnisotropy([1, 1, 0])).toBeCloseTo(Math.SQRT1_2, 15);
  });
  it('semi-axes are |λ| or √|λ|', () => {
    expect(rawSemiAxes([-4, 1, 9], 'linear')).toEqual([4, 1, 9]);
    expect(rawSemiAxes([-4, 1, 9], 'sqrt')).toEqual([2, 1, 3]);
  });
});

describe('buildScene', () => {
  const cell = [10, 0, 0, 0, 10, 0, 0, 0, 10];
  // a diatomic split by the cell boundary along x: atoms at x = 9.6 and x = 0.4 (0.8 Å apart through the wall)
  const species = ['N', 'N', 'O'];
  const positions = [9.6, 5, 5, 0.4, 5, 5, 5, 2, 2];

  it('finds bonds through the periodic boundary as two half-bonds meeting at the wall', () => {
    const s = buildScene({ species, positions, cell }, 'none');
    expect(s.bonds).toHaveLength(2);
    const toX = s.bonds.map((b) => b.to[0]).sort((a, b) => a - b);
    expect(toX[0]).toBeCloseTo(0, 12);
    expect(toX[1]).toBeCloseTo(10, 12);
  });

  it('sums per-atom tensors over a molecule and centres it on the unwrapped centroid', () => {
    const tensors = [...iso(1), ...iso(2), ...iso(5)];
    const s = buildScene({ species, positions, cell, tensors, groups: [0, 0, 1] }, 'molecule');
    expect(s.mode).toBe('molecule');
    expect(s.ellipsoids).toHaveLength(2);
    const m = s.ellipsoids[0];
    expect(Array.from(m.tensor)).toEqual(iso(3));
    // centroid through the wall: x = 9.6 + 0.4 = 10.0 (not 5.0, the naive mean)
    expect(m.centre[0]).toBeCloseTo(10, 12);
    expect(m.atoms).toEqual([0, 1]);
  });

  it('accepts tensors per molecule, falls back to per atom without groups, and rejects wrong lengths', () => {
    const perGroup = buildScene({ species, positions, cell, tensors: [...iso(3), ...iso(5)], groups: [0, 0, 1] }, 'atom');
    expect(perGroup.mode).toBe('molecule');
    expect(perGroup.notes.join(' ')).toMatch(/per molecule/);
    const noGroups = buildScene({ species, positions, cell, tensors: [...iso(1), ...iso(2), ...iso(5)] }, 'molecule');
    expect(noGroups.mode).toBe('atom');
    expect(noGroups.notes.join(' ')).toMatch(/No molecule grouping/);
    expect(() => buildScene({ species, positions, cell, tensors: [1, 2, 3] }, 'atom')).toThrow(/9 numbers per atom \(27\)/);
    expect(() => buildScene({ species, positions: [1, 2], cell }, 'atom')).toThrow(/3 atoms need 9 coordinates/);
  });

  it('gives principal axes of a tilted uniaxial tensor and flags a negative principal value', () => {
    // T = diag(1, 1, 1) + 2·(d⊗d − I/3) with d = (1, 1, 0)/√2 → eigenvalues 1/3, 1/3, 7/3; largest along d
    const d = [Math.SQRT1_2, Math.SQRT1_2, 0];
    const T = Array.from({ length: 9 }, (_, k) => (k % 4 === 0 ? 1 : 0) + 2 * (d[Math.floor(k / 3)] * d[k % 3] - (k % 4 === 0 ? 1 / 3 : 0)));
    const neg = [-0.5, 0, 0, 0, 1, 0, 0, 0, 1];
    const s = buildScene({ species: ['C', 'H'], positions: [0, 0, 0, 3, 0, 0], cell: null, tensors: [...T, ...neg] }, 'atom');
    const e = s.ellipsoids[0];
    expect(e.values[2]).toBeCloseTo(7 / 3, 10);
    expect(Math.abs(e.vectors[2] * d[0] + e.vectors[5] * d[1] + e.vectors[8] * d[2])).toBeCloseTo(1, 10);
    expect(e.negative).toBe(false);
    expect(s.ellipsoids[1].negative).toBe(true);
    expect(s.notes.join(' ')).toMatch(/1 of 2 local tensors have a negative principal value/);
  });

  it('draws no ellipsoids (mode none) when no local tensors are given', () => {
    const s = buildScene({ species: ['C', 'C'], positions: [0, 0, 0, 1.5, 0, 0], cell: null }, 'atom');
    expect(s.mode).toBe('none');
    expect(s.ellipsoids).toHaveLength(0);
    expect(s.bonds).toHaveLength(2);
  });

  it('leaves out tensors with non-finite values (with a note) and rejects non-finite positions', () => {
    const s = buildScene({ species: ['C', 'C'], positions: [0, 0, 0, 2, 0, 0], cell: null, tensors: [...iso(1), NaN, 0, 0, 0, 1, 0, 0, 0, 1] }, 'atom');
    expect(s.ellipsoids.map((e) => e.id)).toEqual([0]);
    expect(s.notes.join(' ')).toMatch(/1 local tensor\(s\) contain values that are not finite.*atom 1/);
    expect(() => buildScene({ species: ['C', 'N'], positions: [0, 0, 0, 2, Infinity, 0], cell: null }, 'none')).toThrow(/atom 1 \(N\)/);
  });

  it('draws the 12 edges of the cell, each along a, b or c', () => {
    const tri = [5, 0, 0, 1, 4, 0, 0.5, 0.7, 6];
    const edges = cellEdges(tri);
    expect(edges).toHaveLength(12);
    const lengths = edges.map(([p, q]) => Math.hypot(q[0] - p[0], q[1] - p[1], q[2] - p[2]));
    const la = Math.hypot(5, 0, 0);
    const lb = Math.hypot(1, 4, 0);
    const lc = Math.hypot(0.5, 0.7, 6);
    for (const l of [la, lb, lc]) expect(lengths.filter((x) => Math.abs(x - l) < 1e-12)).toHaveLength(4);
  });
});

describe('length scale and images', () => {
  it('draws the 90th-percentile largest semi-axis at half the median neighbour spacing', () => {
    const tensors = [...iso(1), ...iso(4), ...iso(1), ...iso(1)];
    const s = buildScene({ species: ['Ar', 'Ar', 'Ar', 'Ar'], positions: [0, 0, 0, 4, 0, 0, 8, 0, 0, 12, 0, 0], cell: null, tensors }, 'atom');
    const { factor, targetA } = ellipsoidLengthScale(s.ellipsoids, 'linear', null);
    expect(targetA).toBeCloseTo(2, 12); // 0.5 × 4 Å
    expect(factor * 4).toBeCloseTo(2, 12); // the 90th percentile of [1, 1, 1, 4] is 4
  });

  it('minimum image in a cubic cell reduces each component into [−L/2, L/2]', () => {
    const cell = [6, 0, 0, 0, 6, 0, 0, 0, 6];
    const d = minimumImage([5, -4, 2.5], cell, inverse3(cell));
    expect(d[0]).toBeCloseTo(-1, 12);
    expect(d[1]).toBeCloseTo(2, 12);
    expect(d[2]).toBeCloseTo(2.5, 12);
  });

  it('periodic images near the cell: an atom near a corner gets 7, one in the middle none', () => {
    const cell = [10, 0, 0, 0, 10, 0, 0, 0, 10];
    expect(nearbyImages([[0.5, 0.5, 0.5]], cell, 0.2)).toHaveLength(7);
    expect(nearbyImages([[5, 5, 5]], cell, 0.2)).toHaveLength(0);
    const face = nearbyImages([[9.5, 5, 5]], cell, 0.2);
    expect(face).toHaveLength(1);
    expect(face[0].shift).toEqual([-10, 0, 0]);
  });
});

describe('scene markup and hit testing', () => {
  it('writes one shape per atom and ellipsoid, dashed in the warning colour for a negative principal value', async () => {
    const { sceneMarkup } = await import('../../src-renderer/components/structure/scene-markup.ts');
    const style = {
      atomFill: () => 'url(#a)',
      atomStroke: () => '#000',
      bondColour: () => '#111',
      ellFill: () => 'url(#e)',
      ellStroke: () => '#222',
      ringColour: () => '#333',
      edge: '#444',
      warn: '#f0f',
      halo: '#fff',
    };
    const s = sceneMarkup(
      [
        { kind: 'edge', depth: -1, x1: 0, y1: 0, x2: 10, y2: 0 },
        { kind: 'atom', depth: 0, x: 5, y: 5, r: 2, sp: 'O', index: 0, faded: false },
        { kind: 'ell', depth: 0.1, cx: 5, cy: 5, rx: 6, ry: 3, angle: 30, bin: 2, negative: true, ringFront: 'M0,0L1,1', ringBack: '', index: 0, faded: false },
      ],
      style,
    );
    expect(s.match(/<circle /g)).toHaveLength(1);
    expect(s.match(/<ellipse /g)).toHaveLength(1);
    expect(s).toContain('stroke="#f0f" stroke-width="1.6" stroke-dasharray="4 3"');
    expect(s).toContain('rotate(30.0)');
  });

  it('rings an atom outside the training data in the warning colour, and the ring catches no pointer', async () => {
    const { sceneMarkup, hitTest } = await import('../../src-renderer/components/structure/scene-markup.ts');
    const style = { atomFill: () => 'url(#a)', atomStroke: () => '#000', bondColour: () => '#111', ellFill: () => 'url(#e)', ellStroke: () => '#222', ringColour: () => '#333', edge: '#444', warn: '#f0f', halo: '#fff' };
    const items = [
      { kind: 'atom' as const, depth: 0, x: 5, y: 5, r: 2, sp: 'O', index: 3, faded: false },
      { kind: 'mark' as const, depth: 0.002, x: 5, y: 5, r: 6, index: 3, faded: false },
    ];
    const s = sceneMarkup(items, style);
    expect(s).toContain('r="6" fill="none" stroke="#f0f"');
    expect(s).toContain('r="6" fill="none" stroke="#fff"'); // the halo under it
    expect(s).toContain('data-mark="outside:3"');
    expect(hitTest(items, 5, 5)).toEqual({ kind: 'atom', index: 3 });
    expect(hitTest(items, 10, 5)).toBeNull(); // on the ring, off the atom
  });

  it('hit testing picks the front-most shape under the pointer', async () => {
    const { hitTest } = await import('../../src-renderer/components/structure/scene-markup.ts');
    const items = [
      { kind: 'atom' as const, depth: 0, x: 10, y: 10, r: 3, sp: 'C', index: 7, faded: false },
      { kind: 'ell' as const, depth: 1, cx: 10, cy: 10, rx: 8, ry: 2, angle: 90, bin: 0, negative: false, ringFront: '', ringBack: '', index: 4, faded: false },
    ];
    // the ellipse (drawn later, nearer) is vertical: 8 px up/down, 2 px left/right
    expect(hitTest(items, 10, 17)).toEqual({ kind: 'ell', index: 4 });
    expect(hitTest(items, 12.5, 10)).toEqual({ kind: 'atom', index: 7 }); // outside the thin ellipse, inside the atom
    expect(hitTest(items, 20, 20)).toBeNull();
  });
});
