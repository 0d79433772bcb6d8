// The world-space content of the structure view, built once per frame (not per redraw): atoms, half-bonds,
// cell edges, periodic images and the local polarisability ellipsoids (per atom, or per molecule by summing
// the additive local contributions of its atoms, placed at its unwrapped centroid), with their principal axes,
// anisotropy and a common length scale. Projection and depth sorting happen per view in the component.
import { inverse3, symmetricEigen3, type V3 } from './linear3.ts';
import { elementRadius } from './element-style.ts';
import { findBonds, roundedImage } from './bond-search.ts';

export type EllipsoidMode = 'atom' | 'molecule' | 'none';
/** Semi-axis lengths proportional to |eigenvalue| ('linear') or to its square root ('sqrt'). */
export type SemiAxisRule = 'linear' | 'sqrt';

export interface SceneInput {
  species: readonly string[];
  positions: ArrayLike<number>;
  cell: ArrayLike<number> | null;
  /** 9 per atom, or 9 per group when `groups` is given and the length matches the group count. */
  tensors?: ArrayLike<number> | null;
  /** Atom → molecule (group) index, 0-based. */
  groups?: ArrayLike<number> | null;
}

export interface SceneEllipsoid {
  centre: V3;
  tensor: Float64Array;
  /** Eigenvalues ascending and eigenvectors as columns. */
  values: V3;
  vectors: Float64Array;
  /** Fractional anisotropy √(3/2)·‖λ − λ̄‖/‖λ‖: 0 for a sphere, 1 for a line (may exceed 1 with negative λ). */
  anisotropy: number;
  /** True when any eigenvalue is negative (drawn with |λ|, dashed, in the warning colour). */
  negative: boolean;
  /** Atom indices it belongs to. */
  atoms: number[];
  /** Group index (molecule mode) or atom index (atom mode). */
  id: number;
}

export interface Scene {
  atoms: { centre: V3; radius: number; species: string; index: number }[];
  /** Half-bonds: from atom `atom` to the bond midpoint. */
  bonds: { from: V3; to: V3; atom: number }[];
  /** Cell edges (12), empty without a cell. */
  edges: [V3, V3][];
  ellipsoids: SceneEllipsoid[];
  /** The mode actually used (molecule falls back to atom without groups). */
  mode: EllipsoidMode;
  /** Plain-words notes for the user (fallbacks, negative principal values). */
  notes: string[];
  /** Centre of rotation and radius of a sphere holding everything (Å). */
  centre: V3;
  radius: number;
}

/** Fractional anisotropy of three principal values. */
export function fractionalAnisotropy(values: ArrayLike<number>): number {
  const m = (values[0] + values[1] + values[2]) / 3;
  const dev = Math.hypot(values[0] - m, values[1] - m, values[2] - m);
  const norm = Math.hypot(values[0], values[1], values[2]);
  return norm > 0 ? Math.sqrt(1.5) * (dev / norm) : 0;
}

/** Semi-axis lengths before the common factor: |λ| or √|λ|. */
export function rawSemiAxes(values: ArrayLike<number>, rule: SemiAxisRule): V3 {
  const f = rule === 'sqrt' ? (v: number) => Math.sqrt(Math.abs(v)) : (v: number) => Math.abs(v);
  return [f(values[0]), f(values[1]), f(values[2])];
}

/** Cartesian displacement d reduced to its minimum image (exact for orthogonal cells, close for mildly skewed). */
export function minimumImage(d: V3, cell: ArrayLike<number> | null, inv: Float64Array | null): V3 {
  // fractional f = d · H⁻¹ (cell rows are the lattice vectors, cart = f · H), rounded to the nearest image
  return cell && inv ? roundedImage(d[0], d[1], d[2], cell, inv) : d;
}

function pos(p: ArrayLike<number>, i: number): V3 {
  return [p[3 * i], p[3 * i + 1], p[3 * i + 2]];
}

/** Cell edges from the origin along rows a, b, c. */
export function cellEdges(cell: ArrayLike<number>): [V3, V3][] {
  const a: V3 = [cell[0], cell[1], cell[2]];
  const b: V3 = [cell[3], cell[4], cell[5]];
  const c: V3 = [cell[6], cell[7], cell[8]];
  const corner = (i: number, j: number, k: number): V3 => [0, 1, 2].map((m) => i * a[m] + j * b[m] + k * c[m]) as V3;
  const edges: [V3, V3][] = [];
  for (const [i, j] of [[0, 0], [1, 0], [0, 1], [1, 1]]) {
    edges.push([corner(0, i, j), corner(1, i, j)]);
    edges.push([corner(i, 0, j), corner(i, 1, j)]);
    edges.push([corner(i, j, 0), corner(i, j, 1)]);
  }
  return edges;
}

function makeEllipsoid(centre: V3, tensor: Float64Array, atoms: number[], id: number): SceneEllipsoid {
  const { values, vectors } = symmetricEigen3(tensor);
  return {
    centre,
    tensor,
    values,
    vectors,
    anisotropy: fractionalAnisotropy(values),
    negative: values[0] < 0,
    atoms,
    id,
  };
}

