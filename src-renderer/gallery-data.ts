// SYNTHETIC data for the development gallery only: made-up numbers with a plausible shape, so each component
// can be looked at without a trained model. Nothing here is a measurement or a model result.
import type { ErrorFiguresJ, ParityPointJ } from '../src-main/api/contract.ts';

/** Small seeded generator (mulberry32) so the gallery looks the same on every run. */
export function seeded(seed: number): { uniform: () => number; normal: () => number } {
  let a = seed >>> 0;
  const uniform = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const normal = () => {
    const u = Math.max(uniform(), 1e-12);
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * uniform());
  };
  return { uniform, normal };
}

/** Synthetic parity points: 'training folds' (small error) and 'test' (larger error) frames. */
export function syntheticParity(n = 160): { points: ParityPointJ[]; groups: string[] } {
  const rng = seeded(7);
  const points: ParityPointJ[] = [];
  const groups: string[] = [];
  for (let i = 0; i < n; i++) {
    const test = i % 5 === 0;
    const noise = test ? 0.035 : 0.018;
    const reference = [1.85 + 0.12 * rng.normal(), ...Array.from({ length: 5 }, () => 0.06 * rng.normal())];
    const predicted = reference.map((v) => v + noise * rng.normal() * (1 + Math.abs(v)));
    points.push({ frame: i, label: test ? 'test' : 'training folds', reference, predicted });
    groups.push(test ? 'test (held out)' : 'training folds (CV)');
  }
  return { points, groups };
}

export function figuresOf(points: ParityPointJ[]): ErrorFiguresJ {
  const n = points.length;
  const stat = (get: (p: ParityPointJ, w: 'reference' | 'predicted') => number[]) => {
    const ref = points.flatMap((p) => get(p, 'reference'));
    const pred = points.flatMap((p) => get(p, 'predicted'));
    const mean = ref.reduce((s, v) => s + v, 0) / ref.length;
    const ss = ref.reduce((s, v, i) => s + (pred[i] - v) ** 2, 0);
    const st = ref.reduce((s, v) => s + (v - mean) ** 2, 0);
    const rmse = Math.sqrt(ss / ref.length);
    return { rmse, percent: (100 * rmse) / Math.sqrt(st / ref.length), r2: 1 - ss / st };
  };
  const iso = stat((p, w) => [p[w][0]]);
  const an = stat((p, w) => p[w].slice(1));
  return { rmseIso: iso.rmse, rmseAniso: an.rmse, percentIso: iso.percent, percentAniso: an.percent, r2Iso: iso.r2, r2Aniso: an.r2, count: n };
}

/**
 * SYNTHETIC structure: water molecules on a 3×2×2 grid in an orthorhombic cell, randomly oriented, with made-up
 * local tensors (an isotropic part plus a uniaxial part along each O–H bond; one H given a tiny isotropic part so
 * that it has a negative principal value, to show how that is drawn). Not a model result.
 */
