// SYNTHETIC data for the development gallery only: made-up numbers with a plausible shape, so each component
// can be looked at without a trained model. Nothing here is a measurement or a model result.
import type { ErrorFigures, ParityPoint } from '../src-main/core/model-types.ts';

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
export function syntheticParity(n = 160): { points: ParityPoint[]; groups: string[] } {
  const rng = seeded(7);
  const points: ParityPoint[] = [];
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

export function figuresOf(points: ParityPoint[]): ErrorFigures {
  const n = points.length;
  const stat = (get: (p: ParityPoint, w: 'reference' | 'predicted') => number[]) => {
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