/** Group count implied by the groups array (max index + 1). */
function groupCount(groups: ArrayLike<number>): number {
  let n = 0;
  for (let i = 0; i < groups.length; i++) n = Math.max(n, groups[i] + 1);
  return n;
}

export function buildScene(input: SceneInput, mode: EllipsoidMode, bondCutoffFactor = 1.2): Scene {
  const n = input.species.length;
  if (input.positions.length !== 3 * n) {
    throw new RangeError(`structure view: ${n} atoms need ${3 * n} coordinates, got ${input.positions.length}`);
  }
  if (input.cell && input.cell.length !== 9) throw new RangeError(`structure view: the cell needs 9 numbers, got ${input.cell.length}`);
  const notes: string[] = [];
  const cell = input.cell ?? null;
  const inv = cell ? inverse3(cell) : null;
  const atoms = input.species.map((s, i) => ({ centre: pos(input.positions, i), radius: elementRadius(s), species: s, index: i }));
  const badAtom = atoms.find((a) => !a.centre.every(Number.isFinite));
  if (badAtom) {
    throw new RangeError(`structure view: atom ${badAtom.index} (${badAtom.species}) has a position that is not a finite number`);
  }

  // Half-bonds by covalent radii, each half in its own atom's colour, meeting at the midpoint (also through the
  // periodic boundary).
  const bonds: Scene['bonds'] = [];
  const radii = Float64Array.from(atoms, (a) => a.radius);
  for (const { i, j, d } of findBonds(input.positions, radii, cell, inv, bondCutoffFactor)) {
    const ci = atoms[i].centre;
    const cj = atoms[j].centre;
    bonds.push({ from: ci, to: [ci[0] + d[0] / 2, ci[1] + d[1] / 2, ci[2] + d[2] / 2], atom: i });
    bonds.push({ from: cj, to: [cj[0] - d[0] / 2, cj[1] - d[1] / 2, cj[2] - d[2] / 2], atom: j });
  }

  // Ellipsoids.
  const ellipsoids: SceneEllipsoid[] = [];
  let used: EllipsoidMode = mode;
  const t = input.tensors ?? null;
  const groups = input.groups ?? null;
  if (groups && groups.length !== n) throw new RangeError(`structure view: ${n} atoms but ${groups.length} group indices`);
  if (mode !== 'none' && t && t.length > 0) {
    const ng = groups ? groupCount(groups) : 0;
    const perGroup = groups !== null && t.length === 9 * ng && ng !== n;
    if (!perGroup && t.length !== 9 * n) {
      throw new RangeError(
        `structure view: local tensors need 9 numbers per atom (${9 * n})${groups ? ` or per molecule (${9 * ng})` : ''}, got ${t.length}`,
      );
    }
    if (mode === 'molecule' && !groups) {
      used = 'atom';
      notes.push('No molecule grouping given: ellipsoids are drawn per atom.');
    }
    if (perGroup && mode === 'atom') {
      used = 'molecule';
      notes.push('The local tensors are given per molecule: ellipsoids are drawn per molecule.');
    }
    if (used === 'atom') {
      for (let i = 0; i < n; i++) ellipsoids.push(makeEllipsoid(atoms[i].centre, Float64Array.from({ length: 9 }, (_, k) => t[9 * i + k]), [i], i));
    } else if (groups) {
      const members: number[][] = Array.from({ length: ng }, () => []);
      for (let i = 0; i < n; i++) members[groups[i]].push(i);
      members.forEach((m, g) => {
        if (m.length === 0) return;
        // unwrap the molecule around its first atom, so a molecule split by the cell boundary stays whole
        const r0 = atoms[m[0]].centre;
        const c: V3 = [0, 0, 0];
        for (const i of m) {
          const d = minimumImage([atoms[i].centre[0] - r0[0], atoms[i].centre[1] - r0[1], atoms[i].centre[2] - r0[2]], cell, inv);
          for (let k = 0; k < 3; k++) c[k] += d[k] / m.length;
        }
        const tensor = new Float64Array(9);
        if (perGroup) for (let k = 0; k < 9; k++) tensor[k] = t[9 * g + k];
        else for (const i of m) for (let k = 0; k < 9; k++) tensor[k] += t[9 * i + k];
        ellipsoids.push(makeEllipsoid([r0[0] + c[0], r0[1] + c[1], r0[2] + c[2]], tensor, m, g));
      });
    }
    // a tensor with a non-finite entry (a failed prediction) has no shape: leave it out and say so
    const finite = ellipsoids.filter((e) => e.tensor.every(Number.isFinite));
    if (finite.length < ellipsoids.length) {
      const first = ellipsoids.find((e) => !e.tensor.every(Number.isFinite));
      notes.push(
        `${ellipsoids.length - finite.length} local tensor(s) contain values that are not finite numbers and are not drawn ` +
          `(first: ${used === 'molecule' ? 'molecule' : 'atom'} ${first?.id}).`,
      );
      ellipsoids.splice(0, ellipsoids.length, ...finite);
    }
    const neg = ellipsoids.filter((e) => e.negative).length;
    if (neg > 0) {
      notes.push(
        `${neg} of ${ellipsoids.length} local tensors have a negative principal value: drawn with |λ|, dashed, in the warning colour. ` +
          'A local contribution need not be positive definite; only the sum over the cell is a physical polarisability.',
      );
    }
  } else used = 'none'; // nothing to draw: say so in the title rather than promise ellipsoids

  // Bounding sphere for the camera: cell corners and atoms.
  const pts: V3[] = atoms.map((a) => a.centre);
  const edges = cell ? cellEdges(cell) : [];
  for (const [p, q] of edges) pts.push(p, q);
  const lo: V3 = [Infinity, Infinity, Infinity];
  const hi: V3 = [-Infinity, -Infinity, -Infinity];
  for (const p of pts)
    for (let k = 0; k < 3; k++) {
      lo[k] = Math.min(lo[k], p[k]);
      hi[k] = Math.max(hi[k], p[k]);
    }
  const centre: V3 = pts.length ? [0, 1, 2].map((k) => 0.5 * (lo[k] + hi[k])) as V3 : [0, 0, 0];
  let radius = 1;
  for (const p of pts) radius = Math.max(radius, Math.hypot(p[0] - centre[0], p[1] - centre[1], p[2] - centre[2]));
  return { atoms, bonds, edges, ellipsoids, mode: used, notes, centre, radius: radius + 0.6 };
}