export function syntheticWaterBox(): {
  species: string[];
  positions: Float64Array;
  cell: Float64Array;
  tensors: Float64Array;
  groups: Int32Array;
  frameEps: Float64Array;
} {
  const rng = seeded(11);
  const cell = Float64Array.of(9.3, 0, 0, 0, 6.4, 0, 0.6, 0, 6.1);
  const species: string[] = [];
  const pos: number[] = [];
  const groups: number[] = [];
  const tensors: number[] = [];
  let g = 0;
  const rot = () => {
    // random rotation from a random unit quaternion
    const [a, b, c, d] = [rng.normal(), rng.normal(), rng.normal(), rng.normal()];
    const n = Math.hypot(a, b, c, d);
    const [w, x, y, z] = [a / n, b / n, c / n, d / n];
    return [
      1 - 2 * (y * y + z * z), 2 * (x * y - z * w), 2 * (x * z + y * w),
      2 * (x * y + z * w), 1 - 2 * (x * x + z * z), 2 * (y * z - x * w),
      2 * (x * z - y * w), 2 * (y * z + x * w), 1 - 2 * (x * x + y * y),
    ];
  };
  const uniaxial = (iso: number, aniso: number, d: number[]) => {
    const t: number[] = [];
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) t.push((i === j ? iso : 0) + aniso * (d[i] * d[j] - (i === j ? 1 / 3 : 0)));
    return t;
  };
  for (let i = 0; i < 3; i++)
    for (let j = 0; j < 2; j++)
      for (let k = 0; k < 2; k++) {
        const o = [(i + 0.5) * 3.1 + 0.3 * k + 0.25 * rng.normal(), (j + 0.5) * 3.2 + 0.25 * rng.normal(), (k + 0.5) * 3.05 + 0.25 * rng.normal()];
        const R = rot();
        const local = [
          [0.7572, 0.5865, 0],
          [-0.7572, 0.5865, 0],
        ];
        species.push('O');
        pos.push(...o);
        groups.push(g);
        // O: mildly oblate, flat in the molecular plane (normal = local z)
        const nrm = [R[2], R[5], R[8]];
        tensors.push(...uniaxial(1.05, -0.35, nrm));
        for (const h of local) {
          const d = [0, 1, 2].map((r) => R[3 * r] * h[0] + R[3 * r + 1] * h[1] + R[3 * r + 2] * h[2]);
          species.push('H');
          pos.push(o[0] + d[0], o[1] + d[1], o[2] + d[2]);
          groups.push(g);
          const u = d.map((x) => x / Math.hypot(...d));
          const iso = g === 4 && h[0] > 0 ? 0.05 : 0.24;
          tensors.push(...uniaxial(iso, 0.5, u));
        }
        g++;
      }
  return {
    species,
    positions: Float64Array.from(pos),
    cell,
    tensors: Float64Array.from(tensors),
    groups: Int32Array.from(groups),
    frameEps: Float64Array.of(1.74, 0.012, 0.004, 0.012, 1.78, 0.018, 0.004, 0.018, 1.85),
  };
}

/** SYNTHETIC learning curves of both routes: errors falling as a power of the training-set size, with noise. */
export function syntheticLearningCurves(): { route: string; learningCurve: { trainSize: number; errors: ErrorFiguresJ }[] }[] {
  const rng = seeded(3);
  const sizes = [10, 20, 40, 80, 160, 320];
  const curve = (a0: number, a2: number, slope0: number, slope2: number) =>
    sizes.map((n) => {
      const j = () => Math.exp(0.06 * rng.normal());
      const pIso = a0 * (n / 10) ** -slope0 * j();
      const pAn = a2 * (n / 10) ** -slope2 * j();
      return {
        trainSize: n,
        errors: {
          rmseIso: pIso * 0.0012,
          rmseAniso: pAn * 0.0009,
          percentIso: pIso,
          percentAniso: pAn,
          r2Iso: 1 - (pIso / 100) ** 2,
          r2Aniso: 1 - (pAn / 100) ** 2,
          count: 40,
        },
      };
    });
  return [
    { route: 'cm', learningCurve: curve(38, 61, 0.52, 0.41) },
    { route: 'direct', learningCurve: curve(45, 66, 0.44, 0.36) },
  ];
}

/**
 * SYNTHETIC trajectory of ε components: correlated noise (first-order autoregressive, φ = 0.95) about fixed
 * means, with a few spikes so that the decimation can be seen to keep them.
 */
export function syntheticTrajectory(n = 20000): { labels: string[]; values: Float64Array[]; time: Float64Array } {
  const rng = seeded(5);
  const means = [1.742, 1.781, 1.853];
  const labels = ['ε_xx', 'ε_yy', 'ε_zz'];
  const phi = 0.95;
  const values = means.map((m, k) => {
    const v = new Float64Array(n);
    let e = 0;
    for (let i = 0; i < n; i++) {
      e = phi * e + Math.sqrt(1 - phi * phi) * 0.012 * rng.normal();
      v[i] = m + e + (i === 4000 + 3000 * k ? 0.06 : 0);
    }
    return v;
  });
  const time = Float64Array.from({ length: n }, (_, i) => i * 0.002); // 2 fs a frame, in ps
  return { labels, values, time };
}
