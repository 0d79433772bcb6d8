// A brute-force neighbour list for tests: every atom pair and every lattice image in a box of shifts large
// enough for the cutoff (from the perpendicular widths V/|a_j × a_k|). Quadratic and slow on purpose, so it can
// serve as an independent check of core/neighbours.ts and of the features that use it.
import type { Frame } from '../../src-main/core/frame.ts';
import type { NeighbourPairs } from '../../src-main/core/density.ts';

export function bruteForceNeighbours(frame: Frame, cutoff: number): NeighbourPairs {
  const N = frame.species.length;
  const x = frame.positions;
  const H = frame.cell;
  const reach = [0, 0, 0];
  if (H) {
    const a = [H.subarray(0, 3), H.subarray(3, 6), H.subarray(6, 9)];
    const cross = (u: Float64Array, v: Float64Array) => [u[1] * v[2] - u[2] * v[1], u[2] * v[0] - u[0] * v[2], u[0] * v[1] - u[1] * v[0]];
    const c12 = cross(a[1], a[2]);
    const V = Math.abs(a[0][0] * c12[0] + a[0][1] * c12[1] + a[0][2] * c12[2]);
    for (let k = 0; k < 3; k++) {
      if (!frame.pbc[k]) continue;
      const c = cross(a[(k + 1) % 3], a[(k + 2) % 3]);
      const width = V / Math.hypot(c[0], c[1], c[2]);
      reach[k] = Math.ceil(cutoff / width) + 1;
    }
  }
  const start = [0];
  const neighbour: number[] = [];
  const vectors: number[] = [];
  const distances: number[] = [];
  for (let i = 0; i < N; i++) {
    for (let j = 0; j < N; j++) {
      for (let p = -reach[0]; p <= reach[0]; p++) {
        for (let q = -reach[1]; q <= reach[1]; q++) {
          for (let r = -reach[2]; r <= reach[2]; r++) {
            if (i === j && p === 0 && q === 0 && r === 0) continue;
            const v = [0, 1, 2].map((k) => x[3 * j + k] - x[3 * i + k] + (H ? p * H[k] + q * H[3 + k] + r * H[6 + k] : 0));
            const d = Math.hypot(v[0], v[1], v[2]);
            if (d >= cutoff) continue;
            neighbour.push(j);
            vectors.push(...v);
            distances.push(d);
          }
        }
      }
    }
    start.push(neighbour.length);
  }
  return { start: Int32Array.from(start), neighbour: Int32Array.from(neighbour), vectors: Float64Array.from(vectors), distances: Float64Array.from(distances) };
}