/**
 * The common factor (Å per unit of the raw semi-axis) so that the 90th percentile of the ellipsoids' largest
 * raw semi-axes is drawn `fraction` × the median distance between neighbouring ellipsoid centres (clamped to
 * 0.3–3 Å): neighbours rarely overlap, and one outlier does not shrink all the others.
 */
export function ellipsoidLengthScale(
  ellipsoids: readonly SceneEllipsoid[],
  rule: SemiAxisRule,
  cell: ArrayLike<number> | null,
  fraction = 0.5,
): { factor: number; targetA: number } {
  if (ellipsoids.length === 0) return { factor: 1, targetA: 1 };
  const inv = cell ? inverse3(cell) : null;
  const nearest: number[] = [];
  const m = ellipsoids.length;
  const stride = Math.max(1, Math.floor(m / 400)); // sample centres for big frames
  for (let i = 0; i < m; i += stride) {
    let best = Infinity;
    for (let j = 0; j < m; j++) {
      if (j === i) continue;
      const a = ellipsoids[i].centre;
      const b = ellipsoids[j].centre;
      const v = cell && inv ? roundedImage(b[0] - a[0], b[1] - a[1], b[2] - a[2], cell, inv) : [b[0] - a[0], b[1] - a[1], b[2] - a[2]];
      const d = Math.sqrt(v[0] * v[0] + v[1] * v[1] + v[2] * v[2]);
      if (d > 1e-6 && d < best) best = d;
    }
    if (Number.isFinite(best)) nearest.push(best);
  }
  nearest.sort((a, b) => a - b);
  const spacing = nearest.length ? nearest[Math.floor(nearest.length / 2)] : 3;
  const targetA = Math.min(3, Math.max(0.3, fraction * spacing));
  const big = ellipsoids.map((e) => Math.max(...rawSemiAxes(e.values, rule))).sort((a, b) => a - b);
  const p90 = big[Math.min(big.length - 1, Math.floor(0.9 * big.length))];
  return { factor: p90 > 0 ? targetA / p90 : 1, targetA };
}

/**
 * Periodic images near the cell: translations n·(a, b, c), n ∈ {−1, 0, 1}³ without 0, of every point whose
 * image falls within `margin` (fractional) of the cell. Returns (point index, Cartesian shift) pairs.
 */
export function nearbyImages(points: readonly V3[], cell: ArrayLike<number>, margin = 0.2): { index: number; shift: V3 }[] {
  const inv = inverse3(cell);
  const out: { index: number; shift: V3 }[] = [];
  points.forEach((p, index) => {
    const f = [0, 1, 2].map((j) => p[0] * inv[j] + p[1] * inv[3 + j] + p[2] * inv[6 + j]);
    for (let i = -1; i <= 1; i++)
      for (let j = -1; j <= 1; j++)
        for (let k = -1; k <= 1; k++) {
          if (i === 0 && j === 0 && k === 0) continue;
          const g = [f[0] + i, f[1] + j, f[2] + k];
          if (g.every((x) => x >= -margin && x <= 1 + margin)) {
            const shift = [0, 1, 2].map((m) => i * cell[m] + j * cell[3 + m] + k * cell[6 + m]) as V3;
            out.push({ index, shift });
          }
        }
  });
  return out;
}
